/* fig_sizes.c - figures of one population: the exact size distribution with
 * its candidate centers (a) and the count- and byte-weighted cumulative
 * distributions (b). */
#include "svg.h"

#include <math.h>   /* floor */
#include <string.h> /* strcmp */

#include <msgcensus/stats.h> /* mc_center_name, MC_NCENTERS */

/* Figure geometry shared by both figures. */
#define FIG_W 920.0
#define FIG_H 440.0
#define PLOT_L 78.0
#define PLOT_T 64.0
#define PLOT_W 560.0
#define PLOT_H 300.0
#define LEGEND_X 660.0

/* The x range that holds every size and every defined center, padded by
 * half an octave and at least four octaves wide. Sets *zero when size 0 or
 * a sub-byte value is present. */
static void x_range(const mc_summary_pop *p, double *x0, double *x1, int *zero)
{
    double lo = mc__fx((double)p->hist.sizes[0]);
    double hi = mc__fx((double)p->hist.sizes[p->hist.k - 1]);
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *f = &p->fitness.fit[c];
        if (!f->defined)
            continue;
        const double x = mc__fx(f->value);
        if (x < lo)
            lo = x;
        if (x > hi)
            hi = x;
    }
    *zero = lo < 0.0;
    lo -= 0.5;
    hi += 0.5;
    if (hi - lo < 4.0) {
        const double mid = (lo + hi) / 2;
        lo = mid - 2.0;
        hi = mid + 2.0;
    }
    *x0 = lo;
    *x1 = hi;
}

static void caption_line(const mc_summary *s, const mc_summary_pop *p,
                         const char *what, char *buf, size_t cap)
{
    char run[256];
    mc__run_caption(s, run, sizeof run);
    snprintf(buf, cap, "%s: %s (%s)%s", what, p->name, run,
             s->meta.approximate ? " - approximate, coarsened copy" : "");
}

