/* testinv.c — the bootstrap test-inversion interval of a term's noncentrality: the
 * endpoints of the scale s of the term's effect at which the bootstrap test of F stops
 * rejecting, exactly, from the replicates' (vᵀu*, ‖u*‖², SSE*).
 *
 * The noncentral-F interval (Steiger 2004) with the normal-theory distribution of F
 * replaced by its residual-bootstrap distribution. In the bootstrap world whose term
 * effect is scaled by s ≥ 0, replicate b's statistic reaches the observed F exactly when
 * q_b(s) = A s² + 2 β_b s + γ_b ≥ 0, with A = ‖v‖² = SS, β_b = vᵀu*_b and
 * γ_b = ‖u*_b‖² − (SS/SSE)·SSE*_b: an upward parabola, short of F only strictly between
 * its real roots. So the count N(s) = #{b : F*_b(s) ≥ F} is a step function of s whose
 * steps lie at the roots, known exactly for every s from one set of replicates. With the
 * segments [t_i, t_{i+1}) of constant count V_i (t_0 = 0; roots at one location merged):
 *   s_lo = inf{s ≥ 0 : N(s) > α_lo·B}       (start of the first such segment; 0 when the
 *                                            null world is not rejected),
 *   s_hi = sup{s ≥ 0 : N(s) < (1 − α_hi)·B} (end of the last such segment; when there is
 *                                            none the interval is [0, 0], Steiger's
 *                                            convention for an F below its lower tail).
 * No interpolation: both ends are roots of replicate parabolas, and the counts are
 * compared as integers, so the rule is exact and independent of how the replicates were
 * split among threads or shards. tests/ref_testinv.py is an independent numpy version. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>

#include "resampling/resampling.h"
#include "core/core.h"

typedef struct {
    double at;                   /* a root s > 0 */
    int step;                    /* −1: the replicate falls short from here; +1: reaches */
} root_event;

static int cmp_event(const void *a, const void *b)
{
    double x = ((const root_event *)a)->at, y = ((const root_event *)b)->at;
    return (x > y) - (x < y);
}

sturdy_status sturdy_testinv_endpoints(const double *rows, size_t stride, uint64_t nrows,
                                       double A, double k, double alpha_lo, double alpha_hi,
                                       sturdy_testinv *out, char *err)
{
    assert(stride >= 3);
    out->s_lo = out->s_hi = NAN;
    out->used = 0;
    out->null_count = 0;
    if (!(A >= 0) || !isfinite(A) || !isfinite(k))
        return STURDY_OK;
    root_event *ev = sturdy_malloc((2 * (size_t)nrows + 1) * sizeof *ev);
    if (!ev)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    uint64_t B = 0, short0 = 0, reach_flat = 0;
    size_t ne = 0;
    for (uint64_t b = 0; b < nrows; b++) {
        const double *x = rows + (size_t)b * stride;
        double beta = x[0], uu = x[1], sse = x[2];
        if (!isfinite(beta) || !isfinite(uu) || !isfinite(sse))
            continue;
        B++;
        double gamma = uu - k * sse;
        if (A == 0) {            /* no effect observed: F*(s) does not depend on s */
            reach_flat += gamma >= 0;
            continue;
        }
        double disc = beta * beta - A * gamma;
        if (!(disc > 0))
            continue;
        double sq = sqrt(disc);
        double r1 = (-beta - sq) / A, r2 = (-beta + sq) / A;
        if (r1 <= 0 && r2 > 0)
            short0++;
        if (r1 > 0)
            ev[ne++] = (root_event){ r1, -1 };
        if (r2 > 0)
            ev[ne++] = (root_event){ r2, +1 };
    }
    out->used = B;
    if (B == 0) {
        sturdy_free(ev);
        return STURDY_OK;
    }
    qsort(ev, ne, sizeof *ev, cmp_event);
    double thr_lo = alpha_lo * (double)B, thr_hi = (1 - alpha_hi) * (double)B;
    int64_t V = A == 0 ? (int64_t)reach_flat : (int64_t)(B - short0);
    out->null_count = (uint64_t)V;
    double t = 0.0, lo = NAN, hi = NAN;
    int have_hi = 0;
    for (size_t i = 0;;) {
        /* the segment [t, next) has the count V */
        double next = i < ne ? ev[i].at : INFINITY;
        if (isnan(lo) && (double)V > thr_lo)
            lo = t;
        if ((double)V < thr_hi) {
            hi = next;
            have_hi = 1;
        }
        if (i >= ne)
            break;
        int64_t step = 0;
        while (i < ne && ev[i].at == next)
            step += ev[i++].step;
        t = next;
        V += step;
    }
    sturdy_free(ev);
    if (!have_hi) {
        out->s_lo = out->s_hi = 0.0;
        return STURDY_OK;
    }
    if (isnan(lo))               /* not reached for A > 0: the last count is B */
        lo = t;
    out->s_lo = lo < hi ? lo : hi;
    out->s_hi = hi;
    return STURDY_OK;
}

