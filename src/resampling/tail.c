/* tail.c — permutation p-values below 1/B by a generalised Pareto tail (opt-in,
 * --tail-fit), after Knijnenburg, Wessels, Reinders & Shmulevich (2009), "Fewer
 * permutations, more accurate P-values", Bioinformatics 25:i161–i168.
 *
 * Procedure for one term, used only where the plain p is coarse (fewer than
 * STURDY_TAIL_MAX_EXCEED rearrangements with F* ≥ F, as Knijnenburg et al. suggest):
 *   1. Take the N_exc largest F* (N_exc = 250 at first, fewer when B < 251) and the
 *      threshold t midway between the N_exc-th and (N_exc+1)-th largest; the exceedances
 *      are z_i = F*_(i) − t.
 *   2. Fit a GPD with location 0 to them by maximum likelihood (as Knijnenburg et al.).
 *   3. Anderson–Darling test of the fit at 0.05; on rejection (or when the ML estimate
 *      is not regular, ξ ≤ −1/2) N_exc drops by 10 and the fit is tried again, down to
 *      STURDY_TAIL_NEXC_MIN.
 *   4. p_tail = (N_exc/B)·(1 − F_GPD(F − t)).
 * The plain permutation p is never replaced: p_tail is reported beside it.
 *
 * ML fit. Grimshaw's (1993, Technometrics 35:185) reduction to one dimension: with
 * θ = ξ/σ, the ML shape for given θ is ξ(θ) = mean log(1 + θ z_i), and the profile
 * log-likelihood is ℓ(θ) = −n·(log(ξ(θ)/θ) + ξ(θ) + 1) on θ > −1/max z (θ = 0: the
 * exponential, ℓ = −n·(log mean z + 1)). θ·max z = e^u − 1 maps u ∈ ℝ onto that range;
 * ℓ is evaluated on a grid of u from −25 to 25 in steps of 1/2, the best point with
 * ξ ≥ −1 is taken (for ξ < −1 the likelihood is unbounded at the support's end, Smith
 * 1985, Biometrika 72:67, so no maximum there is meaningful), and refined by golden-
 * section search between its neighbours to |Δu| < 1e-11. A best point on the edge of the
 * valid grid means no interior maximum: the fit fails. Checked against
 * scipy.stats.genpareto.fit(z, floc=0) by tests/xcheck_tail.py.
 *
 * Goodness of fit. The Anderson–Darling statistic with both parameters estimated has a
 * null distribution that depends on ξ and n (Choulakian & Stephens 2001, Technometrics
 * 43:478). Rather than a transcribed table, its p is computed by parametric bootstrap:
 * STURDY_TAIL_GOF_REPS samples of n values from GPD(ξ̂, 1) (A² does not depend on the
 * scale), each refitted by the same ML and tested; p = (1 + #{A²* ≥ A²})/(1 + reps), and
 * the fit is rejected when p ≤ 0.05 (a test of exact size 0.05 for 199 replicates).
 * A replicate whose fit fails counts as A²* ≥ A² (towards accepting). The replicates'
 * generators are fixed (seed TAIL_SEED, stream TAIL_PURPOSE, index n·2^32 + replicate):
 * the p depends only on (n, ξ̂, A²), so the result depends only on the top F* values and
 * is the same for any thread count, shard split or rank.
 *
 * Cost (measured with tests/probe_tail): 0.08 s of CPU for a fit accepted at N_exc = 250,
 * 0.5 s when every N_exc from 250 down to 30 is tried; only for the terms that need it. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/tail.h"
#include "core/core.h"
#include "sturdy/pcg.h"

#define TAIL_SEED 0x6770645F7461696CULL   /* "gpd_tail" */
#define TAIL_PURPOSE 0x7461u              /* apart from STURDY_STREAM_* */
#define GRID_LO (-25.0)
#define GRID_STEP 0.5
#define GRID_N 101
#define GOLDEN_TOL 1e-11

void sturdy_tail_push(double *heap, size_t *n, double x)
{
    size_t i;
    if (*n < STURDY_TAIL_KEEP) {           /* sift up */
        i = (*n)++;
        while (i > 0) {
            size_t up = (i - 1) / 2;
            if (!(heap[up] > x))
                break;
            heap[i] = heap[up];
            i = up;
        }
        heap[i] = x;
        return;
    }
    if (!(x > heap[0]))
        return;
    i = 0;                                 /* replace the smallest, sift down */
    for (;;) {
        size_t l = 2 * i + 1, r = l + 1, m = i;
        double v = x;
        if (l < *n && heap[l] < v) { m = l; v = heap[l]; }
        if (r < *n && heap[r] < v) m = r;
        if (m == i)
            break;
        heap[i] = heap[m];
        i = m;
    }
    heap[i] = x;
}

static int cmp_desc(const void *a, const void *b)
{
    return sturdy_cmp_double(b, a);
}

