/* svg.c — the small SVG writer of the figures: nice ticks (Heckbert 1990), linear scales,
 * clipping (Liang & Barsky 1984), text escaping and a plot frame. */
#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "report/svg.h"

void sturdy_svg_put1(sturdy_buf *b, double v)
{
    /* r = v·10 to the nearest integer; d = v·10 − r from one fused rounding, so |d| is
       within an ulp of the exact distance. Away from a tie (|d| < 0.5 − 1e-9) r is the
       nearest integer to the exact v·10, which is printf's rounding of v to tenths. */
    if (isfinite(v) && fabs(v) < 1e15) {
        double r = nearbyint(v * 10.0), d = fma(v, 10.0, -r);
        if (fabs(d) < 0.5 - 1e-9) {
            char s[24];
            size_t k = sizeof s;
            uint64_t u = (uint64_t)fabs(r);
            s[--k] = (char)('0' + u % 10);
            s[--k] = '.';
            u /= 10;
            do {
                s[--k] = (char)('0' + u % 10);
                u /= 10;
            } while (u);
            if (signbit(v))   /* printf writes −0.04 as "-0.0" */
                s[--k] = '-';
            sturdy_buf_put(b, s + k, sizeof s - k);
            return;
        }
    }
    sturdy_buf_printf(b, "%.1f", v);
}

/* sturdy_buf_printf for the formats of this file that hold only %s and %.1f (and %%):
 * the same text, the numbers through sturdy_svg_put1 (the compiler checks the arguments
 * against the format as for printf). */
