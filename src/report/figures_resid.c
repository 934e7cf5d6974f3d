/* figures_resid.c — the residual figures: normal quantile plot of the studentized
 * residuals, residuals against fitted values, and the spread of the residuals within
 * each cell; rows the outlier test flags are labelled with their data row. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sturdy/dist.h"
#include "report/figures.h"
#include "core/core.h"

#define FIG_W 640.0
#define FIG_H 380.0

/* The flagged outlier of used row i, or NULL. */
static const sturdy_outlier *flagged(const sturdy_result *r, const sturdy_diagnostics *g,
                                     size_t i)
{
    size_t row = r->design->row[i] + 1;
    for (size_t k = 0; k < g->noutliers; k++)
        if (g->outliers[k].row == row)
            return &g->outliers[k];
    return NULL;
}

typedef struct { double v; size_t i; } vi;

static int vi_cmp(const void *a, const void *b)
{
    const vi *x = a, *y = b;
    if (x->v < y->v) return -1;
    if (x->v > y->v) return 1;
    return x->i < y->i ? -1 : x->i > y->i;  /* ties in row order: the same bytes always */
}

int fig_qq(const sturdy_result *r, size_t ri, fig_work *f)
{
    const sturdy_design *d = r->design;
    const sturdy_diagnostics *g = &r->resp[ri].diag;
    size_t n = d->n, m = 0;
    if (!g->studentized || n < 3)
        return 1;
    vi *s = sturdy_malloc((n + 1) * sizeof *s);
    if (!s) {
        f->svg.failed = 1;
        return 0;
    }
    for (size_t i = 0; i < n; i++)
        if (isfinite(g->studentized[i]))
            s[m++] = (vi){ g->studentized[i], i };
    if (m < 3) {
        sturdy_free(s);
        return 1;
    }
    qsort(s, m, sizeof *s, vi_cmp);
    const char *resp = d->resp_names[ri];
    fig_name(f, resp, "residuals-normal-quantiles", NULL);
    snprintf(f->title, sizeof f->title, "%s: studentized residuals against normal quantiles",
             resp);
    char desc[512];
    snprintf(desc, sizeof desc, "The %zu externally studentized residuals, sorted, against "
             "the normal quantiles at (i − 3/8)/(n + 1/4) (Blom 1958); normal residuals lie "
             "near the dashed line y = x. Rows the outlier test flags are labelled: %zu.", m,
             g->noutliers);
    double q0 = sturdy_norm_ppf((1 - 0.375) / ((double)m + 0.25));
    double lo = fmin(q0, s[0].v), hi = fmax(-q0, s[m - 1].v);
    sturdy_svg_plot p;
    memset(&p, 0, sizeof p);
    sturdy_svg_begin(&f->svg, FIG_W, FIG_H, f->id, f->title, desc);
    sturdy_svg_frame(&p, &f->svg, FIG_W, FIG_H, q0, -q0, lo, hi, f->title,
                     "normal quantile", "studentized residual (SD units)");
    sturdy_svg_line(&p, p.xt.lo, p.xt.lo, p.xt.hi, p.xt.hi, "ref");
    const char *heads[] = { "row", "file line", "normal quantile", "studentized residual",
                            "flagged", NULL };
    fig_table_open(&f->table, "Studentized residuals in order", heads);
    for (size_t k = 0; k < m; k++) {
        double q = sturdy_norm_ppf(((double)k + 1 - 0.375) / ((double)m + 0.25));
        const sturdy_outlier *o = flagged(r, g, s[k].i);
        sturdy_svg_marker(&p, q, s[k].v, o ? 1 : 0, o ? "s1" : "s0 pt");
        char a[32], b[32], c[32], e[32];
        snprintf(a, sizeof a, "%zu", d->row[s[k].i] + 1);
        snprintf(b, sizeof b, "%zu", d->line[s[k].i]);
        if (o) {
            char lab[48];
            snprintf(lab, sizeof lab, "row %s", a);
            sturdy_svg_text(&f->svg, sturdy_svg_px(&p, q) + (q > 0 ? -8 : 8),
                            sturdy_svg_py(&p, s[k].v) + 4, q > 0 ? "end" : "start", "lab", lab);
        }
        fig_num(q, c);
        fig_num(s[k].v, e);
        const char *row[] = { a, b, c, e, o ? "yes" : "" };
        fig_table_row(&f->table, row, 5);
    }
    fig_table_close(&f->table);
    sturdy_svg_end(&f->svg);
    sturdy_free(s);
    return 0;
}

