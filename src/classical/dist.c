/* dist.c — F, noncentral F, beta and normal distribution functions on top of GSL.
 *
 * GSL's forward CDFs (gsl_cdf_beta_P/Q, gsl_cdf_ugaussian_*) are used where they are
 * accurate: for valid arguments they never reach GSL's error handler (whose default
 * aborts) — we checked shapes 1e-3 … 1e8 over the whole (0, 1) range — but for shapes
 * of 1e4 and more they drift, approximate or return NaN (see GSL_BETA_SHAPE_MAX), and
 * there our own continued fraction takes over. GSL's quantile functions are NOT used:
 * gsl_cdf_beta_Pinv and gsl_cdf_fdist_Qinv report "inverse failed to converge" through
 * the aborting handler for ordinary arguments (e.g. F(30, 1e6) at q = 0.025), and GSL
 * rejects df < 1. Quantiles come instead from bisection on the ordering of doubles,
 * which reaches adjacent doubles in at most 64 steps and always terminates. We never
 * change GSL's error handler: that is process-wide state owned by the application. */
#include "sturdy/dist.h"

#include <float.h>
#include <math.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

/* Poisson indices are dropped once the weight they could still add is below this
 * fraction of what matters (the mode's weight above it, the running sum below it):
 * a tenth of a unit in the last place, so truncation is invisible in the result. */
#define NCF_TAIL_REL 1e-17

/* Our continued fraction for I_x(a, b) stops when a step changes it by less than this
 * relative amount (a few units in the last place). */
#define BETA_CF_TOL (4.0 * DBL_EPSILON)

/* It needs about sqrt(max(a, b)) steps near the peak (~3e4 at shapes of 1e9, the
 * largest the noncentral F reaches); the cap only guards against an endless loop. */
#define BETA_CF_MAX_ITER 5000000

/* Bisection on the ordering of doubles needs at most 64 halvings; one more is slack. */
#define BISECT_MAX_STEPS 66

/* Largest λ the noncentral F accepts (and the interval searches): one CDF costs ~50 ms
 * there (the sum spans ~3e5 Poisson terms), and η² = λ/(λ + df1 + df2 + 1) is already
 * 1 − 1e-9 or closer for any plausible df. */
#define NCF_LAMBDA_MAX 1e9

#define LN_SQRT_2PI 0.918938533204672741780329736406 /* log(sqrt(2π)) */
#define LN_2PI 1.83787706640934548356065947281       /* log(2π) */

/* ---------- Loader (2000): accurate binomial and Poisson densities ---------- */

/* stirlerr(n) = log(n!) − log(sqrt(2πn) (n/e)^n), for real n > 0 (Loader 2000, "Fast
 * and accurate computation of binomial probabilities"). Below 15 the lgamma form loses
 * nothing that matters (all terms are O(10)); above, the Stirling series is exact to
 * rounding with the number of terms Loader uses for each range. */
static double stirlerr(double n)
{
    static const double s0 = 1.0 / 12, s1 = 1.0 / 360, s2 = 1.0 / 1260, s3 = 1.0 / 1680,
                        s4 = 1.0 / 1188;
    double nn = n * n;
    if (n <= 15.0) return lgamma(n + 1.0) - (n + 0.5) * log(n) + n - LN_SQRT_2PI;
    if (n > 500) return (s0 - s1 / nn) / n;
    if (n > 80) return (s0 - (s1 - s2 / nn) / nn) / n;
    if (n > 35) return (s0 - (s1 - (s2 - s3 / nn) / nn) / nn) / n;
    return (s0 - (s1 - (s2 - (s3 - s4 / nn) / nn) / nn) / nn) / n;
}

/* bd0(x, m) = x log(x/m) + m − x ≥ 0, by a series when x ≈ m to avoid cancellation
 * (Loader 2000). */
static double bd0(double x, double m)
{
    if (fabs(x - m) < 0.1 * (x + m)) {
        double v = (x - m) / (x + m), s = (x - m) * v, ej = 2.0 * x * v;
        v = v * v; /* < 0.01: each term gains two digits; the cap is never reached */
        for (int j = 1; j < 100; j++) {
            ej *= v;
            double s1 = s + ej / (2 * j + 1);
            if (s1 == s) return s1;
            s = s1;
        }
        return s;
    }
    return x * log(x / m) + m - x;
}

