/* bulk.c — is the residuals' non-normality in a few flagged rows or in the bulk? The
 * Shapiro–Wilk test of the residuals refitted without the rows the outlier test flags.
 *
 * A gross recording error makes the residuals non-normal through one or two rows: without
 * them the rest look normal, and the advice is to check those rows (a gross error sways the
 * F-test and its rearrangements alike). A skewed or heavy-tailed error distribution also
 * gets rows flagged — its tail — but stays non-normal without them; Freedman–Lane keeps
 * its level under such errors of equal spread, so the resampling column is the one to
 * read. The residuals without the set S are exact, not refitted: for the other rows,
 * e(−S) = e + H_{·S}(I − H_SS)⁻¹e_S (Cook & Weisberg 1982, §3.6), with H in group space
 * (fit.h). */
#include <math.h>
#include <string.h>

#include "checks/checks.h"
#include "core/core.h"
#include "sturdy/diagnose.h"

/* At most this many flagged rows are set aside; more is a distribution, not a few errors
 * (and the Cholesky below stays small). */
#define BULK_MAX 10
/* A pivot of I − H_SS at or below this: the set takes a dimension of the model with it. */
#define BULK_PIVOT_TOL STURDY_LEVERAGE_ONE_TOL

static double hat(const sturdy_model *m, size_t gi, size_t gj)
{
    double s = 0.0;
    for (size_t c = 0; c < m->rank; c++) s += m->U[c * m->K + gi] * m->U[c * m->K + gj];
    return s / (m->sqrt_count[gi] * m->sqrt_count[gj]);
}

sturdy_status sturdy_bulk_normality(const sturdy_design *d, const sturdy_model *m,
                                    sturdy_response_result *resp, char *err)
{
    sturdy_diagnostics *dg = &resp->diag;
    size_t n = d->n, k = dg->noutliers, S[BULK_MAX];
    dg->sw_w_rest = dg->sw_p_rest = NAN;
    if (k == 0 || k > BULK_MAX || n < k + 3 || n - k > 5000) return STURDY_OK;
    for (size_t j = 0, i = 0; j < k; j++) {
        while (i < n && d->row[i] + 1 != dg->outliers[j].row) i++;
        if (i == n) return STURDY_OK;      /* outliers are listed in row order */
        S[j] = i;
    }
    double A[BULK_MAX * BULK_MAX], b[BULK_MAX];
    for (size_t a = 0; a < k; a++) {
        b[a] = resp->residual[S[a]];
        for (size_t c = 0; c <= a; c++)
            A[a * k + c] = (a == c) - hat(m, d->group[S[a]], d->group[S[c]]);
    }
    /* (I − H_SS)⁻¹ e_S */
    if (!sturdy_cholesky_solve(A, k, b, BULK_PIVOT_TOL)) return STURDY_OK;
    double *rest = sturdy_malloc((n - k) * sizeof *rest);
    if (!rest) return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    size_t r = 0;
    for (size_t i = 0, j = 0; i < n; i++) {
        if (j < k && S[j] == i) {
            j++;
            continue;
        }
        double x = resp->residual[i];
        for (size_t a = 0; a < k; a++) x += hat(m, d->group[i], d->group[S[a]]) * b[a];
        rest[r++] = x;
    }
    char msg[STURDY_ERR_LEN];
    sturdy_status st = sturdy_shapiro_wilk(rest, r, &dg->sw_w_rest, &dg->sw_p_rest, msg);
    sturdy_free(rest);
    if (st == STURDY_EINTERNAL) return sturdy_fail(err, st, "%s", msg);
    if (st) dg->sw_w_rest = dg->sw_p_rest = NAN;
    return STURDY_OK;
}
