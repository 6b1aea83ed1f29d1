/* fig_mad.c - figure (c): MAD of every candidate center, one row per
 * population, on a log2 byte axis; the best center of each row is ringed. */
#include "svg.h"

#include <msgcensus/stats.h> /* mc_center_name, MC_NCENTERS */

#define ROW_H 24.0
#define PLOT_L 190.0
#define PLOT_T 70.0
#define PLOT_W 520.0
#define LEGEND_X 740.0
#define FIG_W 920.0

int mc_study_fig_mad(const mc_summary *s, size_t max_rows, mc_sbuf *out)
{
    if (max_rows == 0)
        max_rows = 60;
    size_t rows = 0;
    double lo = 1e300, hi = -1e300;
    int zero = 0;
    for (size_t i = 0; i < s->npops && rows < max_rows; i++) {
        const mc_summary_pop *p = &s->pops[i];
        if (p->stats.count == 0)
            continue;
        rows++;
        for (int c = 0; c < MC_NCENTERS; c++) {
            const mc_center_fit *fit = &p->fitness.fit[c];
            if (!fit->defined)
                continue;
            const double x = mc__fx(fit->mad);
            if (x < lo)
                lo = x;
            if (x > hi)
                hi = x;
            if (x < 0.0)
                zero = 1;
        }
    }
    if (rows == 0 || lo > hi)
        return MC_ENODATA;
    lo -= 0.5;
    hi += 0.5;
    if (hi - lo < 4.0) {
        const double mid = (lo + hi) / 2;
        lo = mid - 2.0;
        hi = mid + 2.0;
    }
    const double plot_h = ROW_H * (double)rows;
    const double fig_h =
        PLOT_T + plot_h + 60.0 > 260.0 ? PLOT_T + plot_h + 60.0 : 260.0;
    mc__frame f = {PLOT_L, PLOT_T, PLOT_W, plot_h, lo, hi, 0, 1};

    char title[512], run[256], sub[256];
    snprintf(title, sizeof title, "MAD of each candidate center (%s)%s",
             mc__run_caption(s, run, sizeof run),
             s->meta.approximate ? " - approximate, coarsened copy" : "");
    snprintf(sub, sizeof sub,
             "median absolute deviation of message sizes "
             "about each center; ringed: smallest MAD (best)");
    mc__svg_begin(out, FIG_W, fig_h, title, sub);
    mc__axis_log2_x(out, &f, zero, "MAD (log2 axis)");

    size_t row = 0;
    for (size_t i = 0; i < s->npops && row < rows; i++) {
        const mc_summary_pop *p = &s->pops[i];
        if (p->stats.count == 0)
            continue;
        const double y = PLOT_T + ROW_H * ((double)row + 0.5);
        mc_sbuf_printf(out, "<g class=\"row\" data-pop=\"");
        mc_sbuf_xml(out, p->name);
        mc_sbuf_printf(out,
                       "\">\n<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                       "y2=\"%.1f\" stroke=\"#e3e3e3\"/>\n",
                       PLOT_L, y, PLOT_L + PLOT_W, y);
        mc__svg_text(out, PLOT_L - 10, y + 4, "end", 11, "row-label", p->name);
        for (int c = 0; c < MC_NCENTERS; c++) {
            const mc_center_fit *fit = &p->fitness.fit[c];
            if (!fit->defined)
                continue;
            const double x = mc__px(&f, mc__fx(fit->mad));
            if ((int)p->fitness.best == c)
                mc_sbuf_printf(out,
                               "<circle class=\"best-ring\" cx=\"%.1f\" "
                               "cy=\"%.1f\" r=\"9\" fill=\"none\" "
                               "stroke=\"#222222\" stroke-width=\"1.5\"/>\n",
                               x, y);
            /* A small vertical stagger keeps centers with equal MAD (median
             * and mode often) visible side by side. */
            mc__svg_symbol(out, c, x, y + 2.5 * (c - 3), 4.5, mc__palette[c],
                           "point");
        }
        mc_sbuf_printf(out, "</g>\n");
        row++;
    }

    mc_sbuf_printf(out, "<g class=\"legend\">\n");
    mc__svg_text(out, LEGEND_X, PLOT_T + 4, "start", 11, "legend-title",
                 "candidate center");
    for (int c = 0; c < MC_NCENTERS; c++) {
        const double y = PLOT_T + 24 + 18 * c;
        mc__svg_symbol(out, c, LEGEND_X + 6, y - 4, 5, mc__palette[c],
                       "legend-symbol");
        mc__svg_text(out, LEGEND_X + 18, y, "start", 11, "legend-entry",
                     mc_center_name((mc_center)c));
    }
    mc_sbuf_printf(out, "</g>\n");
    size_t nonempty = 0;
    for (size_t i = 0; i < s->npops; i++)
        nonempty += s->pops[i].stats.count > 0;
    if (rows < nonempty) {
        char note[96];
        snprintf(note, sizeof note, "%zu of %zu non-empty populations shown",
                 rows, nonempty);
        mc__svg_text(out, PLOT_L, fig_h - 8, "start", 10, "note", note);
    }
    mc__svg_end(out);
    return out->oom ? MC_ENOMEM : 0;
}
