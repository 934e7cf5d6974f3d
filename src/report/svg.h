/* svg.h — the project's small SVG writer: nice axis ticks, linear scales, clipping to the
 * plot area, escaping of text, and a plot frame with titled axes. Coordinates are written
 * with one decimal, so the same numbers always give the same bytes. */
#ifndef STURDY_SVG_H
#define STURDY_SVG_H

#include <stddef.h>

#include "sturdy/buf.h"

/* Axis ticks by the nice-number rule of Heckbert (1990), "Nice numbers for graph labels",
 * Graphics Gems I: the tick step is 1, 2 or 5 × 10^k, the axis runs from a multiple of
 * the step at or below lo to one at or above hi. */
typedef struct {
    double lo, hi;               /* the axis range: first and last tick */
    double step;
    size_t n;                    /* ticks, lo + i·step for i < n */
    int nfrac;                   /* decimals that label every tick exactly */
} sturdy_svg_ticks;

/* Heckbert's nicenum: a nice number near x > 0 (round: the nearest of 1, 2, 5, 10 ×
 * 10^k; else the smallest at least x). */
double sturdy_svg_nicenum(double x, int round);

/* Ticks for the data range [lo, hi] with about `want` (≥ 2) ticks. lo == hi is widened
 * to a unit around it; non-finite input gives the range [0, 1]. */
void sturdy_svg_ticks_make(double lo, double hi, int want, sturdy_svg_ticks *out);

/* The label of tick i, with t->nfrac decimals ("-0" is written "0"). buf ≥ 32 bytes. */
void sturdy_svg_tick_label(const sturdy_svg_ticks *t, size_t i, char *buf);

/* A linear map of data [d0, d1] onto pixels [p0, p1] (p1 < p0 for a y axis). */
typedef struct { double d0, d1, p0, p1; } sturdy_svg_scale;
double sturdy_svg_map(const sturdy_svg_scale *s, double v);

/* A rectangle of the drawing, x0 < x1, y0 < y1 (pixels). */
typedef struct { double x0, y0, x1, y1; } sturdy_svg_rect;

/* Clip the segment (x0,y0)–(x1,y1) to r (Liang & Barsky 1984): 1 with the visible part
 * in seg[4], 0 when nothing of it is inside. */
int sturdy_svg_clip(const sturdy_svg_rect *r, double x0, double y0, double x1, double y1,
                    double seg[4]);

/* Append text escaped for XML character data and attribute values: & < > " ' become
 * entities, well-formed UTF-8 passes through, control characters and bytes that are not
 * UTF-8 become U+FFFD. */
void sturdy_svg_escape(sturdy_buf *b, const char *s);

/* A plot: the drawing size, the plot area inside it, and the two axes. */
typedef struct {
    sturdy_buf *b;
    double width, height;
    sturdy_svg_rect area;        /* where the data are drawn */
    sturdy_svg_ticks xt, yt;
    sturdy_svg_scale x, y;
    int x_categories;            /* x is categorical: no x ticks are drawn by the frame */
    double margin_bottom;        /* room below the plot area (0: the default), e.g. for
                                    slanted category labels */
} sturdy_svg_plot;

/* Open an <svg> of the given size with role="img", aria-label, <title> and <desc>.
 * `id` (ASCII) is set as its class. The stylesheet (sturdy_svg_style) is not included:
 * a page carries it once, a standalone file after its <desc>. */
void sturdy_svg_begin(sturdy_buf *b, double width, double height, const char *id,
                      const char *title, const char *desc);
void sturdy_svg_end(sturdy_buf *b);

/* The figures' CSS rules (without the <style> element). */
const char *sturdy_svg_style(void);

/* Set up the plot area (margins in pixels) and the axes for the data ranges; draws the
 * grid, the axes with tick labels, the axis titles and the heading. */
void sturdy_svg_frame(sturdy_svg_plot *p, sturdy_buf *b, double width, double height,
                      double xlo, double xhi, double ylo, double yhi, const char *heading,
                      const char *xlabel, const char *ylabel);

/* Pixel position of data x / y. */
double sturdy_svg_px(const sturdy_svg_plot *p, double x);
double sturdy_svg_py(const sturdy_svg_plot *p, double y);

/* Drawing in data coordinates, clipped to the plot area; `cls` is a class of the
 * figures' stylesheet (e.g. "s0" … "s5" for the series colours). */
void sturdy_svg_line(sturdy_svg_plot *p, double x0, double y0, double x1, double y1,
                     const char *cls);
void sturdy_svg_polyline(sturdy_svg_plot *p, const double *x, const double *y, size_t n,
                         const char *cls);
/* A marker of series `k` (shapes differ by series, so colour is never the only cue);
 * nothing when the point lies outside the plot area. */
void sturdy_svg_marker(sturdy_svg_plot *p, double x, double y, size_t k, const char *cls);

/* Appends v as "%.1f" would print it (the same text, without printf where it can: the
 * coordinates a page writes by the thousand). */
void sturdy_svg_put1(sturdy_buf *b, double v);
/* A bar from y = base to y = top at [x0, x1], clipped. */
void sturdy_svg_bar(sturdy_svg_plot *p, double x0, double x1, double base, double top,
                    const char *cls);
/* Text at pixel (px, py), escaped; anchor "start", "middle" or "end". */
void sturdy_svg_text(sturdy_buf *b, double px, double py, const char *anchor,
                     const char *cls, const char *text);

/* Number of series styles (colours, dashes and marker shapes). */
#define STURDY_SVG_SERIES 6

#endif
