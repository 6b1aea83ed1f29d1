/* fig_matrix.c - figure (d): the rank-to-rank point-to-point matrix as a
 * heat map, ranks aggregated into square tiles so thousands of ranks stay
 * readable and the file stays small. */
#include "svg.h"

#include <math.h>   /* log, exp, ceil */
#include <stdlib.h> /* calloc, free */

#define PLOT_L 90.0
#define PLOT_T 70.0
#define PLOT_S 560.0 /* the square plot's side in pixels */
#define FIG_W 820.0
#define FIG_H 700.0

static void rank_ticks(mc_sbuf *out, int64_t nranks, int vertical)
{
    double step = mc__nice_ceil((double)nranks / 8.0);
    if (step < 1.0)
        step = 1.0;
    char buf[32];
    for (double r = 0; r < (double)nranks; r += step) {
        const double pos = r / (double)nranks * PLOT_S;
        snprintf(buf, sizeof buf, "%.0f", r);
        if (vertical) {
            mc_sbuf_printf(out,
                           "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                           "y2=\"%.1f\" stroke=\"#222222\"/>\n",
                           PLOT_L - 5, PLOT_T + pos, PLOT_L, PLOT_T + pos);
            mc__svg_text(out, PLOT_L - 8, PLOT_T + pos + 4, "end", 10, "tick",
                         buf);
        } else {
            mc_sbuf_printf(out,
                           "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                           "y2=\"%.1f\" stroke=\"#222222\"/>\n",
                           PLOT_L + pos, PLOT_T + PLOT_S, PLOT_L + pos,
                           PLOT_T + PLOT_S + 5);
            mc__svg_text(out, PLOT_L + pos, PLOT_T + PLOT_S + 17, "middle", 10,
                         "tick", buf);
        }
    }
}

