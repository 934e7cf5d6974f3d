/* figures.h — the report's figures, each an SVG drawing with its numbers as an HTML
 * table, handed one at a time to a callback (the HTML page embeds them, the CLI writes
 * them as files). */
#ifndef STURDY_FIGURES_H
#define STURDY_FIGURES_H

#include "core/result.h"
#include "report/svg.h"

typedef struct {
    size_t resp;                 /* the response it belongs to */
    size_t index;                /* 0, 1, ... over the whole result: unique ids */
    const char *name;            /* file stem: response and figure, sanitised to
                                    [A-Za-z0-9._-] */
    const char *title;           /* the figure's heading */
    const sturdy_buf *svg;       /* the <svg> element */
    const sturdy_buf *table;     /* the numbers as an HTML <table> */
} sturdy_fig;

/* Called once per figure; a nonzero return stops the walk. */
typedef int (*sturdy_fig_fn)(void *arg, const sturdy_fig *f);

/* Every figure of every response, in a fixed order: means of each main effect and
 * two-factor interaction, the effect sizes with their intervals, each term's resampled
 * F* distribution, the normal quantile plot, residuals against fitted values, the spread
 * within cells, and the most influential rows. STURDY_EINTERNAL when memory ran out,
 * STURDY_EOUTPUT when fn stopped the walk. */
sturdy_status sturdy_figures_each(const sturdy_result *r, sturdy_fig_fn fn, void *arg);

/* --- shared by the figure files ---------------------------------------------------- */

/* A figure being made: its drawing, its table, its name and title. */
typedef struct {
    sturdy_buf svg, table;
    char name[160], title[256];
    char id[32];
} fig_work;

/* Number for tables and labels: 4 significant digits, "—" for NaN. buf ≥ 32. */
void fig_num(double v, char *buf);
/* Name of a figure: "<response>-<what>[-<term>]" sanitised. */
void fig_name(fig_work *f, const char *resp, const char *what, const char *term);
/* Label of cell k: its levels joined by "·" into buf (size n). */
void fig_cell_label(const sturdy_design *d, size_t k, char *buf, size_t n);
/* Table helpers: open with a caption and header cells (NULL-terminated), rows of cells. */
void fig_table_open(sturdy_buf *b, const char *caption, const char *const *heads);
void fig_table_row(sturdy_buf *b, const char *const *cells, size_t n);
void fig_table_close(sturdy_buf *b);
/* Category labels under a categorical x axis at x = 0 … n−1, slanted when crowded. */
void fig_categories(sturdy_svg_plot *p, const char *const *labels, size_t n);
/* A legend row of series markers and names, above the plot area. */
void fig_legend(sturdy_svg_plot *p, const char *const *labels, size_t n, int lines);

/* The residual figures (figures_resid.c): quantile plot, residuals vs fitted, spread
 * within cells. Each returns 0 when the figure was made (into f), 1 when the response
 * has nothing to draw. */
int fig_qq(const sturdy_result *r, size_t ri, fig_work *f);
int fig_fitted(const sturdy_result *r, size_t ri, fig_work *f);
int fig_spread(const sturdy_result *r, size_t ri, fig_work *f);

#endif
