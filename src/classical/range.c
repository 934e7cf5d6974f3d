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
 * (7/15 points) with an absolute tolerance far below the accuracy the tests ask for. */
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stddef.h>

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

/* The inner integral over z always uses the same RANGE_PANELS fixed Kronrod panels, so
 * everything in its integrand that does not depend on w is computed once per k: the
 * nodes, φ(z) times the rule's weight, Q(z) and Q(z)^(k−1). An evaluation of P(R > w)
 * then costs one normal tail per node (about half of what it cost before). */
#define RANGE_NODES (RANGE_PANELS * 15)

typedef struct {
    double k;
    double z[RANGE_NODES], wphi[RANGE_NODES], qa[RANGE_NODES], qk1[RANGE_NODES];
} inner_table;

/* the 15 nodes of panel [lo, hi] and their weights h·w_j, in gk15's order */
static void kronrod_nodes(double lo, double hi, double *x, double *w)
{
    double c = 0.5 * (lo + hi), h = 0.5 * (hi - lo);
    x[7] = c;
    w[7] = h * wgk[7];
    for (int j = 0; j < 7; j++) {
        x[j] = c - h * xgk[j];
        x[14 - j] = c + h * xgk[j];
        w[j] = w[14 - j] = h * wgk[j];
    }
}

static void inner_build(inner_table *t, double k)
{
    t->k = k;
    double h = 2.0 * RANGE_Z / RANGE_PANELS;
    for (int i = 0; i < RANGE_PANELS; i++) {
        double lo = -RANGE_Z + i * h, hi = i == RANGE_PANELS - 1 ? RANGE_Z : lo + h;
        double w[15];
        kronrod_nodes(lo, hi, t->z + 15 * i, w);
        for (int j = 0; j < 15; j++) {
            int n = 15 * i + j;
            double z = t->z[n];
            t->wphi[n] = w[j] * exp(-0.5 * z * z) * INV_SQRT_2PI;
            t->qa[n] = upper_normal(z);
            t->qk1[n] = pow(t->qa[n], k - 1);
        }
    }
}

/* P(R > w) for the range R of k standard normals; with dens, also its density f_R(w) =
 * k(k−1) ∫ φ(z) φ(z+w) [Q(z) − Q(z+w)]^(k−2) dz (minus the derivative in w). */
static double range_upper(double w, const inner_table *t, double *dens)
{
    if (w <= 0) {
        if (dens)
            *dens = 0;
        return 1.0;
    }
    double k = t->k, sum = 0, dsum = 0;
    for (int n = 0; n < RANGE_NODES; n++) {
        double qa = t->qa[n];
        /* the integrand is at most φ(z): beyond |z| = RANGE_Z it adds below k·1e-17 */
        if (qa <= 0)
            continue;
        double zw = t->z[n] + w, qc = upper_normal(zw);
        /* Q(z)^(k−1) − (Q(z) − Q(z+w))^(k−1) = −Q(z)^(k−1) · expm1((k−1)·log1p(−qc/qa)),
           written so that small upper tails keep their relative accuracy */
        double r = qc / qa;
        double d = r >= 1 ? t->qk1[n] : -t->qk1[n] * expm1((k - 1) * log1p(-r));
        sum += t->wphi[n] * d;
        if (dens && r < 1)
            dsum += t->wphi[n] * exp(-0.5 * zw * zw) * INV_SQRT_2PI * pow(qa - qc, k - 2);
    }
    if (dens)
        *dens = k * (k - 1) * dsum;
    return fmin(1.0, fmax(0.0, k * sum));
}

typedef struct { double q, logc, df; const inner_table *t; } outer_arg;

static double outer_integrand(double s, const void *p)
{
    const outer_arg *a = p;
    if (s <= 0)
        return 0;
    double logf = a->logc + (a->df - 1) * log(s) - 0.5 * a->df * s * s;
    return exp(logf) * range_upper(a->q * s, a->t, NULL);
}

/* Everything P(Q > q) needs for one (k, df), q aside: the inner table and, where the
 * outer integral uses fixed panels (df ≥ RANGE_FIXED_DF), its nodes s and weights
 * (the rule's weight times the density of s). */
typedef struct {
    inner_table in;
    double df, logc, lo, hi;
    int kind;                    /* 0: ν = ∞ (s = 1); 1: fixed outer panels; 2: adaptive */
    double s[RANGE_NODES], ws[RANGE_NODES];
} range_setup;

