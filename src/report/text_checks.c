/* text_checks.c — the text report's checks on the residuals of a response: normality,
 * equal spread, outliers, single rows, the precision of the resampled p and the cell
 * sizes, each with its rule and plain advice. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/text.h"

/* |skewness| above 1 is the usual rule of thumb for a highly skewed distribution
 * (Bulmer 1979, Principles of Statistics). */
#define SKEW_STRONG 1.0
/* Cells with fewer rows than this leave little to estimate spread or shape from. */
#define SMALL_CELL 3

/* "row 7 (line 8; A=a1, B=b2) externally studentized residual 110" for each listed row. */
static void outlier_rows(tw *w, const sturdy_outlier *o, size_t n, sturdy_buf *s)
{
    for (size_t i = 0; i < n && i < TW_LIST_MAX; i++) {
        char z[32];
        tw_fmt_g(o[i].studentized, 3, z);
        sturdy_buf_printf(s, "%srow %zu (line %zu; ", i ? "; " : "", o[i].row, o[i].line);
        sturdy_report_cell_label(w->r->design, o[i].cell, s);
        sturdy_buf_printf(s, ") externally studentized residual %s", z);
    }
    if (n > TW_LIST_MAX)
        sturdy_buf_printf(s, "; and %zu more (see the JSON output)", n - TW_LIST_MAX);
}

/* The outlier test's flags (Bonferroni-bounded, residuals.c) with the rule stated, then
 * the other rows beyond ±3 as the largest residuals only. */
static void check_outliers(tw *w, const sturdy_response_result *rr)
{
    const sturdy_diagnostics *g = &rr->diag;
    sturdy_buf s;
    sturdy_buf_init(&s);
    char df[32];
    tw_fmt_df(rr->df_error - 1, df);
    size_t n = w->r->design ? w->r->design->n : 0;
    /* externally studentized residuals need a residual df beyond the one they drop */
    if (g->noutliers == 0 && !(rr->df_error >= 2)) {
        sturdy_buf_printf(&s, "check not available (%s): studentized residuals need at "
                          "least 2 residual degrees of freedom.",
                          rr->df_error == 0 ? "no residual degrees of freedom"
                                            : "1 residual degree of freedom");
    } else {
        if (g->noutliers == 0) {
            sturdy_buf_puts(&s, "no row flagged");
        } else {
            sturdy_buf_printf(&s, "%zu row%s flagged: ", g->noutliers,
                              g->noutliers == 1 ? "" : "s");
            outlier_rows(w, g->outliers, g->noutliers, &s);
        }
        sturdy_buf_printf(&s, " (rule: a row is flagged when %zu × its two-sided t-tail on "
                          "%s df, the Bonferroni bound, is at most 0.05; Cook & Weisberg "
                          "1982).", n, df);
        if (g->noutliers)
            sturdy_buf_printf(&s, " → Check %s for recording errors. The resampled p does "
                              "not protect against such a row: it rearranges the same F.",
                              g->noutliers == 1 ? "this row" : "these rows");
        if (g->nlarge) {
            sturdy_buf_puts(&s, " Largest residuals, beyond ±3 but not flagged (expected "
                                "now and then in clean data): ");
            outlier_rows(w, g->large, g->nlarge, &s);
            sturdy_buf_puts(&s, ".");
        }
    }
    tw_labelled(w, "outliers", s.data ? s.data : "");
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
}