static void svg_fmt(sturdy_buf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void svg_fmt(sturdy_buf *b, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    const char *run = fmt;
    for (const char *c = fmt; *c; c++) {
        if (*c != '%')
            continue;
        sturdy_buf_put(b, run, (size_t)(c - run));
        if (c[1] == 's') {
            const char *str = va_arg(ap, const char *);
            sturdy_buf_puts(b, str ? str : "(null)");   /* as glibc's printf */
            c += 1;
        } else if (c[1] == '%') {
            sturdy_buf_put(b, "%", 1);
            c += 1;
        } else {
            assert(!strncmp(c, "%.1f", 4));
            sturdy_svg_put1(b, va_arg(ap, double));
            c += 3;
        }
        run = c + 1;
    }
    sturdy_buf_puts(b, run);
    va_end(ap);
}

double sturdy_svg_nicenum(double x, int round)
{
    double e = floor(log10(x)), f = x / pow(10.0, e), nf;
    if (round)
        nf = f < 1.5 ? 1.0 : f < 3.0 ? 2.0 : f < 7.0 ? 5.0 : 10.0;
    else
        nf = f <= 1.0 ? 1.0 : f <= 2.0 ? 2.0 : f <= 5.0 ? 5.0 : 10.0;
    return nf * pow(10.0, e);
}

/* A multiple of step, snapped: k·step computed from the integer k, so that ticks carry
 * no accumulated rounding and print exactly with nfrac decimals. */
void sturdy_svg_ticks_make(double lo, double hi, int want, sturdy_svg_ticks *out)
{
    if (!isfinite(lo) || !isfinite(hi)) {
        lo = 0.0;
        hi = 1.0;
    }
    if (lo > hi) {
        double t = lo;
        lo = hi;
        hi = t;
    }
    if (hi - lo <= 1e-12 * fmax(1.0, fabs(lo))) {    /* one value: a unit around it */
        double u = lo != 0.0 ? sturdy_svg_nicenum(fabs(lo) * 0.1, 1) : 1.0;
        lo -= u;
        hi += u;
    }
    if (want < 2)
        want = 2;
    double range = sturdy_svg_nicenum(hi - lo, 0);
    double d = sturdy_svg_nicenum(range / (want - 1), 1);
    double k0 = floor(lo / d), k1 = ceil(hi / d);
    out->step = d;
    out->lo = k0 * d;
    out->hi = k1 * d;
    out->n = (size_t)(k1 - k0) + 1;
    int nf = (int)-floor(log10(d));
    out->nfrac = nf > 0 ? nf : 0;
}

void sturdy_svg_tick_label(const sturdy_svg_ticks *t, size_t i, char *buf)
{
    double k0 = floor(t->lo / t->step + 0.5);
    double v = (k0 + (double)i) * t->step;
    if (fabs(v) < 0.5 * t->step)
        v = 0.0;                    /* no "-0" */
    snprintf(buf, 32, "%.*f", t->nfrac, v);
}

double sturdy_svg_map(const sturdy_svg_scale *s, double v)
{
    if (s->d1 == s->d0)
        return 0.5 * (s->p0 + s->p1);
    return s->p0 + (v - s->d0) / (s->d1 - s->d0) * (s->p1 - s->p0);
}

/* Liang–Barsky: the parameter range [t0, t1] of the segment inside each boundary. */
int sturdy_svg_clip(const sturdy_svg_rect *r, double x0, double y0, double x1, double y1,
                    double seg[4])
{
    double dx = x1 - x0, dy = y1 - y0, t0 = 0.0, t1 = 1.0;
    const double p[4] = { -dx, dx, -dy, dy };
    const double q[4] = { x0 - r->x0, r->x1 - x0, y0 - r->y0, r->y1 - y0 };
    for (int i = 0; i < 4; i++) {
        if (p[i] == 0.0) {
            if (q[i] < 0.0)
                return 0;           /* parallel to and outside this boundary */
            continue;
        }
        double t = q[i] / p[i];
        if (p[i] < 0.0) {
            if (t > t1) return 0;
            if (t > t0) t0 = t;
        } else {
            if (t < t0) return 0;
            if (t < t1) t1 = t;
        }
    }
    seg[0] = x0 + t0 * dx;
    seg[1] = y0 + t0 * dy;
    seg[2] = x0 + t1 * dx;
    seg[3] = y0 + t1 * dy;
    return 1;
}

void sturdy_svg_escape(sturdy_buf *b, const char *s)
{
    if (!s)
        return;
    while (*s) {
        unsigned char c = (unsigned char)*s;
        switch (c) {
        case '&': sturdy_buf_puts(b, "&amp;"); s++; continue;
        case '<': sturdy_buf_puts(b, "&lt;"); s++; continue;
        case '>': sturdy_buf_puts(b, "&gt;"); s++; continue;
        case '"': sturdy_buf_puts(b, "&quot;"); s++; continue;
        case '\'': sturdy_buf_puts(b, "&#39;"); s++; continue;
        default: break;
        }
        if (c < 0x20 || c == 0x7f) {            /* XML 1.0 forbids most controls */
            sturdy_buf_puts(b, "\xEF\xBF\xBD");
            s++;
            continue;
        }
        size_t n = sturdy_utf8_len(s);
        if (n == 0) {
            sturdy_buf_puts(b, "\xEF\xBF\xBD");
            s++;
            continue;
        }
        /* C1 controls (U+0080–U+009F) are not allowed in HTML text either */
        if (n == 2 && c == 0xC2 && (unsigned char)s[1] < 0xA0) {
            sturdy_buf_puts(b, "\xEF\xBF\xBD");
            s += 2;
            continue;
        }
        sturdy_buf_put(b, s, n);
        s += n;
    }
}

/* The figures' stylesheet. The series colours are this project's own choice: they differ
 * in lightness as well as in hue (a blue–orange axis, which the common colour-vision
 * deficiencies keep apart), and every series also has its own dash and marker shape. */
static const char *const svg_style =
    ""
    "text{font-family:system-ui,sans-serif;font-size:12px;fill:#1b2430}"
    ".hd{font-size:14px;font-weight:600}"
    ".ax{stroke:#1b2430;stroke-width:1;fill:none}"
    ".gr{stroke:#dde2e8;stroke-width:1;fill:none}"
    ".tk{font-size:11px;fill:#3d4754}"
    ".lab{font-size:11px;fill:#3d4754}"
    ".s0{stroke:#1f5fa8;fill:#1f5fa8}"
    ".s1{stroke:#d97b0d;fill:#d97b0d}"
    ".s2{stroke:#5e3c99;fill:#5e3c99}"
    ".s3{stroke:#6aa9dd;fill:#6aa9dd}"
    ".s4{stroke:#8c5a1e;fill:#8c5a1e}"
    ".s5{stroke:#707884;fill:#707884}"
    ".ln{fill:none;stroke-width:2}"
    ".d1{stroke-dasharray:6 3}.d2{stroke-dasharray:2 3}.d3{stroke-dasharray:8 3 2 3}"
    ".d4{stroke-dasharray:12 4}.d5{stroke-dasharray:3 6}"
    ".eb{stroke-width:1.5;fill:none}"
    ".bar{fill:#b9cde4;stroke:#1f5fa8;stroke-width:0.5}"
    ".obs{stroke:#b33c00;stroke-width:2.5;fill:#b33c00}"
    ".ref{stroke:#1b2430;stroke-width:1;stroke-dasharray:4 3;fill:none}"
    ".den{stroke:#5e3c99;stroke-width:2;fill:none}"
    ".rec{stroke-width:4}"
    ".pt{fill-opacity:0.75;stroke:none}";

const char *sturdy_svg_style(void)
{
    return svg_style;
}

void sturdy_svg_begin(sturdy_buf *b, double width, double height, const char *id,
                      const char *title, const char *desc)
{
    sturdy_buf_printf(b, "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 %.0f %.0f\" "
                      "width=\"%.0f\" height=\"%.0f\" role=\"img\" class=\"%s\" aria-label=\"",
                      width, height, width, height, id);
    sturdy_svg_escape(b, title);
    sturdy_buf_puts(b, "\">\n<title>");
    sturdy_svg_escape(b, title);
    sturdy_buf_puts(b, "</title>\n<desc>");
    sturdy_svg_escape(b, desc);
    sturdy_buf_puts(b, "</desc>\n");
}

void sturdy_svg_end(sturdy_buf *b)
{
    sturdy_buf_puts(b, "</svg>\n");
}

void sturdy_svg_text(sturdy_buf *b, double px, double py, const char *anchor,
                     const char *cls, const char *text)
{
    svg_fmt(b, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\"", px, py, anchor);
    if (cls && *cls)
        sturdy_buf_printf(b, " class=\"%s\"", cls);
    sturdy_buf_puts(b, ">");
    sturdy_svg_escape(b, text);
    sturdy_buf_puts(b, "</text>\n");
}

double sturdy_svg_px(const sturdy_svg_plot *p, double x)
{
    return sturdy_svg_map(&p->x, x);
}

double sturdy_svg_py(const sturdy_svg_plot *p, double y)
{
    return sturdy_svg_map(&p->y, y);
}

/* Margins of the plot area: room for the heading, the tick labels and the axis titles. */
#define SVG_LEFT 64.0
#define SVG_RIGHT 16.0
#define SVG_TOP 48.0             /* the heading, then a row for a legend */
#define SVG_BOTTOM 48.0

void sturdy_svg_frame(sturdy_svg_plot *p, sturdy_buf *b, double width, double height,
                      double xlo, double xhi, double ylo, double yhi, const char *heading,
                      const char *xlabel, const char *ylabel)
{
    char lab[32];
    p->b = b;
    p->width = width;
    p->height = height;
    double bottom = p->margin_bottom > 0 ? p->margin_bottom : SVG_BOTTOM;
    p->area = (sturdy_svg_rect){ SVG_LEFT, SVG_TOP, width - SVG_RIGHT, height - bottom };
    sturdy_svg_ticks_make(ylo, yhi, 6, &p->yt);
    p->y = (sturdy_svg_scale){ p->yt.lo, p->yt.hi, p->area.y1, p->area.y0 };
    if (p->x_categories) {
        p->x = (sturdy_svg_scale){ xlo, xhi, p->area.x0, p->area.x1 };
    } else {
        sturdy_svg_ticks_make(xlo, xhi, 7, &p->xt);
        p->x = (sturdy_svg_scale){ p->xt.lo, p->xt.hi, p->area.x0, p->area.x1 };
    }
    sturdy_buf_puts(b, "<g class=\"frame\">\n");
    for (size_t i = 0; i < p->yt.n; i++) {
        double v = p->yt.lo + (double)i * p->yt.step, py = sturdy_svg_py(p, v);
        svg_fmt(b, "<line class=\"gr\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>\n",
                p->area.x0, py, p->area.x1, py);
        sturdy_svg_tick_label(&p->yt, i, lab);
        sturdy_svg_text(b, p->area.x0 - 6, py + 4, "end", "tk", lab);
    }
    if (!p->x_categories)
        for (size_t i = 0; i < p->xt.n; i++) {
            double v = p->xt.lo + (double)i * p->xt.step, px = sturdy_svg_px(p, v);
            svg_fmt(b, "<line class=\"ax\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                    "y2=\"%.1f\"/>\n", px, p->area.y1, px, p->area.y1 + 5);
            sturdy_svg_tick_label(&p->xt, i, lab);
            sturdy_svg_text(b, px, p->area.y1 + 18, "middle", "tk", lab);
        }
    svg_fmt(b, "<path class=\"ax\" d=\"M%.1f %.1fV%.1fH%.1f\"/>\n", p->area.x0,
            p->area.y0, p->area.y1, p->area.x1);
    sturdy_svg_text(b, 8, 18, "start", "hd", heading);
    sturdy_svg_text(b, 0.5 * (p->area.x0 + p->area.x1), height - 8, "middle", NULL, xlabel);
    svg_fmt(b, "<text transform=\"translate(14 %.1f) rotate(-90)\" "
            "text-anchor=\"middle\">", 0.5 * (p->area.y0 + p->area.y1));
    sturdy_svg_escape(b, ylabel);
    sturdy_buf_puts(b, "</text>\n</g>\n");
}

void sturdy_svg_line(sturdy_svg_plot *p, double x0, double y0, double x1, double y1,
                     const char *cls)
{
    double s[4];
    if (!isfinite(x0) || !isfinite(y0) || !isfinite(x1) || !isfinite(y1))
        return;
    if (!sturdy_svg_clip(&p->area, sturdy_svg_px(p, x0), sturdy_svg_py(p, y0),
                         sturdy_svg_px(p, x1), sturdy_svg_py(p, y1), s))
        return;
    svg_fmt(p->b, "<line class=\"%s\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>\n",
            cls, s[0], s[1], s[2], s[3]);
}

/* A polyline drawn as clipped segments joined into one path (a gap where a segment
 * leaves the area or a value is missing). */
void sturdy_svg_polyline(sturdy_svg_plot *p, const double *x, const double *y, size_t n,
                         const char *cls)
{
    double s[4], lx = NAN, ly = NAN;
    int open = 0;
    for (size_t i = 1; i < n; i++) {
        if (!isfinite(x[i - 1]) || !isfinite(y[i - 1]) || !isfinite(x[i]) || !isfinite(y[i]))
            continue;
        if (!sturdy_svg_clip(&p->area, sturdy_svg_px(p, x[i - 1]), sturdy_svg_py(p, y[i - 1]),
                             sturdy_svg_px(p, x[i]), sturdy_svg_py(p, y[i]), s))
            continue;
        if (!open) {
            sturdy_buf_printf(p->b, "<path class=\"%s\" d=\"", cls);
            open = 1;
        }
        if (s[0] != lx || s[1] != ly)
            svg_fmt(p->b, "M%.1f %.1f", s[0], s[1]);
        svg_fmt(p->b, "L%.1f %.1f", s[2], s[3]);
        lx = s[2];
        ly = s[3];
    }
    if (open)
        sturdy_buf_puts(p->b, "\"/>\n");
}

void sturdy_svg_marker(sturdy_svg_plot *p, double x, double y, size_t k, const char *cls)
{
    if (!isfinite(x) || !isfinite(y))
        return;
    double px = sturdy_svg_px(p, x), py = sturdy_svg_py(p, y), r = 4.0;
    if (px < p->area.x0 - 0.05 || px > p->area.x1 + 0.05 || py < p->area.y0 - 0.05 ||
        py > p->area.y1 + 0.05)
        return;
    switch (k % STURDY_SVG_SERIES) {
    case 0:
        svg_fmt(p->b, "<circle class=\"%s\" cx=\"%.1f\" cy=\"%.1f\" r=\"%.1f\"/>\n",
                cls, px, py, r);
        break;
    case 1:
        svg_fmt(p->b, "<rect class=\"%s\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                "height=\"%.1f\"/>\n", cls, px - r, py - r, 2 * r, 2 * r);
        break;
    case 2:
        svg_fmt(p->b, "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1fZ\"/>\n",
                cls, px, py - r - 1, px + r + 1, py + r, px - r - 1, py + r);
        break;
    case 3:
        svg_fmt(p->b, "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1fL%.1f "
                "%.1fZ\"/>\n", cls, px, py - r - 1, px + r + 1, py, px, py + r + 1,
                px - r - 1, py);
        break;
    case 4:
        svg_fmt(p->b, "<path class=\"%s\" d=\"M%.1f %.1fL%.1f %.1fL%.1f %.1fZ\"/>\n",
                cls, px, py + r + 1, px + r + 1, py - r, px - r - 1, py - r);
        break;
    default:
        svg_fmt(p->b, "<path class=\"%s\" style=\"fill:none;stroke-width:2\" "
                "d=\"M%.1f %.1fL%.1f %.1fM%.1f %.1fL%.1f %.1f\"/>\n", cls, px - r,
                py - r, px + r, py + r, px - r, py + r, px + r, py - r);
        break;
    }
}

void sturdy_svg_bar(sturdy_svg_plot *p, double x0, double x1, double base, double top,
                    const char *cls)
{
    double ax0 = sturdy_svg_px(p, x0), ax1 = sturdy_svg_px(p, x1);
    double ay0 = sturdy_svg_py(p, top), ay1 = sturdy_svg_py(p, base);
    if (ax0 > ax1) { double t = ax0; ax0 = ax1; ax1 = t; }
    if (ay0 > ay1) { double t = ay0; ay0 = ay1; ay1 = t; }
    if (ax0 < p->area.x0) ax0 = p->area.x0;
    if (ax1 > p->area.x1) ax1 = p->area.x1;
    if (ay0 < p->area.y0) ay0 = p->area.y0;
    if (ay1 > p->area.y1) ay1 = p->area.y1;
    if (!(ax1 > ax0) || !(ay1 > ay0))
        return;
    svg_fmt(p->b, "<rect class=\"%s\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
            "height=\"%.1f\"/>\n", cls, ax0, ay0, ax1 - ax0, ay1 - ay0);
}