/* Poisson probability of j (an integer ≥ 0) with mean mu > 0. */
static double pois_pmf(double j, double mu)
{
    if (j == 0) return exp(-mu);
    return exp(-stirlerr(j) - bd0(j, mu) - 0.5 * (LN_2PI + log(j)));
}

/* x^a y^b / (a B(a, b)) with y = 1 − x given separately: the step of the recurrence
 * I_x(a, b) = I_x(a + 1, b) + x^a y^b / (a B(a, b)). Written as b/(a+b) times the
 * binomial density of a in a + b trials (Loader 2000), which keeps full relative
 * accuracy where lgamma-based forms lose ~log(a+b)·1e-16 · (a+b). */
static double beta_step(double a, double b, double x, double y)
{
    double n = a + b;
    double lc = stirlerr(n) - stirlerr(a) - stirlerr(b) - bd0(a, n * x) - bd0(b, n * y);
    double lf = LN_2PI + log(a) + log(b) - log(n);
    return b / n * exp(lc - 0.5 * lf);
}

/* ---------- regularised incomplete beta ---------- */

/* I_x(a, b) by its continued fraction (Abramowitz & Stegun 1964, 26.5.8; evaluated by
 * the modified Lentz method), meant for x < (a+1)/(a+b+2) where it converges fast; NaN if it does not
 * converge. Used for large shapes, where GSL's is inaccurate (GSL_BETA_SHAPE_MAX). */
static double beta_cf_lower(double a, double b, double x, double y)
{
    const double tiny = 1e-300; /* Lentz's guard against a zero denominator */
    double c = 1.0, d = 1.0 - (a + b) * x / (a + 1.0), h;
    if (fabs(d) < tiny) d = tiny;
    d = 1.0 / d;
    h = d;
    for (long m = 1; m <= BETA_CF_MAX_ITER; m++) {
        double m2 = 2.0 * m;
        double num = m * (b - m) * x / ((a + m2 - 1.0) * (a + m2));
        d = 1.0 + num * d;
        c = 1.0 + num / c;
        if (fabs(d) < tiny) d = tiny;
        if (fabs(c) < tiny) c = tiny;
        d = 1.0 / d;
        h *= d * c;
        num = -(a + m) * (a + b + m) * x / ((a + m2) * (a + m2 + 1.0));
        d = 1.0 + num * d;
        c = 1.0 + num / c;
        if (fabs(d) < tiny) d = tiny;
        if (fabs(c) < tiny) c = tiny;
        d = 1.0 / d;
        double del = d * c;
        h *= del;
        if (fabs(del - 1.0) < BETA_CF_TOL) return beta_step(a, b, x, y) * h;
    }
    return NAN;
}

/* Shapes from which our continued fraction is used instead of GSL's. GSL 2.7 replaces
 * the incomplete beta by a gamma-CDF approximation when one shape exceeds 1e5 and the
 * other is below 10 (its beta_inc_AXPY): against exact values (R's pbeta, TOMS 708, and
 * 40-digit mpmath) that is off by 1e-10 near the centre and returns 0 for tails such
 * as P(F(1, 1e6) > 100) = 1.5e-23. Its continued fraction also drifts when both shapes
 * are large (3e-11 relative at a = b = 1e4, 3e-9 at 1e6, NaN beyond ~3e5), while ours,
 * with Loader's prefactor, stays within 1e-12 there. Below 1e4 both agree to 1e-12. */
#define GSL_BETA_SHAPE_MAX 1e4

/* P(X ≤ x) (upper = 0) or P(X > x) (upper = 1) for X ~ Beta(a, b), 0 ≤ x ≤ 1, with
 * y = 1 − x passed separately so that callers who know it exactly keep its precision. */
