/* range.c — the studentized range distribution (Tukey 1953): its upper tail and quantile,
 * for the Tukey–Kramer and Games–Howell simultaneous intervals of compare.c.
 *
 * With k independent N(0,1) means and an independent s with ν·s² ~ χ²_ν, the studentized
 * range Q = (max − min)/s has
 *   P(Q > q) = ∫₀^∞ f_s(s) · P(R > q·s) ds,
 *   P(R > w) = k ∫ φ(z) { Q(z)^(k−1) − [Q(z) − Q(z+w)]^(k−1) } dz,
 * where R is the range of the k normals, Q(z) = 1 − Φ(z) the normal upper tail and
 * f_s(s) = 2 (ν/2)^(ν/2) / Γ(ν/2) · s^(ν−1) exp(−ν s²/2) (Hartley 1942; the same double
 * integral the published algorithms evaluate, Copenhaver & Holland 1988). The inner
 * integrand is written as a difference of powers through expm1/log1p, so that small
 * upper tails keep their relative accuracy; both integrals use adaptive Gauss–Kronrod
 * (7/15 points) with an absolute tolerance far below the accuracy the tests ask for.
 *
 * Many-to-one (Dunnett 1955): m differences with a common control whose correlations
 * have the product form ρ_ij = λ_iλ_j (|λ_i| < 1) are, up to the common s,
 * T_i = (λ_i Z + √(1−λ_i²) Z_i)/s with Z, Z_i independent N(0,1), so
 *   P(max |T_i| ≤ c) = ∫₀^∞ f_s(s) ∫ φ(z) Π_i [Φ((λ_i z + cs)/√(1−λ_i²))
 *                                            − Φ((λ_i z − cs)/√(1−λ_i²))] dz ds,
 * the same outer integral over s as the range and an inner one over z. */
#include <assert.h>
#include <float.h>
#include <math.h>

#include "classical/range.h"

/* Absolute tolerance of each integral: the adjusted p-values are compared with an
 * independent implementation to 1e-10, so 1e-12 leaves a wide margin without making
 * a quantile search (≈ 10 tail evaluations) slow. */
#define RANGE_TOL 1e-12
/* Recursion depth of the adaptive rule: 2^-30 of an interval is far below any scale of
 * these smooth integrands. */
#define RANGE_DEPTH 30
/* Above this many degrees of freedom s is taken as 1 (ν = ∞): the density of s is then
 * narrower than 1e-3 around 1 and the difference is below the tolerance of the tests. */
#define RANGE_DF_INF 1e8
/* Half-width, in standard deviations of the normal approximation, of the region of s
 * and z that carries mass: φ(12) ≈ 1e-32. */
#define RANGE_SPAN 12.0

/* 1/√(2π) */
#define INV_SQRT_2PI 0.398942280401432677939946059934

/* Kronrod panels of the integrals taken without adaptation (the inner one always). */
#define RANGE_PANELS 8
/* Relative width at which the quantile search stops: 1e-12, far below the 1e-9 the
 * tests ask for and the 4 decimals of the tables in use. */
#define RANGE_QTOL 1e-12
/* Residual df from which the outer integral uses fixed panels too. */
#define RANGE_FIXED_DF 5
/* Half-width of the z range of the inner integral: 2·Q(8.5) ≈ 2e-17. */
#define RANGE_Z 8.5

typedef double (*integrand)(double x, const void *arg);

/* Gauss–Kronrod 7/15 nodes and weights (Kronrod 1965; as tabulated by Piessens et al.
 * 1983). */
static const double xgk[8] = {
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.000000000000000000000000000000000};
static const double wgk[8] = {
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714};
static const double wg[4] = {
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327};

/* Kronrod estimate over [a, b] with QUADPACK's error estimate (Piessens et al. 1983,
 * QK15): |Kronrod − Gauss| scaled by the integrand's spread, (200·|K−G|/asc)^1.5·asc,
 * which tracks the true error of smooth integrands far better than |K−G| itself. */
static double gk15(integrand f, const void *arg, double a, double b, double *errest)
{
    double c = 0.5 * (a + b), h = 0.5 * (b - a);
    double fv[15];
    fv[7] = f(c, arg);
    for (int j = 0; j < 7; j++) {
        double dx = h * xgk[j];
        fv[j] = f(c - dx, arg);
        fv[14 - j] = f(c + dx, arg);
    }
    double rk = fv[7] * wgk[7], rg = fv[7] * wg[3];
    for (int j = 0; j < 7; j++) {
        rk += wgk[j] * (fv[j] + fv[14 - j]);
        if (j % 2 == 1)
            rg += wg[j / 2] * (fv[j] + fv[14 - j]);
    }
    double mean = 0.5 * rk, asc = wgk[7] * fabs(fv[7] - mean);
    for (int j = 0; j < 7; j++)
        asc += wgk[j] * (fabs(fv[j] - mean) + fabs(fv[14 - j] - mean));
    double err = fabs((rk - rg) * h), abs_sum = 0;
    for (int j = 0; j < 15; j++)
        abs_sum += (j == 7 ? wgk[7] : wgk[j < 7 ? j : 14 - j]) * fabs(fv[j]);
    asc *= fabs(h);
    if (asc != 0 && err != 0)
        err = asc * fmin(1.0, pow(200.0 * err / asc, 1.5));
    /* below rounding, as QUADPACK: nothing more to gain by splitting */
    err = fmax(err, 50.0 * DBL_EPSILON * abs_sum * fabs(h));
    *errest = err;
    return rk * h;
}

