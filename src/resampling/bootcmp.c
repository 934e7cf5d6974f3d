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
 * Beran 1988).
 *
 * Unequal spreads. When the family's classical side is Games–Howell (the spread rule
 * fired and the cell means are the model's fit, compare.c) the band is built as the
 * unequal-variance tests of the main table are: a wild bootstrap of the residuals,
 * e*_i = s_i e_i/√(1 − h_i) with Rademacher signs s (Wu 1986; Davidson & Flachaire 2008;
 * the signs of the wild test's stream, whatever the run's scheme), and each difference
 * studentised by its own SE from the replicate's cell variances,
 *   t*_c = zᵀs* ÷ √(Σ_g z_g² s*_g²)   (z = Uw, the Games–Howell SE of the replicate),
 * taken on the p scale as in maxt.c (the Welch df of a family's differences differ):
 * the family's replicate value is max_c −ln p_c(t*_c), p_c the two-sided t tail at the
 * observed Welch df_c; with L its conf-quantile each difference gets the multiplier
 * t_{df_c} quantile at two-sided level e^−L, so the band is estimate ± mult_c·SE_GH
 * (single-step min-p inverted; Westfall & Young 1993, §2.6). A pooled-SE band
 * under a residual resample spreads one pooled error law over every cell, which
 * under-covers the differences of the noisy cells (docs/compare_study.md).
 *
 * Adjusted p. The same replicate maxima give each comparison a single-step max-T p,
 * p_boot_adjusted = (1 + #{b : M*_b ≥ m}) / (B + 1), m the observed statistic on the
 * maxima's scale (|t| pooled, −ln p at its Welch df under Games–Howell) and B the
 * family's finite replicates: the band's inverse up to the replicates' discreteness.
 * The replicates are centred on the observed estimates, so this needs no null model;
 * under unequal spreads it is the resampling adjusted p to quote, as the permutation
 * max-T (maxt.c) moves rows between cells of unequal spread and is only approximate. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/bootcmp.h"
#include "resampling/maxt.h"
#include "core/core.h"
#include "resampling/resampling.h"
#include "sturdy/dist.h"
#include "sturdy/pcg.h"

/* Does the response studentise its comparisons by their own (Games–Howell) SE? */
static int het_family(const sturdy_response_result *resp)
{
    for (size_t i = 0; i < resp->ncomparisons; i++)
        if (resp->comparisons[i].method == STURDY_ADJ_GAMES_HOWELL)
            return 1;
    return 0;
}

/* The replicate sweeps' tables (result.h: cmp_wt, cmp_init, cmp_z2t). A sweep adds each
 * sum's terms in the order the plain loop over a (or k) adds them, from the same start,
 * so the bits are the same; the sums are independent, so they no longer wait on each
 * other (the plain loops were one dot product at a time, bound by the adds' latency). */
static sturdy_status pack(const sturdy_model *m, sturdy_response_result *rr, char *err)
{
    size_t K = m->K, rank = m->rank, nc = rr->ncomparisons;
    size_t np = (nc + rr->nmeans + 3) & ~(size_t)3;
    rr->cmp_np = np;
    rr->cmp_wt = sturdy_calloc(rank * np + 1, sizeof *rr->cmp_wt);
    rr->cmp_init = sturdy_calloc(np + 1, sizeof *rr->cmp_init);
    int het = het_family(rr);
    rr->cmp_z2t = het ? sturdy_calloc(K * np + 1, sizeof *rr->cmp_z2t) : NULL;
    if (!rr->cmp_wt || !rr->cmp_init || (het && !rr->cmp_z2t))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t i = 0; i < nc; i++) {
        const sturdy_comparison *c = &rr->comparisons[i];
        for (size_t a = 0; c->w && a < rank; a++)
            rr->cmp_wt[a * np + i] = c->w[a];
        for (size_t k = 0; het && c->w && k < K; k++) {   /* z = U·w, as before */
            double v = 0.0;
            for (size_t a = 0; a < rank; a++)
                v += m->U[a * K + k] * c->w[a];
            rr->cmp_z2t[k * np + i] = v * v;
        }
    }
    for (size_t i = 0; i < rr->nmeans; i++) {
        const sturdy_mean_result *mr = &rr->means[i];
        for (size_t a = 0; mr->w && a < rank; a++)
            rr->cmp_wt[a * np + nc + i] = mr->w[a];
        rr->cmp_init[nc + i] = mr->w ? mr->estimate : 0.0;
    }
    return STURDY_OK;
}

/* acc[j] = init[j] + Σ_a t[a·np + j]·x[a] for j < np, a < rows, each sum in order of a. */
static void sweep(const double *restrict t, const double *restrict init, size_t np,
                  size_t rows, const double *restrict x, double *restrict acc)
{
    for (size_t j = 0; j < np; j++)
        acc[j] = init ? init[j] : 0.0;
    for (size_t a = 0; a < rows; a++) {
        const double *ta = t + a * np;
        double xa = x[a];
        for (size_t j = 0; j < np; j += 4) {
            acc[j] += ta[j] * xa;
            acc[j + 1] += ta[j + 1] * xa;
            acc[j + 2] += ta[j + 2] * xa;
            acc[j + 3] += ta[j + 3] * xa;
        }
    }
}

size_t sturdy_bootcmp_work(const sturdy_result *r)
{
    size_t most = 0;
    for (size_t ri = 0; ri < r->nresp; ri++)
        if (r->resp[ri].cmp_wt && 2 * r->resp[ri].cmp_np > most)
            most = 2 * r->resp[ri].cmp_np;
    return most;
}

sturdy_status sturdy_bootcmp_alloc(const sturdy_run *run, const sturdy_model *m,
                                   sturdy_result *r, char *err)
{
    sturdy_status st;
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
        if ((st = pack(m, rr, err)))
            return st;
        size_t cnt = (size_t)run->nboot * cols;
        if (!(rr->cmp_boot = sturdy_malloc(cnt * sizeof *rr->cmp_boot)))
            return sturdy_fail(err, STURDY_EINTERNAL,
                               "out of memory for the comparisons' bootstrap replicates");
        for (size_t k = 0; k < cnt; k++)
            rr->cmp_boot[k] = NAN;
    }
    return STURDY_OK;
}

