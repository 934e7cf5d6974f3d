/* bootcmp.c — bootstrap intervals for the marginal means and simultaneous bootstrap
 * intervals for each term's family of comparisons, computed inside the effect-size
 * bootstrap's replicates (bootstrap.c calls sturdy_bootcmp_replicate), so the run's
 * scheme (residual, wild or cells) and its streams serve both.
 *
 * A replicate is y* = f + r* with f the fitted values; a contrast's replicate estimate
 * is wᵀQᵀy* = estimate + wᵀUᵀs_r (s_r: scaled group sums of r*), and its pooled SE
 * σ*‖w‖ with σ*² = SSE* ÷ df_error. Means: the percentile interval of their replicate
 * values. Comparisons: the bootstrap-t maximum over the family, M* = max |wᵀUᵀs_r| /
 * (σ*‖w‖), whose conf-quantile q gives estimate ± q·SE for every comparison of the
 * family at once (the max-|t| simultaneous band; Westfall & Young 1993, §2.6;
 * Beran 1988). Studentising by the pooled SE keeps the band valid under the wild scheme
 * with unequal spreads (the resamples keep each row's spread), though not the narrowest. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/bootcmp.h"
#include "core/core.h"

sturdy_status sturdy_bootcmp_alloc(const sturdy_run *run, const sturdy_model *m,
                                   sturdy_result *r, char *err)
{
    for (size_t ri = 0; ri < r->nresp; ri++) {
        sturdy_response_result *rr = &r->resp[ri];
        size_t cols = sturdy_bootcmp_cols(rr);
        const char *why = run->nboot == 0 || m->df_error == 0
                              ? "no bootstrap replicates were made"
                              : NULL;
        if (why) {
            if (!rr->cmp_boot_note && !(rr->cmp_boot_note = sturdy_strdup(why)))
                return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
            continue;
        }
        if (cols == 0)
            continue;
        size_t cnt = (size_t)run->nboot * cols;
        if (!(rr->cmp_boot = sturdy_malloc(cnt * sizeof *rr->cmp_boot)))
            return sturdy_fail(err, STURDY_EINTERNAL,
                               "out of memory for the comparisons' bootstrap replicates");
        for (size_t k = 0; k < cnt; k++)
            rr->cmp_boot[k] = NAN;
    }
    return STURDY_OK;
}

void sturdy_bootcmp_replicate(const sturdy_model *m, sturdy_response_result *resp,
                              uint64_t b, const double *sr, double sse, double *work)
{
    if (!resp->cmp_boot)
        return;
    size_t K = m->K, rank = m->rank, cols = sturdy_bootcmp_cols(resp);
    double *row = resp->cmp_boot + b * cols;
    for (size_t a = 0; a < rank; a++) {
        double u = 0.0;
        for (size_t g = 0; g < K; g++)
            u += m->U[a * K + g] * sr[g];
        work[a] = u;
    }
    double sigma = sqrt(sse / (double)m->df_error);
    for (size_t f = 0; f < resp->nfamilies; f++)
        row[f] = -1.0;
    for (size_t i = 0; i < resp->ncomparisons; i++) {
        const sturdy_comparison *c = &resp->comparisons[i];
        if (!c->w || !isfinite(c->t_pooled))
            continue;
        double d = 0.0, ww = 0.0;
        for (size_t a = 0; a < rank; a++) {
            d += c->w[a] * work[a];
            ww += c->w[a] * c->w[a];
        }
        double t = sigma > 0 ? fabs(d) / (sigma * sqrt(ww)) : (d != 0 ? INFINITY : 0.0);
        if (t > row[c->family])
            row[c->family] = t;
    }
    for (size_t f = 0; f < resp->nfamilies; f++)
        if (row[f] < 0)
            row[f] = NAN;
    for (size_t i = 0; i < resp->nmeans; i++) {
        const sturdy_mean_result *mr = &resp->means[i];
        double v = NAN;
        if (mr->w) {
            v = mr->estimate;
            for (size_t a = 0; a < rank; a++)
                v += mr->w[a] * work[a];
        }
        row[resp->nfamilies + i] = v;
    }
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Quantile with linear interpolation between order statistics, position (B−1)·q
 * (Hyndman & Fan 1996, definition 7), as the effect sizes' percentile intervals. */
static double quantile_sorted(const double *x, size_t B, double q)
{
    double pos = q * (double)(B - 1);
    size_t lo = (size_t)floor(pos);
    if (lo + 1 >= B)
        return x[B - 1];
    double frac = pos - (double)lo;
    return x[lo] + frac * (x[lo + 1] - x[lo]);
}

/* The finite values of column j of the replicate rows, sorted, into buf; their count. */
static size_t column(const sturdy_result *r, const sturdy_response_result *rr, size_t j,
                     double *buf)
{
    size_t cols = sturdy_bootcmp_cols(rr), k = 0;
    for (uint64_t b = 0; b < r->nboot; b++) {
        double v = rr->cmp_boot[b * cols + j];
        if (!isnan(v))
            buf[k++] = v;
    }
    qsort(buf, k, sizeof *buf, cmp_double);
    return k;
}

sturdy_status sturdy_bootcmp_finish(sturdy_result *r, char *err)
{
    double conf = r->opts.conf;
    double *buf = sturdy_malloc((r->nboot + 1) * sizeof *buf);
    if (!buf)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t ri = 0; ri < r->nresp; ri++) {
        sturdy_response_result *rr = &r->resp[ri];
        if (!rr->cmp_boot)
            continue;
        for (size_t i = 0; i < rr->nmeans; i++) {
            size_t k = column(r, rr, rr->nfamilies + i, buf);
            if (k >= 2) {
                rr->means[i].ci_boot.lo = quantile_sorted(buf, k, 0.5 - 0.5 * conf);
                rr->means[i].ci_boot.hi = quantile_sorted(buf, k, 0.5 + 0.5 * conf);
            }
        }
        for (size_t f = 0; f < rr->nfamilies; f++) {
            size_t k = column(r, rr, f, buf);
            if (k < 2)
                continue;
            double q = quantile_sorted(buf, k, conf);
            for (size_t i = 0; i < rr->ncomparisons; i++) {
                sturdy_comparison *c = &rr->comparisons[i];
                if (c->family != f || !c->w || !isfinite(c->t_pooled))
                    continue;
                c->ci_boot_simultaneous.lo = c->estimate - q * c->se_pooled;
                c->ci_boot_simultaneous.hi = c->estimate + q * c->se_pooled;
            }
        }
    }
    sturdy_free(buf);
    return STURDY_OK;
}