static double beta_cdf(double x, double y, double a, double b, int upper)
{
    if (y < x) { /* work with the smaller argument, which is exact: P_x(a,b) = Q_y(b,a) */
        double t = x; x = y; y = t;
        t = a; a = b; b = t;
        upper = !upper;
    }
    if (x <= 0) return upper ? 1.0 : 0.0;
    if (a < GSL_BETA_SHAPE_MAX && b < GSL_BETA_SHAPE_MAX) {
        double r = upper ? gsl_cdf_beta_Q(x, a, b) : gsl_cdf_beta_P(x, a, b);
        if (!isnan(r)) return r; /* NaN (not seen below 1e4): fall through to ours */
    }
    /* The continued fraction on the side where it converges fast; the complement on
     * the other side is then ≥ ~1/3, so 1 − value loses nothing. */
    if (x < (a + 1.0) / (a + b + 2.0)) {
        double p = beta_cf_lower(a, b, x, y);
        return upper ? 1.0 - p : p;
    }
    double q = beta_cf_lower(b, a, y, x);
    return upper ? q : 1.0 - q;
}

/* ---------- bisection over the doubles ---------- */

static uint64_t dbl_bits(double v)
{
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return u;
}

static double bits_dbl(uint64_t u)
{
    double v;
    memcpy(&v, &u, sizeof v);
    return v;
}

/* A monotone predicate: 1 when t lies at or beyond the root, 0 before it, −1 when
 * the function could not be evaluated (NaN). */
typedef int (*side_fn)(double t, const void *ctx);

/* For 0 ≤ lo < hi with side(lo) = 0 and side(hi) = 1, narrows [lo, hi] to adjacent
 * doubles by halving the interval of their bit patterns (non-negative doubles order
 * like their bits). Returns hi, or NaN if side() failed. */
static double bisect_doubles(double lo, double hi, side_fn side, const void *ctx)
{
    uint64_t blo = dbl_bits(lo), bhi = dbl_bits(hi);
    for (int step = 0; step < BISECT_MAX_STEPS && bhi - blo > 1; step++) {
        uint64_t bmid = blo + (bhi - blo) / 2;
        int s = side(bits_dbl(bmid), ctx);
        if (s < 0) return NAN;
        if (s) bhi = bmid; else blo = bmid;
    }
    return bits_dbl(bhi);
}

/* ---------- central F ---------- */

static int bad_df(double df1, double df2)
{
    return !(df1 > 0 && df2 > 0) || isinf(df1) || isinf(df2);
}

/* F = (df2/df1)·X/(1−X) with X ~ Beta(df1/2, df2/2): the X and 1 − X of f > 0. */
static void f_to_beta(double f, double df1, double df2, double *x, double *y)
{
    double t = df1 / df2 * f; /* may be +inf for huge f: then x = 1, y = 0 */
    if (isinf(t)) {
        *x = 1.0;
        *y = 0.0;
        return;
    }
    *x = t / (1.0 + t);
    *y = 1.0 / (1.0 + t);
}

double sturdy_f_sf(double f, double df1, double df2)
{
    if (isnan(f) || bad_df(df1, df2)) return NAN;
    if (f <= 0) return 1.0;
    double x, y;
    f_to_beta(f, df1, df2, &x, &y);
    return beta_cdf(x, y, df1 / 2, df2 / 2, 1);
}

static double f_cdf(double f, double df1, double df2)
{
    if (f <= 0) return 0.0;
    double x, y;
    f_to_beta(f, df1, df2, &x, &y);
    return beta_cdf(x, y, df1 / 2, df2 / 2, 0);
}

struct f_target {
    double q, df1, df2;
};

/* The tail searched for the quantile at t into *v — P(F > t) when `upper` (evaluated
 * directly, so small q keep their relative precision), else P(F ≤ t), for q > 1/2
 * (1 − q is then exact) — and whether t is at or beyond the root: P(F > t) ≤ q, or
 * P(F ≤ t) ≥ 1 − q; −1 when the tail could not be evaluated. */
static int f_tail_at(double t, const struct f_target *c, int upper, double *v)
{
    *v = upper ? sturdy_f_sf(t, c->df1, c->df2) : f_cdf(t, c->df1, c->df2);
    if (isnan(*v)) return -1;
    return upper ? *v <= c->q : *v >= 1.0 - c->q;
}

/* The two sides of the bisection: through the upper tail, or the lower one. */
static int f_side_sf(double t, const void *ctx)
{
    double v;
    return f_tail_at(t, ctx, 1, &v);
}

static int f_side_cdf(double t, const void *ctx)
{
    double v;
    return f_tail_at(t, ctx, 0, &v);
}

