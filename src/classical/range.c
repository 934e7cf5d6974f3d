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
 * upper tails keep their relative accuracy. Both integrals use fixed panels of the
 * 15-point Kronrod rule: z over [−8.5, 8.5]; s itself from 5 df, t = log s below (where
 * s has a long right tail). The tails agree with scipy to 1e-10 and the quantiles to
 * 1e-9 over k 2–20 and df 1–∞ (tests/xcheck_compare.py). The quantile is found by
 * Newton's method with the range's own density, all w-free parts of the integrands
 * tabulated once per (k, df).
 *
 * Many-to-one (Dunnett 1955): m differences with a common control whose correlations
 * have the product form ρ_ij = λ_iλ_j (|λ_i| < 1) are, up to the common s,
 * T_i = (λ_i Z + √(1−λ_i²) Z_i)/s with Z, Z_i independent N(0,1), so
 *   P(max |T_i| ≤ c) = ∫₀^∞ f_s(s) ∫ φ(z) Π_i [Φ((λ_i z + cs)/√(1−λ_i²))
 *                                            − Φ((λ_i z − cs)/√(1−λ_i²))] dz ds,
 * the same outer integral over s as the range and an inner one over z, on the same
 * nodes. */
#include <assert.h>
#include <math.h>
#include <stdatomic.h>
#include <stddef.h>
#include <stdlib.h>

#include "classical/range.h"
#include "core/core.h"
#include "sturdy/dist.h"

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
/* Residual df from which the outer integral runs over s itself; below, over t = log s,
 * where the long right tail of s becomes a short one and the density is smooth and
 * single-peaked for every ν (checked against scipy at df 1 to 4.9 in xcheck_compare.py). */
#define RANGE_FIXED_DF 5
/* The outer integral over t: panels at most this wide (the range's tail P(R > q e^t)
 * falls from 1 to 0 over about 1.5 in t for k = 50), over a span of at most
 * RANGE_LOG_SPAN (see range_prepare). */
#define RANGE_LOG_WIDTH 0.5
#define RANGE_LOG_PANELS_MAX 100
#define RANGE_LOG_SPAN (RANGE_LOG_PANELS_MAX * RANGE_LOG_WIDTH)
#define RANGE_OUTER_MAX (RANGE_LOG_PANELS_MAX * 15)
/* Half-width of the z range of the inner integral: 2·Q(8.5) ≈ 2e-17. */
#define RANGE_Z 8.5

/* Kronrod 15-point nodes and weights (Kronrod 1965; as tabulated by Piessens et al.
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

/* The range's tail P(R > w) for one k, tabulated (sturdy_range_table): g(w) = ln P(R > w)
 * is smooth on [0, ∞) (a polynomial in w near 0, close to −w²/4 far out), so on
 * [0, RANGE_TAB_WMAX] it is a Chebyshev series of RANGE_TAB_DEG terms on each panel of
 * width RANGE_TAB_H, through exact values at the Chebyshev points (16 evaluations per
 * panel, about 0.55 M instructions). A panel is built the first time an evaluation needs
 * it: a run uses about a third to a half of them (bal2000's five families: 24 to 77 of
 * 160), and building all took 0.44 G instructions of its set-up. An evaluation then costs
 * one short series instead of an integral over RANGE_NODES normal tails; beyond the table
 * (P below 1e-170) the integral is taken. Measured against the integral over k 3–200,
 * df 1–∞ and tails 0.5 to 1e-9: tails within 2e-14 relative and quantiles within 2e-15
 * for k ≤ 100, 1e-12 and 7e-13 at k = 200 (tests/xcheck_compare.py, "table"). */
#define RANGE_TAB_H 0.25
#define RANGE_TAB_PANELS 160
#define RANGE_TAB_WMAX (RANGE_TAB_PANELS * RANGE_TAB_H)
#define RANGE_TAB_DEG 16

/* The panels, filled on demand by whichever thread first needs one (compare.c evaluates
 * in parallel): state 0 not built, 1 being built, 2 ready (its series written before the
 * state, released and acquired). A thread that finds a panel being built computes its
 * own copy rather than wait: the same arithmetic, so the same bits either way. */