/* Row b's family maxima under the wild resample with own-SE studentisation. */
static void het_replicate(const sturdy_design *d, const sturdy_model *m,
                          const sturdy_response_result *resp, uint64_t seed, uint64_t b,
                          signed char *sign, double *work, double *row)
{
    size_t n = d->n, K = m->K, rank = m->rank;
    double *A = work + rank, *V = A + K;   /* cell sums of e*, then cell variances */
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, seed, STURDY_STREAM_WILD_TEST, b);
    sturdy_pcg_signs(&g, sign, n);
    for (size_t k = 0; k < K; k++)
        A[k] = V[k] = 0.0;
    for (size_t i = 0; i < n; i++) {
        size_t k = d->group[i];
        double a = resp->residual[i] / sqrt(1.0 - m->leverage[k]);
        A[k] += sign[i] * a;
        V[k] += a * a;                     /* (s_i a_i)² = a_i² */
    }
    for (size_t k = 0; k < K; k++) {
        double nk = (double)d->group_count[k];
        V[k] = nk >= 2 ? (V[k] - A[k] * A[k] / nk) / (nk - 1.0) : 0.0;
        A[k] /= m->sqrt_count[k];          /* scaled sums, as sr */
    }
    sturdy_dot_rows(m->U, K, rank, A, work);
    double *est = V + K, *var = est + resp->cmp_np;
    sweep(resp->cmp_wt, NULL, resp->cmp_np, rank, work, est);
    sweep(resp->cmp_z2t, NULL, resp->cmp_np, K, V, var);
    for (size_t i = 0; i < resp->ncomparisons; i++) {
        const sturdy_comparison *c = &resp->comparisons[i];
        if (!c->w || !isfinite(c->t))
            continue;
        double e = est[i], v = var[i];
        double t2 = v > 0 ? e * e / v : (e != 0 ? INFINITY : 0.0);
        sturdy_maxt_fold_lp(t2, c->df, &row[c->family]);
    }
}

void sturdy_bootcmp_replicate(const sturdy_design *d, const sturdy_model *m,
                              sturdy_response_result *resp, uint64_t seed, uint64_t b,
                              const double *sr, double sse, signed char *sign, double *work)
{
    if (!resp->cmp_boot)
        return;
    size_t K = m->K, rank = m->rank, cols = sturdy_bootcmp_cols(resp);
    double *row = resp->cmp_boot + b * cols;
    for (size_t f = 0; f < resp->nfamilies; f++)
        row[f] = -1.0;
    int het = het_family(resp);
    if (het)
        het_replicate(d, m, resp, seed, b, sign, work, row);
    sturdy_dot_rows(m->U, K, rank, sr, work);
    /* every comparison's and mean's replicate estimate at once */
    double *est = work + rank + 2 * K;
    sweep(resp->cmp_wt, resp->cmp_init, resp->cmp_np, rank, work, est);
    double sigma = sqrt(sse / (double)m->df_error);
    for (size_t i = 0; i < resp->ncomparisons && !het; i++) {
        const sturdy_comparison *c = &resp->comparisons[i];
        if (!c->w || !isfinite(c->t_pooled))
            continue;
        double e = est[i];
        double t = sigma > 0 ? fabs(e) / (sigma * c->w_norm) : (e != 0 ? INFINITY : 0.0);
        if (t > row[c->family])
            row[c->family] = t;
    }
    for (size_t f = 0; f < resp->nfamilies; f++)
        if (row[f] < 0)
            row[f] = NAN;
    for (size_t i = 0; i < resp->nmeans; i++) {
        const sturdy_mean_result *mr = &resp->means[i];
        row[resp->nfamilies + i] = mr->w ? est[resp->ncomparisons + i] : NAN;
    }
}