/* Steps of the narrowing below before the bisection takes over (a guard only: it
 * usually needs 3 to 6). */
#define ISF_NARROW_MAX 40

/* The bisection of [0, DBL_MAX] on the bits of doubles (bisect_doubles), replayed: a
 * midpoint at or below `a` is taken as before the root and one at or above `b` as
 * beyond it without evaluating side(), so only the steps inside (a, b) cost an
 * evaluation. It returns the very double the full bisection returns whenever side() is
 * monotone outside (a, b) (within (a, b) it is evaluated exactly as there). */
static double bisect_doubles_within(double a, double b, side_fn side, const void *ctx)
{
    uint64_t blo = dbl_bits(0.0), bhi = dbl_bits(DBL_MAX), ba = dbl_bits(a), bb = dbl_bits(b);
    for (int step = 0; step < BISECT_MAX_STEPS && bhi - blo > 1; step++) {
        uint64_t bmid = blo + (bhi - blo) / 2;
        int s = bmid <= ba ? 0 : bmid >= bb ? 1 : side(bits_dbl(bmid), ctx);
        if (s < 0) return NAN;
        if (s) bhi = bmid; else blo = bmid;
    }
    return bits_dbl(bhi);
}

/* Relative margin around the narrowed bracket, far wider than the few units in the last
 * place over which a tail computed in floating point can fail to be monotone (measured:
 * at most ~1e-15 on 20,000 random quantiles), so that the replay takes the same steps
 * as the full bisection. */
#define ISF_MARGIN 1e-10

/* The quantile is the double that the bisection of [0, DBL_MAX] on the bits of doubles
 * returns (63 evaluations of the tail). The same double comes from replaying that
 * bisection with the steps outside a bracket of the root decided without evaluation
 * (bisect_doubles_within). The bracket is found on log t from t = 1, by steps that grow
 * fourfold, then narrowed by the Illinois variant of false position on
 * log(tail) − log(target) (Dowell & Jarratt 1971), a smooth monotone function of log t,
 * to a relative width of 1e-12, and widened by ISF_MARGIN each way. About 30 evaluations
 * instead of 63. Where the log of a tail is not finite (a tail of 0, or t at 0 or
 * DBL_MAX), the step halves log t instead, or stops. */
double sturdy_f_isf(double q, double df1, double df2)
{
    if (isnan(q) || bad_df(df1, df2)) return NAN;
    if (q <= 0) return INFINITY;
    if (q >= 1) return 0.0;
    struct f_target c = {q, df1, df2};
    int upper = q <= 0.5;
    double target = upper ? q : 1.0 - q;
    double lo = 0.0, hi = DBL_MAX, vlo = NAN, vhi = NAN, v;
    int s = f_tail_at(1.0, &c, upper, &v);
    if (s < 0) return NAN;
    if (s) { hi = 1.0; vhi = v; } else { lo = 1.0; vlo = v; }
    for (double step = 2.0; ; step *= 4.0) {           /* bracket: t = 1 · 2^±step */
        double t = s ? ldexp(1.0, -(int)fmin(step, 1100.0))
                     : ldexp(1.0, (int)fmin(step, 1100.0));
        if (t == 0.0 || isinf(t)) break;                /* the ends of the doubles */
        int st = f_tail_at(t, &c, upper, &v);
        if (st < 0) return NAN;
        if (st) { hi = t; vhi = v; } else { lo = t; vlo = v; }
        if (st != s) break;
    }
    /* false position on g(u) = log(tail) − log(target), u = log t; side 1 ⇔ g ≤ 0 for
       the upper tail (decreasing in t), g ≥ 0 for the lower one (increasing) */
    double lt = log(target), glo = log(vlo) - lt, ghi = log(vhi) - lt;
    int last = 0;
    for (int k = 0; k < ISF_NARROW_MAX && hi - lo > 1e-12 * hi; k++) {
        double ulo = log(lo), uhi = log(hi), u;
        if (isfinite(ulo) && isfinite(uhi) && isfinite(glo) && isfinite(ghi) && glo != ghi) {
            u = ulo + (uhi - ulo) * (glo / (glo - ghi));
            if (!(u > ulo && u < uhi)) u = 0.5 * (ulo + uhi);
        } else if (isfinite(ulo) && isfinite(uhi)) {
            u = 0.5 * (ulo + uhi);
        } else {
            break;                                      /* leave it to the bisection */
        }
        double t = exp(u);
        if (!(t > lo && t < hi)) break;
        int st = f_tail_at(t, &c, upper, &v);
        if (st < 0) return NAN;
        double g = log(v) - lt;
        if (st) {
            hi = t; ghi = g;
            if (last == 1) glo *= 0.5;                  /* Illinois: the stale end */
            last = 1;
        } else {
            lo = t; glo = g;
            if (last == -1) ghi *= 0.5;
            last = -1;
        }
    }
    return bisect_doubles_within(lo * (1.0 - ISF_MARGIN),
                                 hi < DBL_MAX / 2 ? hi * (1.0 + ISF_MARGIN) : DBL_MAX,
                                 upper ? f_side_sf : f_side_cdf, &c);
}