typedef struct {
    _Atomic int state[RANGE_TAB_PANELS];
    double c[RANGE_TAB_PANELS][RANGE_TAB_DEG];   /* g's series, per panel */
    double dc[RANGE_TAB_PANELS][RANGE_TAB_DEG];  /* its derivative's, in w */
} range_panels;

struct sturdy_range_table {
    double k;
    inner_table in;
    range_panels *p;
};

static double tab_cheb(const double *c, double u)
{
    double b1 = 0.0, b2 = 0.0;
    for (int m = RANGE_TAB_DEG - 1; m >= 1; m--) {
        double t = 2.0 * u * b1 - b2 + c[m];
        b2 = b1;
        b1 = t;
    }
    return u * b1 - b2 + 0.5 * c[0];
}

/* panel i's series of g (c) and of its derivative in w (d) */
static void panel_build(const inner_table *in, int i, double *c, double *d)
{
    const double pi = 3.14159265358979323846;
    double lo = i * RANGE_TAB_H, f[RANGE_TAB_DEG];
    for (int j = 0; j < RANGE_TAB_DEG; j++) {
        double u = cos(pi * (j + 0.5) / RANGE_TAB_DEG);
        double w = lo + 0.5 * RANGE_TAB_H * (1.0 + u);
        f[j] = log(range_upper(w, in, NULL));
    }
    for (int m = 0; m < RANGE_TAB_DEG; m++) {
        double sum = 0.0;
        for (int j = 0; j < RANGE_TAB_DEG; j++)
            sum += f[j] * cos(pi * m * (j + 0.5) / RANGE_TAB_DEG);
        c[m] = 2.0 * sum / RANGE_TAB_DEG;
    }
    /* the derivative's series (in u, then ×2/H for w): c'_{m−1} = c'_{m+1} + 2m c_m */
    d[RANGE_TAB_DEG - 1] = 0.0;
    d[RANGE_TAB_DEG - 2] = 2.0 * (RANGE_TAB_DEG - 1) * c[RANGE_TAB_DEG - 1];
    for (int m = RANGE_TAB_DEG - 2; m >= 1; m--)
        d[m - 1] = (m + 1 < RANGE_TAB_DEG ? d[m + 1] : 0.0) + 2.0 * m * c[m];
    for (int m = 0; m < RANGE_TAB_DEG; m++)
        d[m] *= 2.0 / RANGE_TAB_H;
}

sturdy_range_table *sturdy_range_table_new(double k)
{
    if (!(k > 2))
        return NULL;
    sturdy_range_table *t = sturdy_malloc(sizeof *t);
    range_panels *p = sturdy_malloc(sizeof *p);
    if (!t || !p) {
        sturdy_free(t);
        sturdy_free(p);
        return NULL;
    }
    t->k = k;
    t->p = p;
    inner_build(&t->in, k);
    for (int i = 0; i < RANGE_TAB_PANELS; i++)
        atomic_init(&p->state[i], 0);
    return t;
}

void sturdy_range_table_free(sturdy_range_table *t)
{
    if (!t)
        return;
    sturdy_free(t->p);
    sturdy_free(t);
}

/* P(R > w) (and, with dens, f_R(w)) from the table where it reaches, else the integral */
static double inner_upper(const sturdy_range_table *tab, const inner_table *in, double w,
                          double *dens)
{
    if (!tab || !(w > 0) || !(w < RANGE_TAB_WMAX))
        return range_upper(w, in, dens);
    int i = (int)(w / RANGE_TAB_H);
    if (i >= RANGE_TAB_PANELS)
        i = RANGE_TAB_PANELS - 1;
    range_panels *p = tab->p;
    const double *c = p->c[i], *dc = p->dc[i];
    double own_c[RANGE_TAB_DEG], own_dc[RANGE_TAB_DEG];
    int state = atomic_load_explicit(&p->state[i], memory_order_acquire);
    if (state != 2) {
        int expect = 0;
        if (state == 0 && atomic_compare_exchange_strong(&p->state[i], &expect, 1)) {
            panel_build(&tab->in, i, p->c[i], p->dc[i]);
            atomic_store_explicit(&p->state[i], 2, memory_order_release);
        } else {
            panel_build(&tab->in, i, own_c, own_dc);
            c = own_c;
            dc = own_dc;
        }
    }
    double u = 2.0 * (w - i * RANGE_TAB_H) / RANGE_TAB_H - 1.0;
    double v = exp(tab_cheb(c, u));
    if (dens)
        *dens = -v * tab_cheb(dc, u);
    return fmin(1.0, v);
}