/* ---- the studentized test inversion ------------------------------------------------
 *
 * The test inversion above inverts F, whose bootstrap distribution carries the residuals'
 * kurtosis only as the sample shows it; under skewed or heavy-tailed errors the error
 * mean square's spread is underrepresented and the lower end runs high (the project's
 * calibration study, docs/interval_study.md). Studentizing brings in the missing piece:
 * for a hypothesised noncentrality λ the statistic is
 *   T(λ; SS, MSE, κ) = [ln(SS/MSE) − ln(λ + df1)] / √V(λ, κ),
 *   V(λ, κ) = (4λ + 2·df1)/(λ + df1)² + (2·df2 + κ·C2)/df2²,
 * the delta-method variance of ln SS (noncentral χ²) plus that of ln MSE with the errors'
 * excess kurtosis κ (C2 = Σ(1 − h_i)²). The data's T uses the residuals' κ̂, each
 * replicate its own κ*_b; in the world of noncentrality λ the effect scale is
 * s = √(λ σ²_w / A) and SS*_b(λ) = s²A + 2sβ_b + w_b exactly, as above. λ is accepted
 * when T*_(⌊α_hi B⌋+1) ≤ T_obs(λ) ≤ T*_(B − ⌊α_lo B⌋) (order statistics of the B
 * replicates at λ; counted, not sorted). The interval is the hull of the accepted λ on a grid (quadratic over
 * [0, λ_max], plus points across the plain test inversion's interval), each end refined
 * by bisection of the accept predicate between its neighbouring grid points. Every step
 * reads the replicates in index order, so the ends do not depend on how the replicates
 * were split among threads or shards. tests/ref_sti.py is an independent numpy version. */

#define STI_GRID 32              /* quadratic grid points over [0, λ_max] */
#define STI_TI_GRID 16           /* linear points across the plain test inversion */
#define STI_BISECT 80            /* bisection steps at most per end */

typedef struct {
    const sturdy_sti_params *p;
    size_t B;
    const double *beta, *w, *lmse, *dv;  /* per replicate: vᵀu*, ‖u*‖², ln MSE*, κ part of V */
    size_t k_lo, k_hi;                   /* ⌊α_lo B⌋, ⌊α_hi B⌋ */
    double lss_obs, dv_obs;
} sti_ctx;

/* 0 when λ is accepted; +1 when rejected as too small (the data's statistic lies above
 * the world's upper quantile), −1 as too large */
static int sti_verdict(sti_ctx *c, double lam)
{
    const sturdy_sti_params *p = c->p;
    double s = sqrt(lam * p->world_var / p->A), L = log(lam + p->df1);
    double v1 = (4 * lam + 2 * p->df1) / ((lam + p->df1) * (lam + p->df1));
    double t_obs = (c->lss_obs - L) / sqrt(v1 + c->dv_obs);
    size_t at_most = 0, at_least = 0;   /* replicates with T* ≤ T_obs, T* ≥ T_obs */
    for (size_t b = 0; b < c->B; b++) {
        double ss = s * s * p->A + 2 * s * c->beta[b] + c->w[b];
        /* ‖s·v + u*‖² ≥ 0; rounding can leave a tiny negative */
        double l = ss > 0 ? log(ss) : -INFINITY;
        double t = (l - c->lmse[b] - L) / sqrt(v1 + c->dv[b]);
        at_most += t <= t_obs;
        at_least += t >= t_obs;
        /* both order statistics already on the accepting side: the rest cannot change
           the verdict (most λ inside the interval end here after a few replicates) */
        if (at_least > c->k_lo && at_most > c->k_hi)
            return 0;
    }
    /* q_hi = T*_(B − k_lo) ≥ T_obs ⇔ at least k_lo + 1 replicates reach T_obs;
       q_lo = T*_(k_hi + 1) ≤ T_obs ⇔ at least k_hi + 1 replicates stay at or below it */
    return at_least < c->k_lo + 1 ? 1 : at_most < c->k_hi + 1 ? -1 : 0;
}

static int sti_accepts(sti_ctx *c, double lam) { return sti_verdict(c, lam) == 0; }