/* ---------- noncentral F ---------- */

/* The terms of the downward sum below come from two-term recurrences, each step three
 * roundings; every NCF_ANCHOR_EVERY steps (and wherever a value is too small for the
 * recurrence to carry, or it misbehaves) both are evaluated directly again, which keeps
 * their relative error below ~2·32·DBL_EPSILON ≈ 1.4e-14 and, in the sum of positive
 * terms, the result's below that too. */
#define NCF_ANCHOR_EVERY 32

/* Smallest value the recurrences start from; below it a term is evaluated directly
 * (a recurrence from 0 or a subnormal would lose the term altogether). */
#define NCF_RECUR_MIN 1e-280

/* P(F ≤ f | λ) from x = df1·f/(df2 + df1·f), y = 1 − x, a = df1/2, b = df2/2,
 * mu = λ/2 > 0, and ilow = I_x(a, b) (which does not depend on λ: the interval search
 * passes it once for all its evaluations). NaN if an incomplete beta failed. */
static double ncf_cdf_core(double x, double y, double a, double b, double mu, double ilow)
{
    double mode = floor(mu);

    /* Highest index: past the mode the weights fall by at least r = mu/(j+1) per
     * step, so what lies beyond j is at most w_j r/(1−r); and I_x(a+j, b) falls with
     * j, so relative to w_mode·I_x(a+mode, b) ≤ CDF this bounds the truncation. The
     * ratio w_j/w_mode is the running product of the r (no density evaluated). */
    double jhi = mode, rel = 1.0;
    for (;;) {
        double r = mu / (jhi + 1.0);
        if (rel * r / (1.0 - r) <= NCF_TAIL_REL) break;
        jhi += 1.0;
        rel *= r;
    }

    /* Sum downward from jhi: I_x(a+j, b) = I_x(a+j+1, b) + step(a+j) only adds
     * positive terms, so every I keeps its relative precision (the upward direction
     * subtracts and would cancel). One incomplete beta is evaluated directly, and
     * I_x(a, b) ≥ every term's I bounds what the indices below could add. The
     * Poisson weight and the step follow their ratios,
     *   w_j = w_{j+1}·(j+1)/mu,   step(a+j) = step(a+j+1)·(a+j+1)/(x·(a+j+b)),
     * re-anchored by direct evaluation (Loader's forms) every NCF_ANCHOR_EVERY steps. */
    double ib = beta_cdf(x, y, a + jhi, b, 0);
    if (isnan(ib) || isnan(ilow)) return NAN;
    double w = pois_pmf(jhi, mu);
    double sum = w * ib, step = 0.0;
    int since = NCF_ANCHOR_EVERY;
    for (double j = jhi - 1.0; j >= 0; j -= 1.0) {
        if (since < NCF_ANCHOR_EVERY && step >= NCF_RECUR_MIN && w >= NCF_RECUR_MIN) {
            step *= (a + j + 1.0) / (x * (a + j + b));
            w *= (j + 1.0) / mu;
            since++;
        } else {
            step = w = 0.0; /* forces the direct evaluation below */
        }
        if (!(step >= NCF_RECUR_MIN && step <= 1.0 && w >= NCF_RECUR_MIN && w <= 1.0)) {
            step = beta_step(a + j, b, x, y);
            w = pois_pmf(j, mu);
            since = 0;
        }
        ib += step;
        sum += w * ib;
        /* Below the mode the weights fall by at least r = j/mu per step: stop once
         * what the rest could add is negligible against the sum, or underflows. */
        if (j < mu && j > 0) {
            double r = j / mu, rest = w * r / (1.0 - r) * ilow;
            if (rest <= NCF_TAIL_REL * sum || rest < DBL_MIN) break;
        }
    }
    return sum > 1.0 ? 1.0 : sum;
}

