/* svg.c - text buffer, SVG primitives, axes, units and palette shared by
 * every figure of the study library. */
#include "svg.h"

#include <math.h>   /* floor, log2, pow, isfinite */
#include <stdarg.h> /* va_list */
#include <stdlib.h> /* realloc, free */
#include <string.h> /* strlen, memcpy */

/* ---- text buffer -------------------------------------------------------- */

void mc_sbuf_init(mc_sbuf *b)
{
    b->data = NULL;
    b->len = b->cap = 0;
    b->oom = 0;
}

void mc_sbuf_free(mc_sbuf *b)
{
    free(b->data);
    mc_sbuf_init(b);
}

static int grow(mc_sbuf *b, size_t need)
{
    if (b->oom)
        return 0;
    if (b->len + need + 1 <= b->cap)
        return 1;
    size_t cap = b->cap ? b->cap : 4096;
    while (cap < b->len + need + 1)
        cap *= 2;
    char *p = realloc(b->data, cap);
    if (!p) {
        b->oom = 1; /* the old text stays valid */
        return 0;
    }
    b->data = p;
    b->cap = cap;
    return 1;
}

void mc_sbuf_printf(mc_sbuf *b, const char *fmt, ...)
{
    char small[512];
    va_list ap;
    va_start(ap, fmt);
    const int n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n < 0 || !grow(b, (size_t)n))
        return;
    if ((size_t)n < sizeof small) {
        memcpy(b->data + b->len, small, (size_t)n + 1);
    } else {
        va_start(ap, fmt);
        vsnprintf(b->data + b->len, (size_t)n + 1, fmt, ap);
        va_end(ap);
    }
    b->len += (size_t)n;
}

void mc_sbuf_xml(mc_sbuf *b, const char *s)
{
    for (; s && *s; s++) {
        switch (*s) {
        case '&':
            mc_sbuf_printf(b, "&amp;");
            break;
        case '<':
            mc_sbuf_printf(b, "&lt;");
            break;
        case '>':
            mc_sbuf_printf(b, "&gt;");
            break;
        case '"':
            mc_sbuf_printf(b, "&quot;");
            break;
        case '\'':
            mc_sbuf_printf(b, "&#39;");
            break;
        default:
            /* Control characters are not allowed in XML 1.0 text. */
            if ((unsigned char)*s < 0x20 && *s != '\n' && *s != '\t')
                mc_sbuf_printf(b, "?");
            else
                mc_sbuf_printf(b, "%c", *s);
        }
    }
}

/* ---- palette ------------------------------------------------------------ */

const char *const mc__palette[MC_NPALETTE] = {
    "#1c4f8f", /* deep blue */
    "#e2842a", /* amber */
    "#57aee0", /* sky */
    "#9c2f6a", /* plum */
    "#2e8b57", /* leaf green, darker than amber and sky */
    "#d9bf3d", /* mustard, the lightest */
    "#8a8a8a", /* mid grey */
    "#b5651d", /* rust */
};

const char *const mc__dashes[MC_NPALETTE] = {
    "", "6 3", "2 2", "8 3 2 3", "4 4", "1 3", "10 4", "3 1",
};

void mc__ramp(double t, char out[8])
{
    /* Stops from near-white cream to dark aubergine; lightness falls at each
     * stop, so order reads without hue. */
    static const unsigned char stop[][3] = {
        {0xfb, 0xf6, 0xe4}, {0xf6, 0xdc, 0x95}, {0xed, 0xb0, 0x5e},
        {0xdc, 0x7d, 0x3f}, {0xb9, 0x4f, 0x3f}, {0x86, 0x33, 0x4c},
        {0x52, 0x22, 0x4c}, {0x25, 0x14, 0x38},
    };
    const int n = (int)(sizeof stop / sizeof stop[0]);
    if (!(t > 0.0))
        t = 0.0;
    if (t > 1.0)
        t = 1.0;
    const double pos = t * (n - 1);
    int i = (int)floor(pos);
    if (i >= n - 1)
        i = n - 2;
    const double f = pos - i;
    unsigned c[3];
    for (int k = 0; k < 3; k++)
        c[k] = (unsigned)lround(stop[i][k] + f * (stop[i + 1][k] - stop[i][k]));
    snprintf(out, 8, "#%02x%02x%02x", c[0] & 0xffu, c[1] & 0xffu, c[2] & 0xffu);
}