int mc_study_fig_sizes(const mc_summary *s, const mc_summary_pop *p,
                       mc_sbuf *out)
{
    if (!p || p->hist.k == 0 || p->stats.count == 0)
        return MC_ENODATA;
    mc__frame f = {PLOT_L, PLOT_T, PLOT_W, PLOT_H, 0, 0, 0, 1};
    int zero = 0;
    x_range(p, &f.x0, &f.x1, &zero);

    /* Spikes: one per exact size; sizes that fall in the same pixel column
     * are summed so a figure of 10^5 distinct sizes stays small. */
    const double total = (double)p->stats.count;
    double ymax = 0.0;
    size_t columns = 0;
    {
        double col = -1e300, acc = 0.0;
        for (size_t i = 0; i < p->hist.k; i++) {
            const double c =
                floor(mc__px(&f, mc__fx((double)p->hist.sizes[i])));
            if (c != col) {
                if (acc > ymax)
                    ymax = acc;
                acc = 0.0;
                col = c;
                columns++;
            }
            acc += (double)p->hist.counts[i] / total;
        }
        if (acc > ymax)
            ymax = acc;
    }
    f.y1 = mc__nice_ceil(ymax);
    const int merged = columns < p->hist.k;

    char title[512], sub[512], cnt[32];
    caption_line(s, p, "Message sizes", title, sizeof title);
    snprintf(sub, sizeof sub,
             "%s messages, %zu distinct sizes; spikes: exact sizes, height = "
             "share of messages%s",
             mc__fmt_count(p->stats.count, cnt, sizeof cnt), p->hist.k,
             merged ? " (sizes within one pixel summed)" : "");
    mc__svg_begin(out, FIG_W, FIG_H, title, sub);
    mc__axis_share_y(out, &f, "share of messages");
    mc__axis_log2_x(out, &f, zero, "message size (log2 axis)");

    /* One marker per defined center: a dashed rule across the plot and a
     * symbol, staggered in height so coinciding centers stay visible.
     * Drawn before the spikes, which stay on top. */
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *fit = &p->fitness.fit[c];
        if (!fit->defined)
            continue;
        const double x = mc__px(&f, mc__fx(fit->value));
        mc_sbuf_printf(out, "<g class=\"marker\" data-center=\"%s\">\n",
                       mc_center_name((mc_center)c));
        mc_sbuf_printf(out,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                       "stroke=\"%s\" stroke-width=\"1.4\" "
                       "stroke-dasharray=\"%s\"/>\n",
                       x, PLOT_T, x, PLOT_T + PLOT_H, mc__palette[c],
                       c == 0 ? "none" : mc__dashes[c]);
        mc__svg_symbol(out, c, x, PLOT_T + 9 + 13 * c, 5, mc__palette[c],
                       "symbol");
        mc_sbuf_printf(out, "</g>\n");
    }

    mc_sbuf_printf(out, "<g class=\"spikes\" stroke=\"#3b4048\" "
                        "stroke-width=\"2.4\">\n");
    {
        double col = -1e300, acc = 0.0;
        for (size_t i = 0; i <= p->hist.k; i++) {
            const double c =
                i < p->hist.k
                    ? floor(mc__px(&f, mc__fx((double)p->hist.sizes[i])))
                    : 1e300;
            if (c != col && acc > 0.0) {
                mc_sbuf_printf(out,
                               "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                               "y2=\"%.1f\"/><circle cx=\"%.1f\" cy=\"%.1f\" "
                               "r=\"2.2\" fill=\"#3b4048\" stroke=\"none\"/>\n",
                               col + 0.5, mc__py(&f, 0.0), col + 0.5,
                               mc__py(&f, acc), col + 0.5, mc__py(&f, acc));
                acc = 0.0;
            }
            col = c;
            if (i < p->hist.k)
                acc += (double)p->hist.counts[i] / total;
        }
    }
    mc_sbuf_printf(out, "</g>\n");

    /* Legend: every candidate, its value and MAD, the best one marked. */
    mc_sbuf_printf(out, "<g class=\"legend\">\n");
    mc__svg_text(out, LEGEND_X, PLOT_T + 4, "start", 11, "legend-title",
                 "candidate centers (MAD)");
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *fit = &p->fitness.fit[c];
        const double y = PLOT_T + 24 + 20 * c;
        char line[160], v[32], m[32];
        if (fit->defined) {
            mc__svg_symbol(out, c, LEGEND_X + 6, y - 4, 5, mc__palette[c],
                           "legend-symbol");
            snprintf(line, sizeof line, "%s %s (MAD %s)%s",
                     mc_center_name((mc_center)c),
                     mc__fmt_bytes(fit->value, v, sizeof v),
                     mc__fmt_bytes(fit->mad, m, sizeof m),
                     (int)p->fitness.best == c ? "  best" : "");
        } else {
            snprintf(line, sizeof line, "%s undefined",
                     mc_center_name((mc_center)c));
        }
        mc__svg_text(out, LEGEND_X + 18, y, "start", 11,
                     (int)p->fitness.best == c && fit->defined
                         ? "legend-entry best"
                         : "legend-entry",
                     line);
    }
    {
        char note[128], r[32];
        snprintf(note, sizeof note, "MAD(mean) / MAD(best) = %s",
                 mc__fmt_ratio(p->fitness.mad_ratio_mean, r, sizeof r));
        mc__svg_text(out, LEGEND_X, PLOT_T + 24 + 20 * MC_NCENTERS + 8, "start",
                     11, "legend-note", note);
    }
    mc_sbuf_printf(out, "</g>\n");
    mc__svg_end(out);
    return out->oom ? MC_ENOMEM : 0;
}

void mc__cdf_line(mc_sbuf *out, const mc__frame *f, const mc_hview *h,
                  int bytes, const char *colour, const char *dash,
                  const char *cls)
{
    double total = 0.0;
    for (size_t i = 0; i < h->k; i++)
        total += bytes ? (double)h->sizes[i] * (double)h->counts[i]
                       : (double)h->counts[i];
    if (!(total > 0.0))
        return;
    mc_sbuf_printf(out,
                   "<polyline class=\"%s\" fill=\"none\" stroke=\"%s\" "
                   "stroke-width=\"2\" stroke-dasharray=\"%s\" points=\"",
                   cls, colour, dash);
    double acc = 0.0, col = -1e300;
    double y = mc__py(f, 0.0);
    mc_sbuf_printf(out, "%.1f,%.1f", f->left, y);
    for (size_t i = 0; i < h->k; i++) {
        const double c = floor(mc__px(f, mc__fx((double)h->sizes[i]))) + 0.5;
        acc += bytes ? (double)h->sizes[i] * (double)h->counts[i]
                     : (double)h->counts[i];
        if (c != col) {
            mc_sbuf_printf(out, " %.1f,%.1f", c, y);
            col = c;
        }
        y = mc__py(f, acc / total);
        mc_sbuf_printf(out, " %.1f,%.1f", c, y);
    }
    mc_sbuf_printf(out, " %.1f,%.1f\"/>\n", f->left + f->width, y);
}