/* Everything P(Q > q) needs for one (k, df), q aside: the inner table and the outer
 * integral's nodes s with their weights (the rule's weight times the density of s). */
typedef struct {
    inner_table in;
    const sturdy_range_table *tab; /* NULL, or the tabulated inner tail of this k */
    int kind;                    /* 0: ν = ∞ (s = 1); 1: the outer integral on nodes */
    int nout;                    /* outer nodes in use */
    double s[RANGE_OUTER_MAX], ws[RANGE_OUTER_MAX];
} range_setup;

/* log of the density of t = log s, less its constant: ν t − ν e^{2t}/2 */
static double log_t_density(double t, double df)
{
    return df * t - 0.5 * df * exp(2.0 * t);
}

static void range_prepare(range_setup *r, double k, double df, const sturdy_range_table *tab)
{
    r->tab = tab && tab->k == k ? tab : NULL;
    if (r->tab)
        r->in = tab->in;
    else
        inner_build(&r->in, k);
    if (isinf(df) || df > RANGE_DF_INF) {
        r->kind = 0;
        return;
    }
    double logc = log(2.0) + 0.5 * df * log(0.5 * df) - lgamma(0.5 * df);
    r->kind = 1;
    if (df >= RANGE_FIXED_DF) {
        /* the density of s is smooth and narrow enough for fixed panels over s (checked
           against scipy at df 5 to 200 in xcheck_compare.py); s = √(χ²_ν/ν) has mean ≈ 1
           and sd ≈ 1/√(2ν) */
        double sd = 1.0 / sqrt(2.0 * df);
        double slo = fmax(0.0, 1.0 - RANGE_SPAN * sd), shi = 1.0 + RANGE_SPAN * sd;
        double h = (shi - slo) / RANGE_PANELS;
        r->nout = RANGE_NODES;
        for (int i = 0; i < RANGE_PANELS; i++) {
            double lo = slo + i * h, hi = i == RANGE_PANELS - 1 ? shi : lo + h;
            kronrod_nodes(lo, hi, r->s + 15 * i, r->ws + 15 * i);
            for (int j = 0; j < 15; j++) {
                int n = 15 * i + j;
                double s = r->s[n];
                r->ws[n] *= s > 0 ? exp(logc + (df - 1) * log(s) - 0.5 * df * s * s) : 0;
            }
        }
        return;
    }
    /* over t = log s: f_s(s) ds = exp(logc + ν t − ν e^{2t}/2) dt, peak at t = 0. The
       span reaches where the density is e^−45 of its peak (below 1e-19): the left tail
       falls as e^{νt} (t = −45/ν at ν = 1), the right one as exp(−ν e^{2t}/2); the span
       stops at [−45, 4.5], which cuts the far left tail of s only below ν = 1. */
    double peak = log_t_density(0.0, df), tlo = -1.0, thi = 0.5;
    while (log_t_density(tlo, df) - peak > -45.0 && tlo > -45.0) tlo -= 1.0;
    while (log_t_density(thi, df) - peak > -45.0 && thi < 4.5) thi += 0.5;
    int panels = (int)ceil((thi - tlo) / RANGE_LOG_WIDTH - 1e-9);
    double h = (thi - tlo) / panels;
    assert(panels * 15 <= RANGE_OUTER_MAX);
    r->nout = panels * 15;
    for (int i = 0; i < panels; i++) {
        double lo = tlo + i * h, hi = i == panels - 1 ? thi : lo + h;
        kronrod_nodes(lo, hi, r->s + 15 * i, r->ws + 15 * i);
        for (int j = 0; j < 15; j++) {
            int n = 15 * i + j;
            double t = r->s[n];
            r->ws[n] *= exp(logc + log_t_density(t, df));
            r->s[n] = exp(t);
        }
    }
}

/* P(Q > q); with dens, also minus its derivative in q */
static double range_eval(const range_setup *r, double q, double *dens)
{
    if (q <= 0) {
        if (dens)
            *dens = 0;
        return 1.0;
    }
    if (r->kind == 0)
        return inner_upper(r->tab, &r->in, q, dens);
    double v = 0, dv = 0;
    for (int n = 0; n < r->nout; n++) {
        if (r->ws[n] == 0)
            continue;
        double f, u = inner_upper(r->tab, &r->in, q * r->s[n], dens ? &f : NULL);
        v += r->ws[n] * u;
        if (dens)
            dv += r->ws[n] * r->s[n] * f;
    }
    if (dens)
        *dens = dv;
    return fmin(1.0, fmax(0.0, v));
}