int fig_fitted(const sturdy_result *r, size_t ri, fig_work *f)
{
    const sturdy_design *d = r->design;
    const sturdy_response_result *rr = &r->resp[ri];
    size_t n = d->n;
    if (!rr->fitted || !rr->residual || n < 2)
        return 1;
    double xlo = INFINITY, xhi = -INFINITY, ylo = 0, yhi = 0;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(rr->fitted[i]) || !isfinite(rr->residual[i]))
            continue;
        xlo = fmin(xlo, rr->fitted[i]);
        xhi = fmax(xhi, rr->fitted[i]);
        ylo = fmin(ylo, rr->residual[i]);
        yhi = fmax(yhi, rr->residual[i]);
    }
    if (!(xlo <= xhi))
        return 1;
    const char *resp = d->resp_names[ri];
    fig_name(f, resp, "residuals-vs-fitted", NULL);
    snprintf(f->title, sizeof f->title, "%s: residuals against fitted values", resp);
    char desc[512];
    snprintf(desc, sizeof desc, "Each row's residual against its fitted value, both in the "
             "units of %s; a funnel shape means the spread changes with the level. Rows the "
             "outlier test flags are labelled: %zu.", resp, rr->diag.noutliers);
    sturdy_svg_plot p;
    memset(&p, 0, sizeof p);
    sturdy_svg_begin(&f->svg, FIG_W, FIG_H, f->id, f->title, desc);
    char xl[200], yl[200];
    snprintf(xl, sizeof xl, "fitted %s", resp);
    snprintf(yl, sizeof yl, "residual (%s units)", resp);
    sturdy_svg_frame(&p, &f->svg, FIG_W, FIG_H, xlo, xhi, ylo, yhi, f->title, xl, yl);
    sturdy_svg_line(&p, p.xt.lo, 0.0, p.xt.hi, 0.0, "ref");
    const char *heads[] = { "row", "file line", "fitted", "residual", "flagged", NULL };
    fig_table_open(&f->table, "Fitted values and residuals by row", heads);
    for (size_t i = 0; i < n; i++) {
        const sturdy_outlier *o = flagged(r, &rr->diag, i);
        sturdy_svg_marker(&p, rr->fitted[i], rr->residual[i], o ? 1 : 0, o ? "s1" : "s0 pt");
        char a[32], b[32], c[32], e[32];
        snprintf(a, sizeof a, "%zu", d->row[i] + 1);
        snprintf(b, sizeof b, "%zu", d->line[i]);
        if (o) {
            char lab[48];
            snprintf(lab, sizeof lab, "row %s", a);
            sturdy_svg_text(&f->svg, sturdy_svg_px(&p, rr->fitted[i]) + 8,
                            sturdy_svg_py(&p, rr->residual[i]) + 4, "start", "lab", lab);
        }
        fig_num(rr->fitted[i], c);
        fig_num(rr->residual[i], e);
        const char *row[] = { a, b, c, e, o ? "yes" : "" };
        fig_table_row(&f->table, row, 5);
    }
    fig_table_close(&f->table);
    sturdy_svg_end(&f->svg);
    return 0;
}