int mc_study_fig_cdf(const mc_summary *s, const mc_summary_pop *p, mc_sbuf *out)
{
    if (!p || p->hist.k == 0 || p->stats.count == 0)
        return MC_ENODATA;
    mc__frame f = {PLOT_L, PLOT_T, PLOT_W, PLOT_H, 0, 0, 0, 1};
    int zero = 0;
    x_range(p, &f.x0, &f.x1, &zero);
    char title[512], sub[256], v[32], w[32];
    caption_line(s, p, "Cumulative distribution", title, sizeof title);
    snprintf(sub, sizeof sub,
             "share of messages and share of bytes carried "
             "by messages of at most each size");
    mc__svg_begin(out, FIG_W, FIG_H, title, sub);
    mc__axis_share_y(out, &f, "cumulative share");
    mc__axis_log2_x(out, &f, zero, "message size (log2 axis)");

    /* Guides at one half and at the two medians. */
    mc_sbuf_printf(out,
                   "<g class=\"guides\" stroke=\"#9a9a9a\" "
                   "stroke-dasharray=\"1 3\">\n"
                   "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>\n",
                   f.left, mc__py(&f, 0.5), f.left + f.width, mc__py(&f, 0.5));
    mc_sbuf_printf(out,
                   "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>\n",
                   mc__px(&f, mc__fx(p->stats.median)), f.top,
                   mc__px(&f, mc__fx(p->stats.median)), f.top + f.height);
    const int has_bytes = p->stats.total_bytes > 0;
    if (has_bytes)
        mc_sbuf_printf(out,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                       "y2=\"%.1f\"/>\n",
                       mc__px(&f, mc__fx(p->stats.byte_median)), f.top,
                       mc__px(&f, mc__fx(p->stats.byte_median)),
                       f.top + f.height);
    mc_sbuf_printf(out, "</g>\n");

    mc__cdf_line(out, &f, &p->hist, 0, mc__palette[0], "none", "cdf messages");
    if (has_bytes)
        mc__cdf_line(out, &f, &p->hist, 1, mc__palette[1], mc__dashes[1],
                     "cdf bytes");

    mc_sbuf_printf(out, "<g class=\"legend\">\n");
    char line[128];
    mc_sbuf_printf(out,
                   "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                   "stroke=\"%s\" stroke-width=\"2\"/>\n",
                   LEGEND_X, PLOT_T + 20, LEGEND_X + 24, PLOT_T + 20,
                   mc__palette[0]);
    snprintf(line, sizeof line, "messages (median %s)",
             mc__fmt_bytes(p->stats.median, v, sizeof v));
    mc__svg_text(out, LEGEND_X + 30, PLOT_T + 24, "start", 11, "legend-entry",
                 line);
    if (has_bytes) {
        mc_sbuf_printf(out,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                       "y2=\"%.1f\" stroke=\"%s\" stroke-width=\"2\" "
                       "stroke-dasharray=\"%s\"/>\n",
                       LEGEND_X, PLOT_T + 42, LEGEND_X + 24, PLOT_T + 42,
                       mc__palette[1], mc__dashes[1]);
        snprintf(line, sizeof line, "bytes (byte median %s)",
                 mc__fmt_bytes(p->stats.byte_median, w, sizeof w));
    } else {
        snprintf(line, sizeof line, "bytes: none (every message is empty)");
    }
    mc__svg_text(out, LEGEND_X + 30, PLOT_T + 46, "start", 11, "legend-entry",
                 line);
    mc_sbuf_printf(out, "</g>\n");
    mc__svg_end(out);
    return out->oom ? MC_ENOMEM : 0;
}