/* The finite values of column j of the replicate rows, sorted, into buf; their count. */
static size_t column(const sturdy_result *r, const sturdy_response_result *rr, size_t j,
                     double *buf, double *scratch)
{
    size_t cols = sturdy_bootcmp_cols(rr), k = 0;
    for (uint64_t b = 0; b < r->nboot; b++) {
        double v = rr->cmp_boot[b * cols + j];
        if (!isnan(v))
            buf[k++] = v;
    }
    sturdy_sort_doubles(buf, k, scratch);
    return k;
}

/* Single-step max-T adjusted p of an observed statistic m from the k sorted finite
 * replicate maxima of its family: (1 + #{M* ≥ m}) / (k + 1), with the permutation
 * engine's tie rule (M* ≥ m(1 − STURDY_TIE_RTOL)). The replicates are centred (each is
 * a deviation from the observed estimate), so this is the band's inverse: with q the
 * conf-quantile of the same maxima, p ≤ 1 − conf implies m > q (the band excludes 0),
 * and m > q implies p ≤ 1 − conf + 2/(k + 1) (Westfall & Young 1993, §2.6). */
static double adjusted_p(const double *sorted, size_t k, double m)
{
    double cut = isinf(m) ? m : m * (1.0 - STURDY_TIE_RTOL);
    size_t lo = 0, hi = k;                 /* first index with sorted[i] ≥ cut */
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (sorted[mid] >= cut)
            hi = mid;
        else
            lo = mid + 1;
    }
    return (1.0 + (double)(k - lo)) / (1.0 + (double)k);
}

sturdy_status sturdy_bootcmp_finish(sturdy_result *r, char *err)
{
    double conf = r->opts.conf;
    double *buf = sturdy_malloc(2 * (r->nboot + 1) * sizeof *buf);  /* values, scratch */
    if (!buf)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    double *scratch = buf + r->nboot + 1;
    for (size_t ri = 0; ri < r->nresp; ri++) {
        sturdy_response_result *rr = &r->resp[ri];
        if (!rr->cmp_boot)
            continue;
        for (size_t i = 0; i < rr->nmeans; i++) {
            size_t k = column(r, rr, rr->nfamilies + i, buf, scratch);
            if (k >= 2) {
                rr->means[i].ci_boot.lo = sturdy_quantile_sorted(buf, k, 0.5 - 0.5 * conf);
                rr->means[i].ci_boot.hi = sturdy_quantile_sorted(buf, k, 0.5 + 0.5 * conf);
            }
        }
        int het_resp = het_family(rr);
        for (size_t f = 0; f < rr->nfamilies; f++) {
            size_t k = column(r, rr, f, buf, scratch);
            if (k < 2)
                continue;
            double q = sturdy_quantile_sorted(buf, k, conf);
            for (size_t i = 0; i < rr->ncomparisons; i++) {
                sturdy_comparison *c = &rr->comparisons[i];
                if (c->family != f || !c->w)
                    continue;
                /* the adjusted p: the observed statistic on the scale of the replicate
                   maxima (the members sturdy_bootcmp_replicate takes the maximum over) */
                double mobs = het_resp ? (isfinite(c->t) ? -log(sturdy_f_sf(c->t * c->t, 1.0,
                                                                            c->df))
                                                         : NAN)
                                       : fabs(c->t_pooled);
                if (!isnan(mobs))
                    c->p_boot_adjusted = adjusted_p(buf, k, mobs);
                if (!isfinite(c->t_pooled))
                    continue;
                int het = c->method == STURDY_ADJ_GAMES_HOWELL;
                double se = het ? c->se : c->se_pooled;
                double mult = het ? sqrt(sturdy_f_isf(exp(-q), 1.0, c->df)) : q;
                if (!isfinite(se) || !isfinite(mult))
                    continue;
                c->ci_boot_simultaneous.lo = c->estimate - mult * se;
                c->ci_boot_simultaneous.hi = c->estimate + mult * se;
            }
        }
    }
    sturdy_free(buf);
    return STURDY_OK;
}