/* ---- units -------------------------------------------------------------- */

double mc__fx(double v)
{
    return v >= 1.0 ? log2(v) : -1.0 + (v > 0.0 ? v : 0.0);
}

double mc__nice_ceil(double v)
{
    if (!(v > 0.0))
        return 1.0;
    const double p = pow(10.0, floor(log10(v)));
    static const double steps[] = {1.0, 2.0, 2.5, 5.0, 10.0};
    for (size_t i = 0; i < sizeof steps / sizeof steps[0]; i++)
        if (steps[i] * p >= v * (1.0 - 1e-12))
            return steps[i] * p;
    return 10.0 * p;
}

const char *mc__fmt_bytes(double v, char *buf, size_t cap)
{
    static const char *const unit[] = {"B",   "KiB", "MiB", "GiB",
                                       "TiB", "PiB", "EiB"};
    int u = 0;
    if (v < 1024.0) {
        if (v == floor(v))
            snprintf(buf, cap, "%.0f B", v);
        else
            snprintf(buf, cap, "%.3g B", v);
        return buf;
    }
    while (v >= 1024.0 && u < 6) {
        v /= 1024.0;
        u++;
    }
    if (v == floor(v))
        snprintf(buf, cap, "%.0f %s", v, unit[u]);
    else if (v < 10.0)
        snprintf(buf, cap, "%.2f %s", v, unit[u]);
    else if (v < 100.0)
        snprintf(buf, cap, "%.1f %s", v, unit[u]);
    else
        snprintf(buf, cap, "%.0f %s", v, unit[u]);
    return buf;
}

const char *mc__fmt_count(uint64_t v, char *buf, size_t cap)
{
    char digits[32];
    const int n =
        snprintf(digits, sizeof digits, "%llu", (unsigned long long)v);
    size_t o = 0;
    for (int i = 0; i < n && o + 2 < cap; i++) {
        if (i > 0 && (n - i) % 3 == 0)
            buf[o++] = ',';
        buf[o++] = digits[i];
    }
    if (cap)
        buf[o < cap ? o : cap - 1] = '\0';
    return buf;
}

const char *mc__fmt_ratio(double v, char *buf, size_t cap)
{
    if (v < 0.0 || !isfinite(v))
        snprintf(buf, cap, "inf");
    else
        snprintf(buf, cap, "%.3g", v);
    return buf;
}

const char *mc__run_caption(const mc_summary *s, char *buf, size_t cap)
{
    const char *label = s->meta.run_label ? s->meta.run_label : "";
    if (label[0] && s->meta.app_ranks > 0)
        snprintf(buf, cap, "%s, %lld ranks", label,
                 (long long)s->meta.app_ranks);
    else if (label[0])
        snprintf(buf, cap, "%s", label);
    else if (s->meta.app_ranks > 0)
        snprintf(buf, cap, "%lld ranks", (long long)s->meta.app_ranks);
    else
        snprintf(buf, cap, "unlabelled run");
    return buf;
}

void mc_study_file_name(const char *name, char *out, size_t cap)
{
    size_t o = 0;
    for (; name && *name && o + 1 < cap; name++) {
        const char c = *name;
        const int ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') ||
                       (c >= '0' && c <= '9') || c == '-' || c == '.';
        out[o++] = ok ? c : '_';
    }
    if (cap)
        out[o] = '\0';
}

/* ---- primitives --------------------------------------------------------- */

double mc__px(const mc__frame *f, double x)
{
    const double span = f->x1 - f->x0;
    return f->left + (span > 0 ? (x - f->x0) / span : 0.5) * f->width;
}

double mc__py(const mc__frame *f, double y)
{
    const double span = f->y1 - f->y0;
    return f->top + f->height -
           (span > 0 ? (y - f->y0) / span : 0.0) * f->height;
}

void mc__svg_begin(mc_sbuf *b, double w, double h, const char *title,
                   const char *subtitle)
{
    mc_sbuf_printf(b,
                   "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%.0f\" "
                   "height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" "
                   "font-family=\"sans-serif\" role=\"img\">\n<title>",
                   w, h, w, h);
    mc_sbuf_xml(b, title);
    mc_sbuf_printf(b,
                   "</title>\n<rect class=\"background\" x=\"0\" y=\"0\" "
                   "width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n",
                   w, h);
    mc__svg_text(b, 16, 24, "start", 15, "title", title);
    if (subtitle && subtitle[0])
        mc__svg_text(b, 16, 42, "start", 11, "subtitle", subtitle);
}

