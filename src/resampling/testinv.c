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