int fig_spread(const sturdy_result *r, size_t ri, fig_work *f)
{
    const sturdy_design *d = r->design;
    const sturdy_response_result *rr = &r->resp[ri];
    size_t n = d->n, K = d->ncells;
    if (!rr->residual || !K || K > 200 || !rr->cell_sd)
        return 1;
    char (*labels)[96] = sturdy_malloc(K * sizeof *labels + 1);
    const char **lp = sturdy_malloc(K * sizeof *lp + 1);
    size_t *seen = sturdy_calloc(K + 1, sizeof *seen);
    if (!labels || !lp || !seen) {
        sturdy_free(labels); sturdy_free(lp); sturdy_free(seen);
        f->svg.failed = 1;
        return 0;
    }
    double ylo = 0, yhi = 0;
    for (size_t k = 0; k < K; k++) {
        fig_cell_label(d, k, labels[k], sizeof labels[k]);
        lp[k] = labels[k];
    }
    for (size_t i = 0; i < n; i++)
        if (isfinite(rr->residual[i])) {
            ylo = fmin(ylo, rr->residual[i]);
            yhi = fmax(yhi, rr->residual[i]);
        }
    const char *resp = d->resp_names[ri];
    fig_name(f, resp, "spread-by-cell", NULL);
    snprintf(f->title, sizeof f->title, "%s: residuals within each cell", resp);
    char desc[512];
    snprintf(desc, sizeof desc, "The residuals of each of the %zu cells, with a bar of plus "
             "and minus the cell's standard deviation around zero; cells whose bars differ "
             "much have unequal spread.", K);
    sturdy_svg_plot p;
    memset(&p, 0, sizeof p);
    p.x_categories = 1;
    double w = fmax(FIG_W, 34.0 * (double)K + 80.0);
    size_t longest = 0;
    for (size_t k = 0; k < K; k++)
        longest = strlen(labels[k]) > longest ? strlen(labels[k]) : longest;
    p.margin_bottom = fmin(170.0, 40.0 + (double)longest * 6.5 * 0.58);
    double h = FIG_H + p.margin_bottom;
    sturdy_svg_begin(&f->svg, w, h, f->id, f->title, desc);
    char yl[200];
    snprintf(yl, sizeof yl, "residual (%s units)", resp);
    sturdy_svg_frame(&p, &f->svg, w, h, -0.5, (double)K - 0.5, ylo, yhi, f->title, "cell", yl);
    fig_categories(&p, lp, K);
    sturdy_svg_line(&p, -0.5, 0.0, (double)K - 0.5, 0.0, "ref");
    for (size_t k = 0; k < K; k++)
        if (isfinite(rr->cell_sd[k])) {
            sturdy_svg_line(&p, (double)k + 0.22, -rr->cell_sd[k], (double)k + 0.22,
                            rr->cell_sd[k], "eb s2 rec");
        }
    for (size_t i = 0; i < n; i++) {
        size_t k = d->cell[i];
        /* a fixed spread of the points of one cell, by their order in it */
        double x = (double)k - 0.12 + 0.06 * (double)(seen[k]++ % 4);
        const sturdy_outlier *o = flagged(r, &rr->diag, i);
        sturdy_svg_marker(&p, x, rr->residual[i], o ? 1 : 0, o ? "s1" : "s0 pt");
        if (o && isfinite(rr->residual[i])) {
            char lab[48];
            snprintf(lab, sizeof lab, "row %zu", d->row[i] + 1);
            sturdy_svg_text(&f->svg, sturdy_svg_px(&p, x) + 8, sturdy_svg_py(&p, rr->residual[i]) + 4,
                            "start", "lab", lab);
        }
    }
    const char *leg[] = { "residual", "row the outlier test flags", "± the cell's SD" };
    fig_legend(&p, leg, 2, 0);
    sturdy_buf_printf(&f->svg, "<line class=\"eb s2 rec\" x1=\"%.1f\" y1=\"27\" x2=\"%.1f\" "
                      "y2=\"37\"/>\n", 8.0 + 30 + 6.5 * 8 + 30 + 6.5 * 26 + 9,
                      8.0 + 30 + 6.5 * 8 + 30 + 6.5 * 26 + 9);
    sturdy_svg_text(&f->svg, 8.0 + 30 + 6.5 * 8 + 30 + 6.5 * 26 + 24, 36, "start", "lab", leg[2]);
    const char *heads[] = { "cell", "rows", "mean", "SD", NULL };
    fig_table_open(&f->table, "Rows, mean and standard deviation of each cell", heads);
    for (size_t k = 0; k < K; k++) {
        char a[32], b[32], c[32];
        snprintf(a, sizeof a, "%zu", d->cell_count[k]);
        fig_num(rr->cell_mean ? rr->cell_mean[k] : NAN, b);
        fig_num(rr->cell_sd[k], c);
        const char *row[] = { labels[k], a, b, c };
        fig_table_row(&f->table, row, 4);
    }
    fig_table_close(&f->table);
    sturdy_svg_end(&f->svg);
    sturdy_free(labels); sturdy_free(lp); sturdy_free(seen);
    return 0;
}