/* Two means: Q/√2 = |t_ν|, so P(Q > q) = P(F(1, ν) > q²/2) (ν = ∞: 2·Q_N(q/√2)). */
static double range2_upper(double q, double df)
{
    if (isinf(df) || df > RANGE_DF_INF)
        return erfc(0.5 * q);
    return sturdy_f_sf(0.5 * q * q, 1.0, df);
}

double sturdy_range_upper(double q, double k, double df)
{
    return sturdy_range_upper_tab(NULL, q, k, df);
}

double sturdy_range_upper_tab(const sturdy_range_table *tab, double q, double k, double df)
{
    assert(k >= 2);
    if (isnan(q) || isnan(df) || !(df > 0))
        return NAN;
    if (q <= 0)
        return 1.0;
    if (k == 2)
        return range2_upper(q, df);
    range_setup r;
    range_prepare(&r, k, df, tab);
    return range_eval(&r, q, NULL);
}

double sturdy_range_quantile(double p, double k, double df)
{
    return sturdy_range_quantile_tab(NULL, p, k, df);
}

double sturdy_range_quantile_tab(const sturdy_range_table *tab, double p, double k, double df)
{
    assert(k >= 2);
    if (!(p > 0 && p < 1) || !(df > 0))
        return NAN;
    if (k == 2)
        return isinf(df) || df > RANGE_DF_INF ? sqrt(2.0) * -sturdy_norm_ppf(0.5 * (1.0 - p))
                                              : sqrt(2.0 * sturdy_f_isf(1.0 - p, 1.0, df));
    range_setup r;
    range_prepare(&r, k, df, tab);
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

/* P(max_i |λ_i Z + √(1−λ_i²) Z_i| ≤ c) (s = 1), on the inner table's z nodes: smooth in z
 * (φ times a product of smooth steps), as the range's inner integral. */
static double dunnett_known(double c, size_t m, const double *lambda, const inner_table *t)
{
    if (c <= 0)
        return 0.0;
    double v = 0.0;
    for (int n = 0; n < RANGE_NODES; n++) {
        double z = t->z[n], prod = 1.0;
        for (size_t i = 0; i < m && prod > 0; i++) {
            double l = lambda[i], r = sqrt(1.0 - l * l);
            double hi = (l * z + c) / r, lo = (l * z - c) / r;
            /* Φ(hi) − Φ(lo) through the tails, accurate when both are far out */
            prod *= 0.5 * (erfc(-hi / sqrt(2.0)) - erfc(-lo / sqrt(2.0)));
        }
        v += t->wphi[n] * prod;
    }
    return fmin(1.0, fmax(0.0, v));
}

/* P(max |T_i| > c) on the outer nodes of r (its k is not used) */
static double manyone_eval(const range_setup *r, double c, size_t m, const double *lambda)
{
    if (c <= 0)
        return 1.0;
    if (r->kind == 0)
        return 1.0 - dunnett_known(c, m, lambda, &r->in);
    double v = 0.0;
    for (int n = 0; n < r->nout; n++)
        if (r->ws[n] != 0)   /* the upper tail 1 − P, so that small adjusted p keep their accuracy */
            v += r->ws[n] * (1.0 - dunnett_known(c * r->s[n], m, lambda, &r->in));
    return fmin(1.0, fmax(0.0, v));
}

double sturdy_manyone_upper(double c, size_t m, const double *lambda, double df)
{
    if (isnan(c) || isnan(df) || !(df > 0) || m == 0)
        return NAN;
    if (c <= 0)
        return 1.0;
    range_setup r;
    range_prepare(&r, 2.0, df, NULL);
    return manyone_eval(&r, c, m, lambda);
}

double sturdy_manyone_quantile(double p, size_t m, const double *lambda, double df)
{
    if (!(p > 0 && p < 1) || !(df > 0) || m == 0)
        return NAN;
    range_setup r;
    range_prepare(&r, 2.0, df, NULL);
    /* bracket, then the Illinois variant of regula falsi on the upper tail */
    double target = 1.0 - p;
    double a = 0.0, fa = 1.0 - target;
    double b = 4.0, fb = manyone_eval(&r, b, m, lambda) - target;
    while (fb > 0) {
        a = b; fa = fb;
        b *= 2;
        fb = manyone_eval(&r, b, m, lambda) - target;
        if (b > 1e6)
            return NAN;
    }
    int side = 0;
    for (int it = 0; it < 200 && b - a > RANGE_QTOL * fmax(1.0, b); it++) {
        double c = (a * fb - b * fa) / (fb - fa);
        if (!(c > a && c < b))
            c = 0.5 * (a + b);
        double fc = manyone_eval(&r, c, m, lambda) - target;
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

/* Quantiles for many df at once (a Games–Howell family: one k, a Welch df per pair).
 * The quantile is an analytic, slowly varying function of x = 1/ν, so over the family's
 * range of x it is interpolated by a Chebyshev series through RANGE_CHEB nodes, each an
 * exact quantile; the series is kept only when it matches exact quantiles at both ends
 * of the range and at its middle to RANGE_CHEB_TOL relative, else every df gets its own
 * exact quantile. Few distinct df: exact ones. */
#define RANGE_CHEB 12
#define RANGE_PI 3.14159265358979323846
#define RANGE_CHEB_MIN 16            /* distinct df from which interpolation pays */
#define RANGE_CHEB_TOL 1e-11

static double cheb_eval(const double *c, double a, double b, double x)
{
    double u = (2.0 * x - a - b) / (b - a), b1 = 0.0, b2 = 0.0;
    for (int m = RANGE_CHEB - 1; m >= 1; m--) {
        double t = 2.0 * u * b1 - b2 + c[m];
        b2 = b1;
        b1 = t;
    }
    return u * b1 - b2 + 0.5 * c[0];
}

int sturdy_range_quantiles(double p, double k, const double *df, size_t n, double *q,
                           double *work)
{
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (df[i] > 0 && !isnan(df[i]))
            work[m++] = 1.0 / df[i];
    qsort(work, m, sizeof *work, sturdy_cmp_double);
    size_t distinct = 0;
    for (size_t i = 0; i < m; i++)
        distinct += i == 0 || work[i] != work[i - 1];
    double a = m ? work[0] : 0.0, b = m ? work[m - 1] : 0.0;
    if (k > 2 && distinct >= RANGE_CHEB_MIN && b > a) {
        double f[RANGE_CHEB], c[RANGE_CHEB];
        for (int j = 0; j < RANGE_CHEB; j++) {
            double x = 0.5 * (a + b) + 0.5 * (b - a) * cos(RANGE_PI * (j + 0.5) / RANGE_CHEB);
            f[j] = sturdy_range_quantile(p, k, x > 0 ? 1.0 / x : INFINITY);
        }
        for (int j = 0; j < RANGE_CHEB; j++) {
            double sum = 0.0;
            for (int i = 0; i < RANGE_CHEB; i++)
                sum += f[i] * cos(RANGE_PI * j * (i + 0.5) / RANGE_CHEB);
            c[j] = 2.0 * sum / RANGE_CHEB;
        }
        int good = 1;
        const double check[3] = {a, 0.5 * (a + b), b};
        for (int j = 0; j < 3 && good; j++) {
            double exact = sturdy_range_quantile(p, k, check[j] > 0 ? 1.0 / check[j] : INFINITY);
            double approx = cheb_eval(c, a, b, check[j]);
            good = isfinite(exact) && fabs(approx - exact) <= RANGE_CHEB_TOL * exact;
        }
        if (good) {
            for (size_t i = 0; i < n; i++)
                q[i] = df[i] > 0 && !isnan(df[i]) ? cheb_eval(c, a, b, 1.0 / df[i]) : NAN;
            return 1;
        }
    }
    /* exact, once per distinct df (a family under Tukey–Kramer has one) */
    for (size_t i = 0; i < n; i++) {
        q[i] = NAN;
        for (size_t j = 0; j < i; j++)
            if (df[j] == df[i]) {
                q[i] = q[j];
                break;
            }
        if (isnan(q[i]))
            q[i] = sturdy_range_quantile(p, k, df[i]);
    }
    return 0;
}