void mc__svg_end(mc_sbuf *b) { mc_sbuf_printf(b, "</svg>\n"); }

void mc__svg_text(mc_sbuf *b, double x, double y, const char *anchor,
                  double size, const char *cls, const char *text)
{
    mc_sbuf_printf(b,
                   "<text class=\"%s\" x=\"%.1f\" y=\"%.1f\" "
                   "text-anchor=\"%s\" font-size=\"%.0f\" fill=\"#222222\"%s>",
                   cls, x, y, anchor, size,
                   strcmp(cls, "title") == 0 ? " font-weight=\"bold\"" : "");
    mc_sbuf_xml(b, text);
    mc_sbuf_printf(b, "</text>\n");
}

void mc__svg_symbol(mc_sbuf *b, int shape, double x, double y, double r,
                    const char *fill, const char *cls)
{
    const char *st = "stroke=\"#222222\" stroke-width=\"0.8\"";
    switch (shape % 8) {
    case 0:
        mc_sbuf_printf(
            b,
            "<circle class=\"%s\" cx=\"%.1f\" cy=\"%.1f\" r=\"%.1f\" "
            "fill=\"%s\" %s/>\n",
            cls, x, y, r, fill, st);
        break;
    case 1:
        mc_sbuf_printf(
            b,
            "<rect class=\"%s\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
            "height=\"%.1f\" fill=\"%s\" %s/>\n",
            cls, x - r * 0.85, y - r * 0.85, 1.7 * r, 1.7 * r, fill, st);
        break;
    case 2: /* triangle up */
        mc_sbuf_printf(
            b,
            "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1fZ\" "
            "fill=\"%s\" %s/>\n",
            cls, x, y - r, x + r, y + 0.8 * r, x - r, y + 0.8 * r, fill, st);
        break;
    case 3: /* diamond */
        mc_sbuf_printf(b,
                       "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1f"
                       "L%.1f %.1fZ\" fill=\"%s\" %s/>\n",
                       cls, x, y - r, x + r, y, x, y + r, x - r, y, fill, st);
        break;
    case 4: /* triangle down */
        mc_sbuf_printf(
            b,
            "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1fZ\" "
            "fill=\"%s\" %s/>\n",
            cls, x, y + r, x + r, y - 0.8 * r, x - r, y - 0.8 * r, fill, st);
        break;
    case 5: /* plus, drawn thick */
        mc_sbuf_printf(
            b,
            "<path class=\"%s\" d=\"M%.1f %.1fH%.1fV%.1fH%.1fV%.1f"
            "H%.1fV%.1fH%.1fV%.1fH%.1fV%.1fH%.1fZ\" fill=\"%s\" %s/>\n",
            cls, x - r, y - r / 3, x - r / 3, y - r, x + r / 3, y - r / 3,
            x + r, y + r / 3, x + r / 3, y + r, x - r / 3, y + r / 3, x - r,
            fill, st);
        break;
    case 6: /* hexagon-ish star: two triangles */
        mc_sbuf_printf(b,
                       "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1fZ"
                       "M%.1f %.1fL%.1f %.1fL%.1f %.1fZ\" fill=\"%s\" %s/>\n",
                       cls, x, y - r, x + 0.87 * r, y + 0.5 * r, x - 0.87 * r,
                       y + 0.5 * r, x, y + r, x + 0.87 * r, y - 0.5 * r,
                       x - 0.87 * r, y - 0.5 * r, fill, st);
        break;
    default: /* square rotated is the diamond; use a wide bar */
        mc_sbuf_printf(
            b,
            "<rect class=\"%s\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
            "height=\"%.1f\" fill=\"%s\" %s/>\n",
            cls, x - r, y - r / 2, 2 * r, r, fill, st);
    }
}

/* ---- axes --------------------------------------------------------------- */

/* Label of the size 2^e in whole units. */
static void pow2_label(int e, char *buf, size_t cap)
{
    static const char *const unit[] = {"B",   "KiB", "MiB", "GiB",
                                       "TiB", "PiB", "EiB"};
    const int u = e / 10;
    snprintf(buf, cap, "%llu %s", 1ull << (e - 10 * u), unit[u < 7 ? u : 6]);
}