void sturdy_tail_merge(double *top, size_t *ntop, const double *add, size_t nadd)
{
    double buf[2 * STURDY_TAIL_KEEP];
    size_t n = *ntop;
    if (nadd > STURDY_TAIL_KEEP)
        nadd = STURDY_TAIL_KEEP;
    memcpy(buf, top, n * sizeof *buf);
    memcpy(buf + n, add, nadd * sizeof *buf);
    n += nadd;
    qsort(buf, n, sizeof *buf, cmp_desc);
    if (n > STURDY_TAIL_KEEP)
        n = STURDY_TAIL_KEEP;
    memcpy(top, buf, n * sizeof *buf);
    *ntop = n;
}

/* ℓ at u (θ·zmax = e^u − 1) with the shape and scale it implies; −∞ when undefined. */
static double profile(const double *z, size_t n, double zmax, double u, double *xi,
                      double *sigma)
{
    double theta = expm1(u) / zmax, sum = 0.0;
    if (theta == 0.0) {
        for (size_t i = 0; i < n; i++)
            sum += z[i];
        *xi = 0.0;
        *sigma = sum / (double)n;
    } else {
        for (size_t i = 0; i < n; i++)
            sum += log1p(theta * z[i]);
        *xi = sum / (double)n;
        *sigma = *xi / theta;
    }
    if (!(*sigma > 0) || !isfinite(*sigma) || !isfinite(*xi))
        return -INFINITY;
    return -(double)n * (log(*sigma) + *xi + 1.0);
}

int sturdy_gpd_fit(const double *z, size_t n, double *xi, double *sigma, double *loglik)
{
    *xi = *sigma = *loglik = NAN;
    double zmax = 0.0;
    for (size_t i = 0; i < n; i++) {
        if (!(z[i] >= 0) || !isfinite(z[i]))
            return 1;
        if (z[i] > zmax)
            zmax = z[i];
    }
    if (n < 2 || !(zmax > 0))
        return 1;
    double best = -INFINITY, x, s;
    int kb = -1, kfirst = -1, klast = -1;
    for (int k = 0; k < GRID_N; k++) {
        double l = profile(z, n, zmax, GRID_LO + GRID_STEP * k, &x, &s);
        if (!(l > -INFINITY) || !(x >= -1.0))
            continue;
        if (kfirst < 0)
            kfirst = k;
        klast = k;
        if (l > best) {
            best = l;
            kb = k;
        }
    }
    if (kb < 0 || kb == kfirst || kb == klast)
        return 1;
    /* golden section for the maximum on [u_{kb−1}, u_{kb+1}] */
    const double g = 0.5 * (sqrt(5.0) - 1.0);
    double a = GRID_LO + GRID_STEP * (kb - 1), b = GRID_LO + GRID_STEP * (kb + 1);
    double c = b - g * (b - a), d = a + g * (b - a);
    double fc = profile(z, n, zmax, c, &x, &s), fd = profile(z, n, zmax, d, &x, &s);
    while (b - a > GOLDEN_TOL) {
        if (fc >= fd) {
            b = d; d = c; fd = fc;
            c = b - g * (b - a);
            fc = profile(z, n, zmax, c, &x, &s);
        } else {
            a = c; c = d; fc = fd;
            d = a + g * (b - a);
            fd = profile(z, n, zmax, d, &x, &s);
        }
    }
    double u = fc >= fd ? c : d;
    double l = profile(z, n, zmax, u, &x, &s);
    if (!(l >= best)) {                 /* never worse than the grid's best point */
        u = GRID_LO + GRID_STEP * kb;
        l = profile(z, n, zmax, u, &x, &s);
    }
    *xi = x;
    *sigma = s;
    *loglik = l;
    return 0;
}

/* log P(Z > z) under GPD(ξ, σ); −∞ beyond the support. */
static double gpd_logsf(double z, double xi, double sigma)
{
    if (xi == 0.0)
        return -z / sigma;
    double a = xi * z / sigma;
    if (!(a > -1.0))
        return -INFINITY;
    return -log1p(a) / xi;
}

double sturdy_gpd_sf(double z, double xi, double sigma)
{
    return exp(gpd_logsf(z, xi, sigma));
}

double sturdy_gpd_ad(const double *z, size_t n, double xi, double sigma)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++) {
        double lcdf = log(-expm1(gpd_logsf(z[i], xi, sigma)));
        double lsf = gpd_logsf(z[n - 1 - i], xi, sigma);
        s += (double)(2 * i + 1) * (lcdf + lsf);
    }
    double a2 = -(double)n - s / (double)n;
    return isnan(a2) ? INFINITY : a2;
}

double sturdy_gpd_ad_pvalue(size_t n, double xi, double sigma, double a2, double *work)
{
    (void)sigma;                        /* A² is scale-free: samples of GPD(ξ, 1) */
    double *z = work;
    size_t ge = 0;
    for (size_t r = 0; r < STURDY_TAIL_GOF_REPS; r++) {
        sturdy_pcg64 g;
        sturdy_pcg_for(&g, TAIL_SEED, TAIL_PURPOSE, ((uint64_t)n << 32) | r);
        for (size_t i = 0; i < n; i++) {
            double lv = log1p(-sturdy_pcg_unit(&g));      /* log V, V in (0, 1] */
            z[i] = xi == 0.0 ? -lv : expm1(-xi * lv) / xi;
        }
        qsort(z, n, sizeof *z, sturdy_cmp_double);
        double x, s, l;
        if (sturdy_gpd_fit(z, n, &x, &s, &l) || sturdy_gpd_ad(z, n, x, s) >= a2)
            ge++;
    }
    return (1.0 + (double)ge) / (1.0 + STURDY_TAIL_GOF_REPS);
}