double sturdy_ncf_cdf(double f, double df1, double df2, double lambda)
{
    if (isnan(f) || isnan(lambda) || bad_df(df1, df2) || !(lambda >= 0) ||
        lambda > NCF_LAMBDA_MAX)
        return NAN;
    if (f <= 0) return 0.0;
    if (isinf(f)) return 1.0;
    if (lambda == 0) return f_cdf(f, df1, df2);

    double x, y;
    f_to_beta(f, df1, df2, &x, &y);
    if (x == 0) return 0.0;
    if (y == 0) return 1.0;
    double a = df1 / 2, b = df2 / 2;
    return ncf_cdf_core(x, y, a, b, lambda / 2, beta_cdf(x, y, a, b, 0));
}

/* One equation P(F ≤ f | λ) = target of the interval search, with what does not
 * depend on λ computed once. */
struct ncf_target {
    double x, y, a, b, ilow, target;
    double lambda0; /* where the bracketing starts: the moment estimate df1·f, ≥ 1 */
};

/* P(F ≤ f | λ) − target, for λ > 0 (NaN if it could not be evaluated). */
static double ncf_gap(double lambda, const struct ncf_target *c)
{
    return ncf_cdf_core(c->x, c->y, c->a, c->b, lambda / 2, c->ilow) - c->target;
}

/* P(F ≤ f | λ) decreases in λ: beyond the root once it is below the target. */
static int ncf_side(double lambda, const void *ctx)
{
    double g = ncf_gap(lambda, ctx);
    return isnan(g) ? -1 : g < 0;
}

/* The interval search narrows [lo, hi] by regula falsi with the Illinois modification
 * (the end that stays put twice has its value halved, so both ends move and the
 * convergence is superlinear) until it is this narrow relative to hi; bisection on the
 * doubles then finishes it, so the result is the same adjacent-doubles flip point of
 * the predicate that bisection alone finds (it reaches it in a few steps from here). */
#define NCF_FALSI_REL 1e-13

/* Regula-falsi steps at most (it usually needs 5–10); bisection takes over after. */
#define NCF_FALSI_MAX 60

/* The λ ≥ 0 with P(F ≤ f | λ) = target; 0 when even λ = 0 is at or below it. cdf0 is
 * P(F ≤ f | 0) = I_x(a, b). */
static sturdy_status ncf_solve(const struct ncf_target *c, double cdf0, double *lambda)
{
    if (cdf0 <= c->target) {
        *lambda = 0.0;
        return STURDY_OK;
    }
    /* Bracket by doubling from the moment estimate λ ≈ df1·f (P(F ≤ f | λ) falls
     * with λ: g(lo) ≥ 0 > g(hi)). */
    double lo = 0.0, glo = cdf0 - c->target, hi = c->lambda0, ghi;
    for (;;) {
        if (hi > NCF_LAMBDA_MAX) return STURDY_EINTERNAL;
        ghi = ncf_gap(hi, c);
        if (isnan(ghi)) return STURDY_EINTERNAL;
        if (ghi < 0) break;
        lo = hi;
        glo = ghi;
        hi *= 2.0;
    }
    /* Illinois: glo ≥ 0 > ghi throughout. */
    int kept = 0; /* +1: lo stayed put last step, −1: hi did */
    for (int it = 0; it < NCF_FALSI_MAX && hi - lo > NCF_FALSI_REL * hi; it++) {
        double m = lo + (hi - lo) * (glo / (glo - ghi));
        if (!(m > lo && m < hi)) m = lo + (hi - lo) / 2; /* rounding: stay inside */
        double gm = ncf_gap(m, c);
        if (isnan(gm)) return STURDY_EINTERNAL;
        if (gm < 0) {
            hi = m;
            ghi = gm;
            if (kept > 0) glo /= 2;
            kept = 1;
        } else {
            lo = m;
            glo = gm;
            if (kept < 0) ghi /= 2;
            kept = -1;
        }
    }
    double r = bisect_doubles(lo, hi, ncf_side, c);
    if (isnan(r)) return STURDY_EINTERNAL;
    *lambda = r;
    return STURDY_OK;
}

