/* fig_overlay.c - figure (e): one population in several runs on one
 * figure: share of messages per half-octave bin, and the cumulative
 * distributions, with each run's distances to the first. */
#include "svg.h"

#include <string.h> /* strcmp */

#include <msgcensus/coarsen.h>  /* mc_coarsen */
#include <msgcensus/distance.h> /* mc_distance_compute */

#define FIG_W 940.0
#define FIG_H 740.0
#define PLOT_L 78.0
#define PLOT_W 540.0
#define TOP1 70.0
#define TOP2 410.0
#define PANEL_H 260.0
#define LEGEND_X 650.0
#define BINS_PER_OCTAVE 2u

static const mc_summary_pop *find_pop(const mc_summary *s, const char *name)
{
    for (size_t i = 0; i < s->npops; i++)
        if (s->pops[i].name && strcmp(s->pops[i].name, name) == 0 &&
            s->pops[i].hist.k > 0)
            return &s->pops[i];
    return NULL;
}

/* Left and right x of bin @b on the figure's log2 axis. */
static void bin_span(int b, double *x0, double *x1)
{
    if (b == MC_BIN_ZERO) {
        *x0 = -1.25;
        *x1 = -0.75;
    } else {
        *x0 = (double)b / BINS_PER_OCTAVE;
        *x1 = (double)(b + 1) / BINS_PER_OCTAVE;
    }
}

int mc_study_fig_overlay(const mc_summary *const *runs, size_t n,
                         const char *pop, mc_sbuf *out)
{
    const mc_summary_pop *ref = NULL;
    double lo = 1e300, hi = -1e300;
    for (size_t r = 0; r < n; r++) {
        const mc_summary_pop *p = find_pop(runs[r], pop);
        if (!p)
            continue;
        if (!ref)
            ref = p;
        const double a = mc__fx((double)p->hist.sizes[0]);
        const double b = mc__fx((double)p->hist.sizes[p->hist.k - 1]) + 0.5;
        if (a < lo)
            lo = a;
        if (b > hi)
            hi = b;
    }
    if (!ref)
        return MC_ENODATA;
    const int zero = lo < 0.0;
    lo -= 0.5;
    hi += 0.5;
    if (hi - lo < 4.0)
        hi = lo + 4.0;

    /* The share panel's height: the largest bin share of any run. */
    double ymax = 0.0;
    for (size_t r = 0; r < n; r++) {
        const mc_summary_pop *p = find_pop(runs[r], pop);
        mc_coarse *c = NULL;
        if (!p || mc_coarsen(&p->hist, BINS_PER_OCTAVE, 0, &c) != 0)
            continue;
        size_t nb;
        const mc_coarse_bin *bins = mc_coarse_bins(c, &nb);
        for (size_t i = 0; i < nb; i++) {
            const double sh =
                (double)bins[i].exact_count / (double)p->stats.count;
            if (sh > ymax)
                ymax = sh;
        }
        mc_coarse_free(c);
    }
    mc__frame f1 = {PLOT_L, TOP1, PLOT_W, PANEL_H,
                    lo,     hi,   0,      mc__nice_ceil(ymax)};
    mc__frame f2 = {PLOT_L, TOP2, PLOT_W, PANEL_H, lo, hi, 0, 1};

    char title[512], sub[256];
    snprintf(title, sizeof title, "Message sizes of %s in %zu runs", pop, n);
    snprintf(sub, sizeof sub,
             "top: share of messages per half-octave bin; "
             "bottom: cumulative share of messages");
    /* Taller than the two panels when the legend of many runs needs it. */
    const double legend_end = TOP1 + 26 + 40 * (double)n + 20;
    mc__svg_begin(out, FIG_W, legend_end > FIG_H ? legend_end : FIG_H, title,
                  sub);
    mc__axis_share_y(out, &f1, "share of messages");
    mc__axis_log2_x(out, &f1, zero,
                    "message size (log2 axis, bins of 1/2 octave)");
    mc__axis_share_y(out, &f2, "cumulative share");
    mc__axis_log2_x(out, &f2, zero, "message size (log2 axis)");

    mc_sbuf_printf(out, "<g class=\"legend\">\n");
    mc__svg_text(out, LEGEND_X, TOP1 + 4, "start", 11, "legend-title",
                 "runs (distance to R1)");
    mc_sbuf_printf(out, "</g>\n");
    for (size_t r = 0; r < n; r++) {
        const mc_summary_pop *p = find_pop(runs[r], pop);
        const char *colour = mc__palette[r % MC_NPALETTE];
        const char *dash =
            r % MC_NPALETTE == 0 ? "none" : mc__dashes[r % MC_NPALETTE];
        char cap[256], line[384];
        mc__run_caption(runs[r], cap, sizeof cap);
        const double ly = TOP1 + 26 + 40 * (double)r;
        mc_sbuf_printf(out, "<g class=\"run\" data-run=\"R%zu\">\n", r + 1);
        if (!p) {
            snprintf(line, sizeof line, "R%zu %s: no such population", r + 1,
                     cap);
            mc__svg_text(out, LEGEND_X, ly, "start", 11, "legend-entry", line);
            mc_sbuf_printf(out, "</g>\n");
            continue;
        }
        mc_coarse *c = NULL;
        if (mc_coarsen(&p->hist, BINS_PER_OCTAVE, 0, &c) == 0) {
            size_t nb;
            const mc_coarse_bin *bins = mc_coarse_bins(c, &nb);
            mc_sbuf_printf(out,
                           "<path class=\"bins\" fill=\"none\" stroke=\"%s\" "
                           "stroke-width=\"1.8\" stroke-dasharray=\"%s\" d=\"",
                           colour, dash);
            for (size_t i = 0; i < nb; i++) {
                double x0, x1;
                bin_span(bins[i].bin, &x0, &x1);
                const double y = mc__py(&f1, (double)bins[i].exact_count /
                                                 (double)p->stats.count);
                mc_sbuf_printf(out, "M%.1f %.1fV%.1fH%.1fV%.1f",
                               mc__px(&f1, x0), mc__py(&f1, 0), y,
                               mc__px(&f1, x1), mc__py(&f1, 0));
            }
            mc_sbuf_printf(out, "\"/>\n");
            mc_coarse_free(c);
        }
        mc__cdf_line(out, &f2, &p->hist, 0, colour, dash, "cdf");
        mc_sbuf_printf(out,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                       "stroke=\"%s\" stroke-width=\"2\" "
                       "stroke-dasharray=\"%s\"/>\n",
                       LEGEND_X, ly - 4, LEGEND_X + 26, ly - 4, colour, dash);
        snprintf(line, sizeof line, "R%zu %s%s", r + 1, cap,
                 runs[r]->meta.approximate ? " (approximate)" : "");
        mc__svg_text(out, LEGEND_X + 32, ly, "start", 11, "legend-entry", line);
        mc_distance d;
        if (p == ref) {
            char cnt[32];
            snprintf(line, sizeof line, "reference, %s messages",
                     mc__fmt_count(p->stats.count, cnt, sizeof cnt));
        } else if (mc_distance_compute(&ref->hist, &p->hist, &d) == 0) {
            snprintf(line, sizeof line, "W1 %.3f octaves, KS %.3f", d.w1_log2,
                     d.ks);
        } else {
            snprintf(line, sizeof line, "no distance (empty histogram)");
        }
        mc__svg_text(out, LEGEND_X + 32, ly + 15, "start", 10, "legend-note",
                     line);
        mc_sbuf_printf(out, "</g>\n");
    }
    mc__svg_end(out);
    return out->oom ? MC_ENOMEM : 0;
}