static double adapt(integrand f, const void *arg, double a, double b, double whole,
                    double err, double tol, int depth)
{
    if (err <= tol || depth >= RANGE_DEPTH)
        return whole;
    double m = 0.5 * (a + b), e1, e2;
    double l = gk15(f, arg, a, m, &e1), r = gk15(f, arg, m, b, &e2);
    return adapt(f, arg, a, m, l, e1, 0.5 * tol, depth + 1) +
           adapt(f, arg, m, b, r, e2, 0.5 * tol, depth + 1);
}

static double integrate(integrand f, const void *arg, double a, double b, double tol,
                        int panels)
{
    /* start from a few panels so that a narrow peak is not missed by the first rule */
    double sum = 0, h = (b - a) / panels;
    for (int i = 0; i < panels; i++) {
        double lo = a + i * h, hi = i == panels - 1 ? b : a + (i + 1) * h, e;
        double v = gk15(f, arg, lo, hi, &e);
        sum += tol > 0 ? adapt(f, arg, lo, hi, v, e, tol / panels, 0) : v;
    }
    return sum;
}

static double upper_normal(double z)
{
    return 0.5 * erfc(z / sqrt(2.0));
}

typedef struct { double w, k; } range_arg;

static double range_integrand(double z, const void *p)
{
    const range_arg *a = p;
    double qa = upper_normal(z), qc = upper_normal(z + a->w);
    if (qa <= 0)
        return 0;
    /* Q(z)^(k−1) − (Q(z) − Q(z+w))^(k−1) = −Q(z)^(k−1) · expm1((k−1)·log1p(−qc/qa)) */
    double r = qc / qa;
    double d = r >= 1 ? pow(qa, a->k - 1) : -pow(qa, a->k - 1) * expm1((a->k - 1) * log1p(-r));
    return exp(-0.5 * z * z) * INV_SQRT_2PI * d;
}

/* P(R > w) for the range R of k standard normals. */
static double range_upper(double w, double k)
{
    if (w <= 0)
        return 1.0;
    range_arg a = {w, k};
    /* the integrand is at most φ(z): beyond |z| = RANGE_Z it adds below k·1e-17 */
    double v = k * integrate(range_integrand, &a, -RANGE_Z, RANGE_Z, 0, RANGE_PANELS);
    return fmin(1.0, fmax(0.0, v));
}

typedef struct { double q, k, df, logc; } outer_arg;

static double outer_integrand(double s, const void *p)
{
    const outer_arg *a = p;
    if (s <= 0)
        return 0;
    double logf = a->logc + (a->df - 1) * log(s) - 0.5 * a->df * s * s;
    return exp(logf) * range_upper(a->q * s, a->k);
}

double sturdy_range_upper(double q, double k, double df)
{
    assert(k >= 2);
    if (isnan(q) || isnan(df) || !(df > 0))
        return NAN;
    if (q <= 0)
        return 1.0;
    if (isinf(df) || df > RANGE_DF_INF)
        return range_upper(q, k);
    outer_arg a = {q, k, df, 0};
    a.logc = log(2.0) + 0.5 * df * log(0.5 * df) - lgamma(0.5 * df);
    /* s = √(χ²_ν/ν) has mean ≈ 1 and sd ≈ 1/√(2ν); its mode is √((ν−1)/ν) */
    double sd = 1.0 / sqrt(2.0 * df);
    double lo = fmax(0.0, 1.0 - RANGE_SPAN * sd), hi = 1.0 + RANGE_SPAN * sd;
    if (df < 2)   /* heavier right tail of s: exp(−ν s²/2) decides the cut */
        hi = fmax(hi, sqrt(2.0 * 80.0 / df));
    /* from RANGE_FIXED_DF residual df the density of s is smooth and narrow enough for
       fixed panels (checked against scipy at df 5 to 200 in xcheck_compare.py); below,
       its long right tail needs the adaptive rule */
    double v = df >= RANGE_FIXED_DF ? integrate(outer_integrand, &a, lo, hi, 0, RANGE_PANELS)
                                    : integrate(outer_integrand, &a, lo, hi, RANGE_TOL, 4);
    return fmin(1.0, fmax(0.0, v));
}