static void range_prepare(range_setup *r, double k, double df)
{
    inner_build(&r->in, k);
    r->df = df;
    if (isinf(df) || df > RANGE_DF_INF) {
        r->kind = 0;
        return;
    }
    r->logc = log(2.0) + 0.5 * df * log(0.5 * df) - lgamma(0.5 * df);
    /* s = √(χ²_ν/ν) has mean ≈ 1 and sd ≈ 1/√(2ν); its mode is √((ν−1)/ν) */
    double sd = 1.0 / sqrt(2.0 * df);
    r->lo = fmax(0.0, 1.0 - RANGE_SPAN * sd);
    r->hi = 1.0 + RANGE_SPAN * sd;
    if (df < 2)   /* heavier right tail of s: exp(−ν s²/2) decides the cut */
        r->hi = fmax(r->hi, sqrt(2.0 * 80.0 / df));
    /* from RANGE_FIXED_DF residual df the density of s is smooth and narrow enough for
       fixed panels (checked against scipy at df 5 to 200 in xcheck_compare.py); below,
       its long right tail needs the adaptive rule */
    r->kind = df >= RANGE_FIXED_DF ? 1 : 2;
    if (r->kind != 1)
        return;
    double h = (r->hi - r->lo) / RANGE_PANELS;
    for (int i = 0; i < RANGE_PANELS; i++) {
        double lo = r->lo + i * h, hi = i == RANGE_PANELS - 1 ? r->hi : lo + h;
        kronrod_nodes(lo, hi, r->s + 15 * i, r->ws + 15 * i);
        for (int j = 0; j < 15; j++) {
            int n = 15 * i + j;
            double s = r->s[n];
            r->ws[n] *= s > 0 ? exp(r->logc + (df - 1) * log(s) - 0.5 * df * s * s) : 0;
        }
    }
}

/* P(Q > q); with dens (kinds 0 and 1 only), also minus its derivative in q */
static double range_eval(const range_setup *r, double q, double *dens)
{
    if (q <= 0) {
        if (dens)
            *dens = 0;
        return 1.0;
    }
    if (r->kind == 0)
        return range_upper(q, &r->in, dens);
    double v = 0, dv = 0;
    if (r->kind == 1) {
        for (int n = 0; n < RANGE_NODES; n++) {
            if (r->ws[n] == 0)
                continue;
            double f, u = range_upper(q * r->s[n], &r->in, dens ? &f : NULL);
            v += r->ws[n] * u;
            if (dens)
                dv += r->ws[n] * r->s[n] * f;
        }
        if (dens)
            *dens = dv;
    } else {
        assert(!dens);
        outer_arg a = {q, r->logc, r->df, &r->in};
        v = integrate(outer_integrand, &a, r->lo, r->hi, RANGE_TOL, 4);
    }
    return fmin(1.0, fmax(0.0, v));
}

double sturdy_range_upper(double q, double k, double df)
{
    assert(k >= 2);
    if (isnan(q) || isnan(df) || !(df > 0))
        return NAN;
    if (q <= 0)
        return 1.0;
    range_setup r;
    range_prepare(&r, k, df);
    return range_eval(&r, q, NULL);
}

double sturdy_range_quantile(double p, double k, double df)
{
    assert(k >= 2);
    if (!(p > 0 && p < 1) || !(df > 0))
        return NAN;
    range_setup r;
    range_prepare(&r, k, df);
    double target = 1.0 - p;
    /* bracket q with P(Q > q) = 1 − p: P(Q > a) > target ≥ P(Q > b) */
    double a = 0.0, fa = 1.0 - target;
    double b = 4.0, fb;
    for (;;) {
        fb = range_eval(&r, b, NULL) - target;
        if (fb <= 0)
            break;
        a = b;
        fa = fb;
        b *= 2;
        if (b > 1e6)
            return NAN;
    }
    if (r.kind != 2) {
        /* Newton's method on g(q) = log P(Q > q) − log(1 − p), whose derivative is
           −f_Q(q)/P(Q > q); the log tail is close to a parabola, so from inside the
           bracket it converges in a few steps. A step that leaves the bracket is
           replaced by bisection. */
        double q = fa > -fb ? b : a > 0 ? a : 0.5 * b;
        for (int it = 0; it < 100; it++) {
            double dens, u = range_eval(&r, q, &dens), g = log(u) - log(target);
            if (u - target > 0) {
                a = q;
            } else {
                b = q;
            }
            double next = u > 0 && dens > 0 ? q + g * u / dens : NAN;
            /* a step this small is the remaining error: done, even where rounding has
               put the root a hair outside the bracket */
            if (fabs(next - q) <= RANGE_QTOL * fmax(1.0, q))
                return next;
            if (!(next > a && next < b))
                next = 0.5 * (a + b);
            if (b - a <= RANGE_QTOL * fmax(1.0, b))
                return next;
            q = next;
        }
        return q;
    }
    /* below RANGE_FIXED_DF (adaptive outer rule, no density): the Illinois variant of
       regula falsi on the upper tail */
    int side = 0;
    for (int it = 0; it < 200 && b - a > RANGE_QTOL * fmax(1.0, b); it++) {
        double c = (a * fb - b * fa) / (fb - fa);
        if (!(c > a && c < b))
            c = 0.5 * (a + b);
        double fc = range_eval(&r, c, NULL) - target;
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