int mc_study_fig_matrix(const mc_summary *s, int bytes, unsigned max_tiles,
                        mc_sbuf *out)
{
    if (s->nedges == 0)
        return MC_ENODATA;
    if (max_tiles == 0)
        max_tiles = 256;
    int64_t nranks = s->meta.app_ranks;
    for (size_t i = 0; i < s->nedges; i++) {
        const mc_summary_edge *e = &s->edges[i];
        if (e->src < 0 || e->dst < 0)
            continue;
        if (e->src >= nranks)
            nranks = (int64_t)e->src + 1;
        if (e->dst >= nranks)
            nranks = (int64_t)e->dst + 1;
    }
    if (nranks <= 0)
        return MC_ENODATA;
    const int64_t tile = (nranks + max_tiles - 1) / max_tiles;
    const size_t g = (size_t)((nranks + tile - 1) / tile);
    double *cell = calloc(g * g, sizeof *cell);
    if (!cell)
        return MC_ENOMEM;
    for (size_t i = 0; i < s->nedges; i++) {
        const mc_summary_edge *e = &s->edges[i];
        if (e->src < 0 || e->dst < 0)
            continue;
        cell[(size_t)(e->src / tile) * g + (size_t)(e->dst / tile)] +=
            bytes ? (double)e->bytes : (double)e->msgs;
    }
    double vmin = 0.0, vmax = 0.0;
    size_t filled = 0;
    for (size_t i = 0; i < g * g; i++) {
        if (cell[i] <= 0.0)
            continue;
        if (filled == 0 || cell[i] < vmin)
            vmin = cell[i];
        if (cell[i] > vmax)
            vmax = cell[i];
        filled++;
    }
    if (filled == 0) {
        free(cell);
        return MC_ENODATA;
    }
    const double lspan = vmax > vmin ? log(vmax / vmin) : 0.0;

    char title[512], sub[256], run[256];
    snprintf(title, sizeof title, "Point-to-point %s, sender to receiver (%s)",
             bytes ? "bytes" : "messages", mc__run_caption(s, run, sizeof run));
    if (tile == 1)
        snprintf(sub, sizeof sub,
                 "%lld ranks; one cell per rank pair; colour on "
                 "a log scale; white: none",
                 (long long)nranks);
    else
        snprintf(sub, sizeof sub,
                 "%lld ranks in tiles of %lld x %lld ranks "
                 "(sums); colour on a log scale; white: none",
                 (long long)nranks, (long long)tile, (long long)tile);
    mc__svg_begin(out, FIG_W, FIG_H, title, sub);
    mc_sbuf_printf(out,
                   "<rect class=\"plot-area\" x=\"%.1f\" y=\"%.1f\" "
                   "width=\"%.1f\" height=\"%.1f\" fill=\"#ffffff\" "
                   "stroke=\"#222222\"/>\n",
                   PLOT_L, PLOT_T, PLOT_S, PLOT_S);
    const double cs = PLOT_S * (double)tile / (double)nranks;
    mc_sbuf_printf(out, "<g class=\"tiles\" shape-rendering=\"crispEdges\">\n");
    for (size_t r = 0; r < g; r++)
        for (size_t c = 0; c < g; c++) {
            const double v = cell[r * g + c];
            if (v <= 0.0)
                continue;
            char col[8];
            mc__ramp(lspan > 0 ? 0.12 + 0.88 * log(v / vmin) / lspan : 1.0,
                     col);
            double w = cs, h = cs;
            if (PLOT_L + cs * (double)(c + 1) > PLOT_L + PLOT_S)
                w = PLOT_S - cs * (double)c;
            if (PLOT_T + cs * (double)(r + 1) > PLOT_T + PLOT_S)
                h = PLOT_S - cs * (double)r;
            mc_sbuf_printf(out,
                           "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" "
                           "height=\"%.2f\" fill=\"%s\"/>\n",
                           PLOT_L + cs * (double)c, PLOT_T + cs * (double)r, w,
                           h, col);
        }
    mc_sbuf_printf(out, "</g>\n<g class=\"axis y\">\n");
    rank_ticks(out, nranks, 1);
    mc_sbuf_printf(out,
                   "<text class=\"axis-label\" x=\"%.1f\" y=\"%.1f\" "
                   "text-anchor=\"middle\" font-size=\"11\" fill=\"#222222\" "
                   "transform=\"rotate(-90 %.1f %.1f)\">sender rank</text>\n",
                   PLOT_L - 50, PLOT_T + PLOT_S / 2, PLOT_L - 50,
                   PLOT_T + PLOT_S / 2);
    mc_sbuf_printf(out, "</g>\n<g class=\"axis x\">\n");
    rank_ticks(out, nranks, 0);
    mc__svg_text(out, PLOT_L + PLOT_S / 2, PLOT_T + PLOT_S + 36, "middle", 11,
                 "axis-label", "receiver rank");
    mc_sbuf_printf(out, "</g>\n");

    /* Colour bar with its end values and the geometric middle; a single
     * swatch when every tile holds the same value. */
    const double bx = PLOT_L + PLOT_S + 40, bh = 300;
    char v[32];
    mc_sbuf_printf(out, "<g class=\"legend colour-bar\">\n");
    const int steps = lspan > 0 ? 40 : 1;
    for (int i = 0; i < steps; i++) {
        char col[8];
        mc__ramp(lspan > 0 ? 0.12 + 0.88 * (i + 0.5) / 40.0 : 1.0, col);
        const double h = lspan > 0 ? bh / 40.0 : 16.0;
        mc_sbuf_printf(out,
                       "<rect x=\"%.1f\" y=\"%.2f\" width=\"16\" "
                       "height=\"%.2f\" fill=\"%s\"/>\n",
                       bx, PLOT_T + bh - (i + 1) * h,
                       h + (lspan > 0 ? 0.3 : 0.0), col);
    }
    for (int i = 0; i <= (lspan > 0 ? 2 : 0); i++) {
        const double val = lspan > 0 ? vmin * exp(lspan * i / 2.0) : vmax;
        if (bytes)
            mc__fmt_bytes(val, v, sizeof v);
        else if (val >= 1e6)
            snprintf(v, sizeof v, "%.3g", val);
        else
            snprintf(v, sizeof v, "%.0f", val);
        const double y =
            lspan > 0 ? PLOT_T + bh - bh * i / 2.0 + 4 : PLOT_T + bh - 8 + 4;
        mc__svg_text(out, bx + 22, y, "start", 10, "tick", v);
    }
    mc__svg_text(out, bx, PLOT_T + bh + 22, "start", 11, "legend-title",
                 bytes ? "bytes per tile" : "messages per tile");
    mc_sbuf_printf(out, "</g>\n");
    mc__svg_end(out);
    free(cell);
    return out->oom ? MC_ENOMEM : 0;
}