sturdy_status sturdy_ncf_eta2_interval(double f_obs, double df1, double df2, double conf,
                                       double *eta_lo, double *eta_hi, double *lambda_lo,
                                       double *lambda_hi)
{
    if (!(f_obs >= 0) || isinf(f_obs) || bad_df(df1, df2) || !(conf > 0 && conf < 1))
        return STURDY_EUSAGE;
    double alpha = 1.0 - conf;
    double cdf0 = f_cdf(f_obs, df1, df2);
    if (isnan(cdf0)) return STURDY_EINTERNAL;

    double llo = 0.0, lhi = 0.0, x, y;
    f_to_beta(f_obs, df1, df2, &x, &y);
    if (f_obs > 0 && y == 0) return STURDY_EINTERNAL; /* F too large for any λ ≤ 1e9 */
    double lambda0 = fmax(1.0, df1 * f_obs);
    struct ncf_target clo = {x, y, df1 / 2, df2 / 2, cdf0, 1.0 - alpha / 2, lambda0};
    struct ncf_target chi = {x, y, df1 / 2, df2 / 2, cdf0, alpha / 2, lambda0};
    sturdy_status st = ncf_solve(&clo, cdf0, &llo);
    if (st == STURDY_OK) st = ncf_solve(&chi, cdf0, &lhi);
    if (st != STURDY_OK) return st;

    double denom = df1 + df2 + 1.0;
    if (eta_lo) *eta_lo = llo / (llo + denom);
    if (eta_hi) *eta_hi = lhi / (lhi + denom);
    if (lambda_lo) *lambda_lo = llo;
    if (lambda_hi) *lambda_hi = lhi;
    return STURDY_OK;
}

/* ---------- normal ---------- */

double sturdy_norm_cdf(double z)
{
    if (isnan(z)) return NAN;
    return gsl_cdf_ugaussian_P(z);
}

double sturdy_norm_ppf(double p)
{
    if (isnan(p)) return NAN;
    if (p <= 0) return -INFINITY;
    if (p >= 1) return INFINITY;
    return gsl_cdf_ugaussian_Pinv(p);
}

/* ---------- Clopper–Pearson ---------- */

struct beta_target {
    double p, a, b;
    int upper;
};

/* Beyond the root once P(X ≤ x) ≥ p (lower) or P(X > x) ≤ p (upper). */
static int beta_side(double x, const void *ctx)
{
    const struct beta_target *c = ctx;
    if (x <= 0) return 0;
    if (x >= 1) return 1;
    double v = beta_cdf(x, 1.0 - x, c->a, c->b, c->upper);
    if (isnan(v)) return -1;
    return c->upper ? v <= c->p : v >= c->p;
}

/* The x with P(X ≤ x) = p (upper = 0) or P(X > x) = p (upper = 1), X ~ Beta(a, b).
 * Evaluating the tail that p names keeps small p (and x near 0) precise. */
static double beta_quantile(double p, double a, double b, int upper)
{
    struct beta_target c = {p, a, b, upper};
    return bisect_doubles(0.0, 1.0, beta_side, &c);
}

void sturdy_clopper_pearson(uint64_t k, uint64_t n, double conf, double *lo, double *hi)
{
    double l = NAN, h = NAN;
    if (n > 0 && k <= n && conf > 0 && conf < 1) {
        double half = (1.0 - conf) / 2, dk = (double)k, dn = (double)n;
        /* Clopper & Pearson (1934): lo = B⁻¹(α/2; k, n−k+1), hi = B⁻¹(1−α/2; k+1, n−k),
         * the latter found from its upper tail α/2. */
        l = k == 0 ? 0.0 : beta_quantile(half, dk, dn - dk + 1.0, 0);
        h = k == n ? 1.0 : beta_quantile(half, dk + 1.0, dn - dk, 1);
    }
    if (lo) *lo = l;
    if (hi) *hi = h;
}
