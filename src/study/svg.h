/* svg.h - the study library's internal drawing kit: a growing text buffer,
 * SVG primitives, the log2 size axis, nice ticks and the palette. */
#ifndef MSGCENSUS_STUDY_SVG_H
#define MSGCENSUS_STUDY_SVG_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */

#include "study.h"

/* ---- palette ------------------------------------------------------------ */

/* Eight categorical colours of our own, chosen to differ in lightness as
 * well as hue so that pairs stay apart under red-green and blue-yellow
 * colour-vision deficiencies (docs/study.md lists the check). Figures also
 * vary dash pattern and marker shape, so colour is never the only cue. */
#define MC_NPALETTE 8
extern const char *const mc__palette[MC_NPALETTE];
/* Dash patterns to pair with the palette ("" = solid). */
extern const char *const mc__dashes[MC_NPALETTE];

/* Sequential colour ramp for the heat map, light (low) to dark (high),
 * monotone in lightness. @t in [0,1]; writes "#rrggbb" into @out[8]. */
void mc__ramp(double t, char out[8]);

/* ---- SVG primitives ----------------------------------------------------- */

/* Plot rectangle in pixels and data ranges of both axes. */
typedef struct mc__frame {
    double left, top, width, height; /* pixels */
    double x0, x1;                   /* data range shown on x */
    double y0, y1;                   /* data range shown on y */
} mc__frame;

double mc__px(const mc__frame *f, double x);
double mc__py(const mc__frame *f, double y);

/* Open an <svg> of @w x @h with title @title (also a <title> element) and
 * an optional @subtitle line under it. */
void mc__svg_begin(mc_sbuf *b, double w, double h, const char *title,
                   const char *subtitle);
void mc__svg_end(mc_sbuf *b);

/* Text at (x, y); @anchor "start", "middle" or "end"; @cls the class. */
void mc__svg_text(mc_sbuf *b, double x, double y, const char *anchor,
                  double size, const char *cls, const char *text);
/* A marker symbol (shape 0..7) centred at (x, y) of radius @r. */
void mc__svg_symbol(mc_sbuf *b, int shape, double x, double y, double r,
                    const char *fill, const char *cls);

/* Axes and grid.
 * mc__axis_log2_x(): the x axis of a frame whose x is the figure's log2
 * scale (mc__fx); ticks at octaves labelled "1 B", "4 KiB", ...; size 0
 * at -1 gets its own tick "0 B" and a break mark when @zero is set.
 * mc__axis_share_y(): linear y axis of a share (0..1) with nice ticks
 * printed as percentages, and horizontal grid lines. */
void mc__axis_log2_x(mc_sbuf *b, const mc__frame *f, int zero,
                     const char *label);
void mc__axis_share_y(mc_sbuf *b, const mc__frame *f, const char *label);

/* A cumulative step line of @h over frame @f: count-weighted, or
 * byte-weighted when @bytes; nothing when the total weight is 0. Points
 * within one pixel column are merged. */
void mc__cdf_line(mc_sbuf *out, const mc__frame *f, const mc_hview *h,
                  int bytes, const char *colour, const char *dash,
                  const char *cls);

/* ---- scales and units --------------------------------------------------- */

/* The figures' x position of a size or statistic in bytes: log2(v) for
 * v >= 1, and -1 + v on [0, 1) so that 0 sits where mc_log2_axis() puts
 * size 0 and sub-byte means (many empty messages) stay in order. */
double mc__fx(double v);

/* A "nice" upper bound >= @v (1, 2, 2.5, 5 times a power of ten). */
double mc__nice_ceil(double v);

/* Bytes in units people use: "0 B", "512 B", "1.5 KiB", "12 MiB";
 * integers below 1024 exactly. Returns @buf. */
const char *mc__fmt_bytes(double v, char *buf, size_t cap);
/* An integer with thousands separators: "1,234,567". Returns @buf. */
const char *mc__fmt_count(uint64_t v, char *buf, size_t cap);

/* MAD(mean)/MAD(best) as text: "%.3g", or "inf" for the library's -1
 * (MAD(best) = 0 < MAD(mean)). Returns @buf. */
const char *mc__fmt_ratio(double v, char *buf, size_t cap);

/* "deck-a, 16 ranks" (or "16 ranks", or "unlabelled run"). */
const char *mc__run_caption(const mc_summary *s, char *buf, size_t cap);

#endif /* MSGCENSUS_STUDY_SVG_H */