void sturdy_tail_estimate(const double *top, size_t ntop, double f_obs, uint64_t B,
                          uint64_t exceed, int exact, double *p, sturdy_tail_fit *fit)
{
    memset(fit, 0, sizeof *fit);
    fit->threshold = fit->xi = fit->sigma = fit->ad = fit->ad_p = NAN;
    *p = NAN;
    if (exact) {
        fit->status = STURDY_TAIL_EXACT;
        return;
    }
    if (exceed >= STURDY_TAIL_MAX_EXCEED) {
        fit->status = STURDY_TAIL_NOT_NEEDED;
        return;
    }
    size_t start = ntop > 0 ? ntop - 1 : 0;
    if (start > STURDY_TAIL_NEXC_START)
        start = STURDY_TAIL_NEXC_START;
    start -= start % STURDY_TAIL_NEXC_STEP;
    if (start < STURDY_TAIL_NEXC_MIN || !(f_obs >= 0) || B == 0) {
        fit->status = STURDY_TAIL_FEW;
        return;
    }
    for (size_t i = 0; i <= start; i++)
        if (!isfinite(top[i])) {
            fit->status = STURDY_TAIL_INFINITE;
            return;
        }
    double z[STURDY_TAIL_KEEP], work[2 * STURDY_TAIL_KEEP];
    int last = STURDY_TAIL_SHAPE_INVALID;
    for (size_t N = start; N >= STURDY_TAIL_NEXC_MIN; N -= STURDY_TAIL_NEXC_STEP) {
        double t = 0.5 * (top[N - 1] + top[N]), xi, sg, ll;
        for (size_t i = 0; i < N; i++)          /* ascending */
            z[i] = top[N - 1 - i] - t;
        fit->n_tried++;
        fit->n_exc = N;
        fit->threshold = t;
        fit->ad = fit->ad_p = NAN;
        int bad = sturdy_gpd_fit(z, N, &xi, &sg, &ll);
        fit->xi = xi;
        fit->sigma = sg;
        if (bad || !(xi > -0.5)) {
            last = STURDY_TAIL_SHAPE_INVALID;
            continue;
        }
        fit->ad = sturdy_gpd_ad(z, N, xi, sg);
        fit->ad_p = sturdy_gpd_ad_pvalue(N, xi, sg, fit->ad, work);
        if (fit->ad_p <= STURDY_TAIL_GOF_ALPHA) {
            last = STURDY_TAIL_GOF_REJECTED;
            continue;
        }
        double sf = sturdy_gpd_sf(f_obs > t ? f_obs - t : 0.0, xi, sg);
        if (!(sf > 0)) {
            fit->status = STURDY_TAIL_BEYOND_SUPPORT;
            return;
        }
        *p = (double)N / (double)B * sf;
        fit->status = STURDY_TAIL_FITTED;
        return;
    }
    fit->status = last;
}

const char *sturdy_tail_status_name(int status)
{
    switch (status) {
    case STURDY_TAIL_FITTED: return "fitted";
    case STURDY_TAIL_NOT_NEEDED: return "not_needed";
    case STURDY_TAIL_EXACT: return "exact";
    case STURDY_TAIL_FEW: return "few_values";
    case STURDY_TAIL_INFINITE: return "infinite_values";
    case STURDY_TAIL_GOF_REJECTED: return "gof_rejected";
    case STURDY_TAIL_SHAPE_INVALID: return "shape_invalid";
    case STURDY_TAIL_BEYOND_SUPPORT: return "beyond_support";
    default: return "off";
    }
}

const char *sturdy_tail_status_reason(int status)
{
    switch (status) {
    case STURDY_TAIL_FITTED:
        return "generalised Pareto tail fitted to the largest F* and accepted by the "
               "Anderson-Darling test at 0.05; an extrapolation beyond the rearrangements";
    case STURDY_TAIL_NOT_NEEDED:
        return "not needed: 10 or more rearrangements reached F, so the permutation p "
               "is not limited by B";
    case STURDY_TAIL_EXACT:
        return "not needed: every rearrangement was enumerated, so the permutation p "
               "is exact";
    case STURDY_TAIL_FEW:
        return "not enough tail: fewer than 31 F* values to fit";
    case STURDY_TAIL_INFINITE:
        return "an infinite F* (no residual variation left) among the largest";
    case STURDY_TAIL_GOF_REJECTED:
        return "the Anderson-Darling test rejected the fit at 0.05 for every N_exc tried";
    case STURDY_TAIL_SHAPE_INVALID:
        return "no regular maximum-likelihood fit (shape estimate at or below -1/2, or "
               "none)";
    case STURDY_TAIL_BEYOND_SUPPORT:
        return "F lies beyond the upper end of the fitted tail (negative shape)";
    default:
        return "not asked for";
    }
}