/* the boundary between a rejected and an accepted λ (either order), by bisection */
static double sti_boundary(sti_ctx *c, double rejected, double accepted)
{
    for (int k = 0; k < STI_BISECT; k++) {
        double mid = 0.5 * (rejected + accepted);
        if (fabs(accepted - rejected) <= 1e-12 * fmax(1.0, fabs(accepted)) ||
            mid == rejected || mid == accepted)
            break;
        if (sti_accepts(c, mid))
            accepted = mid;
        else
            rejected = mid;
    }
    return 0.5 * (rejected + accepted);
}

sturdy_status sturdy_sti_endpoints(const double *rows, size_t stride, uint64_t nrows,
                                   const sturdy_sti_params *p, sturdy_sti *out, char *err)
{
    assert(stride >= 4);
    out->lam_lo = out->lam_hi = NAN;
    out->used = 0;
    if (!(p->A > 0) || !isfinite(p->A) || !(p->mse > 0) || !isfinite(p->kappa) ||
        !(p->world_var > 0) || !(p->df1 > 0) || !(p->df2 > 0) || !(p->c2 >= 0) ||
        !(p->alpha_lo > 0) || !(p->alpha_hi > 0) || !(p->alpha_lo + p->alpha_hi < 1))
        return STURDY_OK;
    size_t n = (size_t)nrows;
    double *mem = sturdy_malloc((4 * n + 1) * sizeof *mem);
    double *grid = sturdy_malloc((STI_GRID + STI_TI_GRID + 1) * sizeof *grid);
    if (!mem || !grid) {
        sturdy_free(mem);
        sturdy_free(grid);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    sti_ctx c = { p, 0, mem, mem + n, mem + 2 * n, mem + 3 * n, 0, 0, 0, 0 };
    double *beta = mem, *w = mem + n, *lmse = mem + 2 * n, *dv = mem + 3 * n;
    double df2sq = p->df2 * p->df2;
    for (size_t b = 0; b < n; b++) {
        const double *x = rows + b * stride;
        if (!isfinite(x[0]) || !isfinite(x[1]) || !(x[2] > 0) || !isfinite(x[2]) ||
            !isfinite(x[3]))
            continue;
        beta[c.B] = x[0];
        w[c.B] = x[1];
        lmse[c.B] = log(x[2] / p->df2);
        dv[c.B] = (2 * p->df2 + x[3] * p->c2) / df2sq;
        c.B++;
    }
    out->used = c.B;
    /* the tails' replicate counts, ⌊α·B⌋ (guarded against 0.005·2000 = 9.999…) */
    size_t k_lo = (size_t)floor(p->alpha_lo * (double)c.B + 1e-9);
    size_t k_hi = (size_t)floor(p->alpha_hi * (double)c.B + 1e-9);
    if (c.B < 2 || k_lo + k_hi >= c.B) {
        sturdy_free(mem);
        sturdy_free(grid);
        return STURDY_OK;
    }
    c.k_lo = k_lo;
    c.k_hi = k_hi;
    c.lss_obs = log(p->A / p->mse);
    c.dv_obs = (2 * p->df2 + p->kappa * p->c2) / df2sq;
    double lam_max = fmax(60.0, 4.0 * (isfinite(p->ti_hi) ? p->ti_hi : 0.0));
    double lo = NAN, hi = NAN;
    for (int round = 0; round < 40; round++, lam_max *= 2) {
        size_t ng = 0;
        for (int k = 0; k < STI_GRID; k++) {
            double u = (double)k / (STI_GRID - 1);
            grid[ng++] = lam_max * u * u;
        }
        if (isfinite(p->ti_lo) && isfinite(p->ti_hi) && p->ti_hi <= lam_max)
            for (int k = 0; k < STI_TI_GRID; k++)
                grid[ng++] = p->ti_lo + (p->ti_hi - p->ti_lo) * (k + 0.5) / STI_TI_GRID;
        qsort(grid, ng, sizeof *grid, sturdy_cmp_double);
        size_t first = ng, last = ng;
        for (size_t k = 0; k < ng; k++)
            if (sti_accepts(&c, grid[k])) {
                if (first == ng) first = k;
                last = k;
            }
        if (first == ng) {
            /* nothing accepted: widen while the largest λ is still too small, else
               Steiger's [0, 0] */
            if (sti_verdict(&c, lam_max) > 0)
                continue;
            lo = hi = 0.0;
            break;
        }
        if (last == ng - 1)      /* accepted at λ_max: widen */
            continue;
        lo = first == 0 ? 0.0 : sti_boundary(&c, grid[first - 1], grid[first]);
        hi = sti_boundary(&c, grid[last + 1], grid[last]);
        break;
    }
    if (isnan(lo)) {             /* still accepted at the largest λ tried */
        lo = NAN;
        hi = INFINITY;
    }
    out->lam_lo = lo;
    out->lam_hi = hi;
    sturdy_free(mem);
    sturdy_free(grid);
    return STURDY_OK;
}