double sturdy_range_quantile(double p, double k, double df)
{
    assert(k >= 2);
    if (!(p > 0 && p < 1) || !(df > 0))
        return NAN;
    /* bracket q with P(Q > q) = 1 − p, then bisect with the Illinois variant of regula
       falsi on the upper tail */
    double target = 1.0 - p;
    double a = 0.0, fa = 1.0 - target;
    double b = 4.0, fb = sturdy_range_upper(b, k, df) - target;
    while (fb > 0) {
        a = b; fa = fb;
        b *= 2;
        fb = sturdy_range_upper(b, k, df) - target;
        if (b > 1e6)
            return NAN;
    }
    int side = 0;
    for (int it = 0; it < 200 && b - a > RANGE_QTOL * fmax(1.0, b); it++) {
        double c = (a * fb - b * fa) / (fb - fa);
        if (!(c > a && c < b))
            c = 0.5 * (a + b);
        double fc = sturdy_range_upper(c, k, df) - target;
        if (fc == 0)
            return c;
        if ((fc > 0) == (fa > 0)) {
            a = c; fa = fc;
            if (side == -1) fb *= 0.5;
            side = -1;
        } else {
            b = c; fb = fc;
            if (side == 1) fa *= 0.5;
            side = 1;
        }
    }
    return 0.5 * (a + b);
}

typedef struct { double c; size_t m; const double *lambda; } dun_arg;

static double dunnett_inner(double z, const void *p)
{
    const dun_arg *a = p;
    double prod = 1.0;
    for (size_t i = 0; i < a->m && prod > 0; i++) {
        double l = a->lambda[i], r = sqrt(1.0 - l * l);
        double hi = (l * z + a->c) / r, lo = (l * z - a->c) / r;
        /* Φ(hi) − Φ(lo) through the tails, accurate when both are far out */
        prod *= 0.5 * (erfc(-hi / sqrt(2.0)) - erfc(-lo / sqrt(2.0)));
    }
    return exp(-0.5 * z * z) * INV_SQRT_2PI * prod;
}

/* P(max |Z-part| ≤ c) with s = 1. */
static double dunnett_cdf_known(double c, size_t m, const double *lambda)
{
    if (c <= 0)
        return 0.0;
    dun_arg a = {c, m, lambda};
    /* smooth in z (φ times a product of smooth steps): fixed panels, as range_upper */
    double v = integrate(dunnett_inner, &a, -RANGE_Z, RANGE_Z, 0, RANGE_PANELS);
    return fmin(1.0, fmax(0.0, v));
}

typedef struct { double c, df, logc; size_t m; const double *lambda; } dun_outer_arg;

static double dunnett_outer(double s, const void *p)
{
    const dun_outer_arg *a = p;
    if (s <= 0)
        return 0;
    double logf = a->logc + (a->df - 1) * log(s) - 0.5 * a->df * s * s;
    /* the upper tail 1 − P, so that small adjusted p keep their accuracy */
    return exp(logf) * (1.0 - dunnett_cdf_known(a->c * s, a->m, a->lambda));
}

double sturdy_manyone_upper(double c, size_t m, const double *lambda, double df)
{
    if (isnan(c) || isnan(df) || !(df > 0) || m == 0)
        return NAN;
    if (c <= 0)
        return 1.0;
    if (isinf(df) || df > RANGE_DF_INF)
        return 1.0 - dunnett_cdf_known(c, m, lambda);
    dun_outer_arg a = {c, df, 0, m, lambda};
    a.logc = log(2.0) + 0.5 * df * log(0.5 * df) - lgamma(0.5 * df);
    double sd = 1.0 / sqrt(2.0 * df);
    double lo = fmax(0.0, 1.0 - RANGE_SPAN * sd), hi = 1.0 + RANGE_SPAN * sd;
    if (df < 2)
        hi = fmax(hi, sqrt(2.0 * 80.0 / df));
    double v = df >= RANGE_FIXED_DF ? integrate(dunnett_outer, &a, lo, hi, 0, RANGE_PANELS)
                                    : integrate(dunnett_outer, &a, lo, hi, RANGE_TOL, 4);
    return fmin(1.0, fmax(0.0, v));
}

double sturdy_manyone_quantile(double p, size_t m, const double *lambda, double df)
{
    if (!(p > 0 && p < 1) || !(df > 0) || m == 0)
        return NAN;
    double target = 1.0 - p;
    double a = 0.0, fa = 1.0 - target;
    double b = 4.0, fb = sturdy_manyone_upper(b, m, lambda, df) - target;
    while (fb > 0) {
        a = b; fa = fb;
        b *= 2;
        fb = sturdy_manyone_upper(b, m, lambda, df) - target;
        if (b > 1e6)
            return NAN;
    }
    int side = 0;
    for (int it = 0; it < 200 && b - a > RANGE_QTOL * fmax(1.0, b); it++) {
        double c = (a * fb - b * fa) / (fb - fa);
        if (!(c > a && c < b))
            c = 0.5 * (a + b);
        double fc = sturdy_manyone_upper(c, m, lambda, df) - target;
        if (fc == 0)
            return c;
        if ((fc > 0) == (fa > 0)) {
            a = c; fa = fc;
            if (side == -1) fb *= 0.5;
            side = -1;
        } else {
            b = c; fb = fc;
            if (side == 1) fa *= 0.5;
            side = 1;
        }
    }
    return 0.5 * (a + b);
}