void mc__axis_log2_x(mc_sbuf *b, const mc__frame *f, int zero,
                     const char *label)
{
    const double ybase = f->top + f->height;
    mc_sbuf_printf(b, "<g class=\"axis x\">\n");
    mc_sbuf_printf(b,
                   "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                   "stroke=\"#222222\"/>\n",
                   f->left, ybase, f->left + f->width, ybase);
    int lo = (int)ceil(f->x0), hi = (int)floor(f->x1);
    if (lo < 0)
        lo = 0;
    if (hi > 63)
        hi = 63;
    const int span = hi - lo;
    /* Labelled steps that land on unit boundaries (1, 32, 1024, ...). */
    int step = 1;
    if (span > 8)
        step = 2;
    if (span > 16)
        step = 5;
    if (span > 40)
        step = 10;
    char buf[32];
    for (int e = lo; e <= hi; e++) {
        const double x = mc__px(f, e);
        const int major = e % step == 0;
        mc_sbuf_printf(b,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                       "stroke=\"#222222\"/>\n",
                       x, ybase, x, ybase + (major ? 5.0 : 2.5));
        if (major) {
            pow2_label(e, buf, sizeof buf);
            mc__svg_text(b, x, ybase + 17, "middle", 10, "tick", buf);
        }
    }
    if (zero && f->x0 <= -1.0 && f->x1 >= -1.0) {
        const double x = mc__px(f, -1.0);
        mc_sbuf_printf(b,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                       "stroke=\"#222222\"/>\n",
                       x, ybase, x, ybase + 5);
        mc__svg_text(b, x, ybase + 17, "middle", 10, "tick", "0 B");
        /* A break mark between the zero slot and 1 B: the axis is not
         * logarithmic there. */
        const double xb = mc__px(f, -0.5);
        mc_sbuf_printf(
            b,
            "<path class=\"break\" d=\"M%.1f %.1fl4 -8M%.1f %.1fl4 -8\" "
            "stroke=\"#222222\"/>\n",
            xb - 4, ybase + 4, xb, ybase + 4);
    }
    mc__svg_text(b, f->left + f->width / 2, ybase + 34, "middle", 11,
                 "axis-label", label);
    mc_sbuf_printf(b, "</g>\n");
}

void mc__axis_share_y(mc_sbuf *b, const mc__frame *f, const char *label)
{
    mc_sbuf_printf(b, "<g class=\"axis y\">\n");
    mc_sbuf_printf(b,
                   "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                   "stroke=\"#222222\"/>\n",
                   f->left, f->top, f->left, f->top + f->height);
    const double span = f->y1 - f->y0;
    const double step = mc__nice_ceil(span / 5.0);
    char buf[32];
    for (int i = 0; i <= 10; i++) {
        const double v = f->y0 + i * step;
        if (v > f->y1 * (1 + 1e-9))
            break;
        const double y = mc__py(f, v);
        mc_sbuf_printf(b,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                       "stroke=\"#e3e3e3\"/>\n",
                       f->left, y, f->left + f->width, y);
        mc_sbuf_printf(b,
                       "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                       "stroke=\"#222222\"/>\n",
                       f->left - 5, y, f->left, y);
        /* Enough decimals to tell neighbouring ticks apart. */
        const double pct = 100.0 * step;
        const int dec = pct >= 1.0 ? 0 : pct >= 0.1 ? 1 : pct >= 0.01 ? 2 : 3;
        snprintf(buf, sizeof buf, "%.*f %%", dec, 100.0 * v);
        mc__svg_text(b, f->left - 8, y + 3.5, "end", 10, "tick", buf);
    }
    const double cy = f->top + f->height / 2;
    mc_sbuf_printf(b,
                   "<text class=\"axis-label\" x=\"%.1f\" y=\"%.1f\" "
                   "text-anchor=\"middle\" font-size=\"11\" fill=\"#222222\" "
                   "transform=\"rotate(-90 %.1f %.1f)\">",
                   f->left - 48, cy, f->left - 48, cy);
    mc_sbuf_xml(b, label);
    mc_sbuf_printf(b, "</text>\n</g>\n");
}