static void check_normality(tw *w, const sturdy_diagnostics *g, sturdy_buf *s)
{
    char x[32];
    s->len = 0;
    if (!isnan(g->sw_p)) {
        tw_fmt_g(g->sw_w, 3, x);
        sturdy_buf_printf(s, "Shapiro–Wilk W = %s, ", x);
        tw_p_words(s, g->sw_p);
    } else {
        sturdy_buf_printf(s, "Shapiro–Wilk not available (%s)",
                          g->sw_note ? g->sw_note : "not computed");
    }
    tw_fmt_g(tw_is_noise(g->skewness, 1.0) ? 0.0 : g->skewness, 3, x);
    sturdy_buf_printf(s, "; skewness %s%s", x,
                      !(fabs(g->skewness) > SKEW_STRONG) ? ""
                      : g->skewness > 0 ? " (strongly right-skewed)" : " (strongly left-skewed)");
    tw_fmt_g(tw_is_noise(g->excess_kurtosis, 1.0) ? 0.0 : g->excess_kurtosis, 3, x);
    sturdy_buf_printf(s, ", excess kurtosis %s.", x);
    /* Freedman–Lane keeps its level under non-normal errors of equal spread; with unequal
     * spreads no rearrangement of F does, and a gross error sways F and its
     * rearrangements alike, so the advice follows the spread and outlier checks. */
    if (!isnan(g->sw_p))
        sturdy_buf_puts(s, !(g->sw_p < w->r->opts.alpha)
                               ? " → No clear sign of non-normal residuals."
                           : g->spread_differs
                               ? " → The residuals are not normal and the cell spreads differ; "
                                 "read the unequal-variance column."
                           : g->noutliers && g->sw_p_rest < w->r->opts.alpha
                               ? " → The residuals are not normal, even without the rows the "
                                 "outlier test flags: the errors themselves are skewed or "
                                 "heavy-tailed; rely on the resampling column, which keeps its "
                                 "level under such errors of equal spread, and check the "
                                 "flagged rows (below) all the same."
                           : g->noutliers
                               ? " → The residuals are not normal and the outlier test flags "
                                 "rows (below); a gross error sways the resampled F as much as "
                                 "the F-test, so check those rows before relying on either "
                                 "column."
                               : " → The residuals are not normal; rely on the resampling "
                                 "column, which keeps its level under non-normal errors of "
                                 "equal spread.");
    tw_labelled(w, "normality", s->data);
}

static void check_spread(tw *w, const sturdy_diagnostics *g, sturdy_buf *s)
{
    char x[32], y[32], z[32];
    s->len = 0;
    if (!isnan(g->bf_p)) {
        tw_fmt_g(g->bf_f, 3, x);
        tw_fmt_df(g->bf_df1, y);
        tw_fmt_df(g->bf_df2, z);
        sturdy_buf_printf(s, "Brown–Forsythe F = %s on %s and %s df, ", x, y, z);
        tw_p_words(s, g->bf_p);
    } else {
        sturdy_buf_printf(s, "Brown–Forsythe not available (%s)",
                          g->bf_note ? g->bf_note : "not computed");
    }
    if (!isnan(g->bfm_p)) {
        sturdy_buf_puts(s, "; without structural zeros (Hines & O'Hara Hines 2000) ");
        tw_p_words(s, g->bfm_p);
    }
    if (!isnan(g->variance_ratio)) {
        tw_fmt_g(g->variance_ratio, 3, x);
        sturdy_buf_printf(s, "; the largest cell variance is %s × the smallest.", x);
    } else {
        sturdy_buf_printf(s, "; variance ratio not available (%s).",
                          g->vr_note ? g->vr_note : "not computed");
    }
    /* Sign flipping does not hold α in small cells of unequal spread (README), so the
     * advice is the unequal-variance column, never --flip. */
    if (g->spread_differs)
        sturdy_buf_puts(s, " → Cell variances differ; read the unequal-variance column (p "
                           "unequal var), not the F-test or the resampled F.");
    else if (!isnan(g->bf_p))
        sturdy_buf_puts(s, " → No clear sign of unequal variances (small cells make this "
                           "check weak; the unequal-variance column holds its level either "
                           "way).");
    tw_labelled(w, "equal spread", s->data);
}

void tw_checks(tw *w, const sturdy_response_result *rr)
{
    const sturdy_result *r = w->r;
    sturdy_buf s;
    sturdy_buf_init(&s);
    tw_para(w, 2, 2, "Checks on the residuals");
    check_normality(w, &rr->diag, &s);
    check_spread(w, &rr->diag, &s);
    check_outliers(w, rr);
    tw_sensitivity_check(w, rr);
    /* precision of the resampled p-values */
    s.len = 0;
    for (size_t k = 0; r->finished && !r->exact && k < rr->nterms; k++)
        if (rr->terms[k].straddles && !isnan(rr->terms[k].p_perm))
            sturdy_buf_printf(&s, "%s%s", s.len ? ", " : "", rr->terms[k].label);
    const char *perm = tw_name(w, STURDY_SETTING_PERMUTATIONS);
    if (s.len)
        tw_labelledf(w, "precision", "the 99%% range of the resampled p of %s contains α. → "
                     "Run more rearrangements%s%s%s before deciding.", s.data,
                     perm ? " (" : "", perm ? perm : "", perm ? ")" : "");
    const sturdy_design *d = r->design;
    if (d && d->min_cell < SMALL_CELL)
        tw_labelledf(w, "cell sizes", "the smallest cell has %zu row%s. → Such small cells "
                     "make every test fragile; add runs there if you can.", d->min_cell,
                     d->min_cell == 1 ? "" : "s");
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
    tw_nl(w);
}
