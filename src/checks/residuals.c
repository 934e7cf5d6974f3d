/* residuals.c — diagnostics of one response's residuals (normality, moments, equal
 * variances across cells, studentized outliers) and the verdict of each term. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "checks/checks.h"
#include "classical/classical.h"
#include "core/core.h"
#include "sturdy/diagnose.h"

/* Shapiro–Wilk (Royston 1995) is defined for 3 ≤ n ≤ 5000. */
#define SW_MAX_N 5000
/* The outlier test's level: a row is flagged when its Bonferroni-bounded p is at most
 * this (Cook & Weisberg 1982), so clean data raise a flag in at most this share of
 * datasets (tests/xcheck_outlier_rule.py measures it). */
#define OUTLIER_LEVEL 0.05
/* |externally studentized residual| above this lists a row among the largest residuals
 * (a common rule of thumb; it says nothing about errors without the Bonferroni bound). */
#define LARGE_RESIDUAL 3.0
/* Level at which a diagnostic test is called "failed" in verdict reasons (common
 * practice: 0.05, the same as the default alpha, independent of --alpha). */
#define DIAG_LEVEL 0.05

static sturdy_status note(char **slot, char *text, char *err)
{
    *slot = text;
    return text ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

/* A test's failure as its note, except running out of memory, which fails the run (a
 * report must not differ because memory was short). */
static sturdy_status test_note(sturdy_status st, char **slot, const char *msg, char *err)
{
    if (st == STURDY_EINTERNAL)
        return sturdy_fail(err, st, "%s", msg);
    return note(slot, sturdy_strdup(msg), err);
}

/* Every diagnostic's note when the residuals carry no information (no residual degrees
 * of freedom); the studentized residuals and leverages are NaN. */
static sturdy_status no_residual_df(sturdy_diagnostics *dg, size_t n, char *err)
{
    sturdy_status st;
    for (size_t i = 0; i < n; i++)
        dg->studentized[i] = dg->leverage[i] = NAN;
    const char *why = "no residual degrees of freedom: residuals carry no information";
    if ((st = note(&dg->sw_note, sturdy_strdup(why), err)) ||
        (st = note(&dg->bf_note, sturdy_strdup(why), err)) ||
        (st = note(&dg->bfm_note, sturdy_strdup(why), err)))
        return st;
    return note(&dg->vr_note, sturdy_strdup(why), err);
}

/* Shapiro–Wilk on the residuals, or the note saying why it is not given. */
static sturdy_status normality(sturdy_diagnostics *dg, const double *e, size_t n, char *err)
{
    char msg[STURDY_ERR_LEN];
    if (n > SW_MAX_N)
        return note(&dg->sw_note, sturdy_asprintf(
                        "Shapiro-Wilk is defined for 3 to %d rows and %zu are used; judge "
                        "normality from the skewness and excess kurtosis", SW_MAX_N, n), err);
    sturdy_status st = sturdy_shapiro_wilk(e, n, &dg->sw_w, &dg->sw_p, msg);
    if (st != STURDY_OK) {
        dg->sw_w = dg->sw_p = NAN;
        return test_note(st, &dg->sw_note, msg, err);
    }
    return STURDY_OK;
}

/* Both Brown–Forsythe tests across the cells, each with its note when undefined. */
static sturdy_status spread_tests(const sturdy_design *d, sturdy_diagnostics *dg,
                                  const double *e, char *err)
{
    char msg[STURDY_ERR_LEN];
    sturdy_status st;
    if ((st = sturdy_brown_forsythe(e, d->cell, d->n, d->ncells, &dg->bf_f, &dg->bf_df1,
                                    &dg->bf_df2, &dg->bf_p, msg)) != STURDY_OK) {
        dg->bf_f = dg->bf_df1 = dg->bf_df2 = dg->bf_p = NAN;
        if ((st = test_note(st, &dg->bf_note, msg, err)))
            return st;
    }
    if ((st = sturdy_brown_forsythe_modified(e, d->cell, d->n, d->ncells, &dg->bfm_f,
                                             &dg->bfm_df1, &dg->bfm_df2, &dg->bfm_p,
                                             msg)) != STURDY_OK) {
        dg->bfm_f = dg->bfm_df1 = dg->bfm_df2 = dg->bfm_p = NAN;
        if ((st = test_note(st, &dg->bfm_note, msg, err)))
            return st;
    }
    return STURDY_OK;
}

/* The ratio of the largest to the smallest cell variance (cells of at least two rows)
 * and the spread rule's verdict. */
static sturdy_status spread_rule(const sturdy_design *d, sturdy_response_result *resp,
                                 char *err)
{
    sturdy_diagnostics *dg = &resp->diag;
    double vmax = -1, vmin = INFINITY;
    for (size_t c = 0; c < d->ncells; c++) {
        double sd = resp->cell_sd[c];
        if (isnan(sd))
            continue;
        vmax = fmax(vmax, sd * sd);
        vmin = fmin(vmin, sd * sd);
    }
    /* The spread rule (README, "Unequal variances"): the Brown–Forsythe test
     * without structural zeros at DIAG_LEVEL — of the rules compared by simulation the one
     * that finds unequal spreads in small cells most often while firing on at most 10%
     * of equal-spread data, skewed and heavy-tailed included. Its firing rates are
     * measured by tests/xcheck_unequal_calibration.py. */
    if (!isnan(dg->bfm_p) && dg->bfm_p < DIAG_LEVEL) {
        dg->spread_differs = 1;
        if (vmax > 0 && vmin > 0)
            dg->spread_reason = sturdy_asprintf("Brown–Forsythe test without structural "
                                                "zeros p = %.2g; the largest cell SD is %.3g "
                                                "× the smallest", dg->bfm_p,
                                                sqrt(vmax / vmin));
        else
            dg->spread_reason = sturdy_asprintf("Brown–Forsythe test without structural "
                                                "zeros p = %.2g", dg->bfm_p);
        if (!dg->spread_reason)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    if (vmax < 0)
        return note(&dg->vr_note, sturdy_strdup("no cell has two rows"), err);
    if (!(vmin > 0))
        return note(&dg->vr_note, sturdy_strdup("a cell has zero variance"), err);
    dg->variance_ratio = vmax / vmin;
    return STURDY_OK;
}

/* Leverages, studentized residuals, the rows the outlier test flags and the other rows
 * beyond ±LARGE_RESIDUAL. The outlier test (Cook & Weisberg 1982, §2.2.2): under the
 * model the externally studentized residual t_i follows Student's t on n − p − 1 df, so
 * with a Bonferroni bound over the n rows a row is flagged when n·P(|T| ≥ |t_i|) ≤
 * OUTLIER_LEVEL. Comparing every row with ±3 instead flags some row in about a quarter
 * of clean normal datasets of 40 rows, since the number of rows looked at is ignored. */
static sturdy_status flag_outliers(const sturdy_design *d, const sturdy_model *m,
                                   sturdy_diagnostics *dg, const double *e, char *err)
{
    size_t n = d->n, k = 0, nl = 0;
    double *internal = sturdy_malloc(n * sizeof *internal);
    double *pb = sturdy_malloc(n * sizeof *pb);
    if (!internal || !pb) {
        sturdy_free(internal);
        sturdy_free(pb);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t i = 0; i < n; i++)
        dg->leverage[i] = m->leverage[d->group[i]];
    sturdy_studentize(e, dg->leverage, n, m->df_error, internal, dg->studentized);
    double dft = (double)m->df_error - 1.0;
    for (size_t i = 0; i < n; i++) {
        double t = dg->studentized[i];
        pb[i] = NAN;
        if (isnan(t) || !(dft >= 1.0))
            continue;
        /* P(|T| ≥ t) = P(F(1, df) ≥ t²) */
        pb[i] = fmin(1.0, (double)n * sturdy_f_sf(t * t, 1.0, dft));
        if (pb[i] <= OUTLIER_LEVEL) k++;
        else if (fabs(t) > LARGE_RESIDUAL) nl++;
    }
    dg->outliers = sturdy_calloc(k ? k : 1, sizeof *dg->outliers);
    dg->large = sturdy_calloc(nl ? nl : 1, sizeof *dg->large);
    if (!dg->outliers || !dg->large) {
        sturdy_free(internal);
        sturdy_free(pb);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t i = 0; i < n; i++) {
        int flag = pb[i] <= OUTLIER_LEVEL;
        if (!flag && !(fabs(dg->studentized[i]) > LARGE_RESIDUAL))
            continue;
        sturdy_outlier *o = flag ? &dg->outliers[dg->noutliers++] : &dg->large[dg->nlarge++];
        o->row = d->row[i] + 1;
        o->line = d->line[i];
        o->cell = d->cell[i];
        o->studentized = dg->studentized[i];
        o->internal = internal[i];
        o->leverage = dg->leverage[i];
        o->p_bonferroni = pb[i];
    }
    sturdy_free(internal);
    sturdy_free(pb);
    return STURDY_OK;
}

sturdy_status sturdy_diagnose_response(const sturdy_design *d, const sturdy_model *m,
                                       sturdy_response_result *resp, char *err)
{
    size_t n = d->n;
    sturdy_diagnostics *dg = &resp->diag;
    const double *e = resp->residual;
    sturdy_status st;
    dg->sw_w = dg->sw_p = dg->bf_f = dg->bf_df1 = dg->bf_df2 = dg->bf_p = NAN;
    dg->bfm_f = dg->bfm_df1 = dg->bfm_df2 = dg->bfm_p = NAN;
    dg->variance_ratio = NAN;
    dg->sw_w_rest = dg->sw_p_rest = NAN;
    dg->studentized = sturdy_malloc(n * sizeof *dg->studentized);
    dg->leverage = sturdy_malloc(n * sizeof *dg->leverage);
    if (!dg->studentized || !dg->leverage)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    sturdy_moments(e, n, &dg->skewness, &dg->excess_kurtosis);
    if (m->df_error == 0)
        return no_residual_df(dg, n, err);
    if ((st = normality(dg, e, n, err)) || (st = spread_tests(d, dg, e, err)) ||
        (st = spread_rule(d, resp, err)))
        return st;
    if ((st = flag_outliers(d, m, dg, e, err)))
        return st;
    return sturdy_bulk_normality(d, m, resp, err);
}

/* The diagnostic most likely behind a disagreement, as one line. */
static char *reason_from_diagnostics(const sturdy_response_result *resp,
                                     const sturdy_term_result *t)
{
    const sturdy_diagnostics *dg = &resp->diag;
    /* Unequal spreads first: they move F and its rearrangements together and also make
     * rows of the noisy cells look like outliers under the pooled SD. */
    if (dg->spread_differs)
        return sturdy_asprintf("cell variances differ (%s), which neither test allows for; "
                               "the unequal-variance test gives p = %.3g",
                               dg->spread_reason ? dg->spread_reason : "",
                               t->uv.p);
    /* Non-normal even without the flagged rows (bulk.c): the error distribution, not a
     * few gross rows, is the likely reason. */
    if (dg->noutliers > 0 && dg->sw_p_rest < DIAG_LEVEL)
        return sturdy_asprintf("residuals are not normal, even without the %zu row%s the "
                               "outlier test flags (Shapiro-Wilk p = %.2g without %s), so the "
                               "F distribution is only approximate",
                               dg->noutliers, dg->noutliers == 1 ? "" : "s", dg->sw_p_rest,
                               dg->noutliers == 1 ? "it" : "them");
    /* A gross error sways the F-test and its rearrangements alike (Freedman–Lane permutes
     * the same F), so the reason names the rows and claims no direction. */
    if (dg->noutliers > 0)
        return sturdy_asprintf("the outlier test flags %zu row%s (row %zu%s); a single gross "
                               "row can sway either test, so check %s and compare the "
                               "results without %s", dg->noutliers,
                               dg->noutliers == 1 ? "" : "s", dg->outliers[0].row,
                               dg->noutliers > 1 ? " and others" : "",
                               dg->noutliers == 1 ? "it" : "them",
                               dg->noutliers == 1 ? "it" : "them");
    if (dg->sw_p < DIAG_LEVEL)
        return sturdy_asprintf("residuals are not normal (Shapiro-Wilk p = %.2g, skewness "
                               "%.2f), so the F distribution is only approximate",
                               dg->sw_p, dg->skewness);
    return sturdy_asprintf("both p-values lie near alpha (F-test %.3g, permutation %.3g)",
                           t->p, t->p_perm);
}

sturdy_status sturdy_verdict_term(const sturdy_response_result *resp, sturdy_term_result *t,
                                  double alpha, char *err)
{
    t->verdict = STURDY_VERDICT_NONE;
    t->straddles = 0;
    if (isnan(t->p) || isnan(t->p_perm))
        return STURDY_OK;
    int classical = t->p <= alpha, resampling = t->p_perm <= alpha;
    t->verdict = classical && resampling   ? STURDY_VERDICT_BOTH
                 : !classical && !resampling ? STURDY_VERDICT_NEITHER
                 : classical                 ? STURDY_VERDICT_CLASSICAL_ONLY
                                             : STURDY_VERDICT_RESAMPLING_ONLY;
    t->straddles = t->p_perm_ci.lo <= alpha && alpha <= t->p_perm_ci.hi &&
                   t->p_perm_ci.lo < t->p_perm_ci.hi;
    char *reason = NULL;
    if (classical != resampling)
        reason = reason_from_diagnostics(resp, t);
    if (t->straddles) {
        char *more = sturdy_asprintf(
            "%s%sthe Monte Carlo interval of the permutation p [%.3g, %.3g] contains alpha; "
            "run more rearrangements", reason ? reason : "", reason ? "; " : "",
            t->p_perm_ci.lo, t->p_perm_ci.hi);
        sturdy_free(reason);
        reason = more;
        if (!reason)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    if ((classical != resampling) && !reason)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    sturdy_free(t->verdict_reason);
    t->verdict_reason = reason;
    return STURDY_OK;
}
