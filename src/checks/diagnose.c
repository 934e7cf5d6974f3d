/* diagnose.c — residual diagnostics on plain arrays: Shapiro–Wilk (AS R94), moments,
 * Brown–Forsythe, studentized residuals. */
#include "core/core.h"
#include "sturdy/diagnose.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>

#include "core/core.h"
#include "sturdy/dist.h"

/* Shapiro–Wilk's polynomial approximations are calibrated for 3 ≤ n ≤ 5000 (Royston
 * 1995). */
#define SW_N_MIN 3
#define SW_N_MAX 5000

/* AS R94 reports this p when W is below the range of its n ≤ 11 transformation
 * (log(1 − W) ≥ γ(n)); we keep the published value. */
#define SW_P_FLOOR 1e-19

/* Brown–Forsythe: the within-group sum of squares of the absolute deviations counts as
 * zero below n·(BF_NOISE·max|x|)², the size rounding alone gives it: each deviation
 * |x − median| carries an error of a few ulps of max|x| (groups of two rows have
 * equal deviations, which rounding may make differ in the last bits). */
#define BF_NOISE (16.0 * DBL_EPSILON)

#define PI 3.14159265358979323846264338327950288

/* ---------------- Shapiro–Wilk (Royston 1995, AS R94) ---------------- */

/* cc[0] + cc[1] x + … + cc[nord−1] x^(nord−1), evaluated as AS R94's POLY does. */
static double poly(const double *cc, int nord, double x)
{
    double ret = cc[0];
    if (nord > 1) {
        double p = x * cc[nord - 1];
        for (int j = nord - 2; j > 0; j--) p = (p + cc[j]) * x;
        ret += p;
    }
    return ret;
}

/* Royston's (1992, 1995) approximations: c1, c2 correct the two largest coefficients
 * (in 1/√n); g bounds log(1 − W) for n ≤ 11; c3, c4 give the mean and log-sd of
 * −log(γ − log(1 − W)) for 4 ≤ n ≤ 11; c5, c6 those of log(1 − W) in log n for n ≥ 12. */
static const double sw_g[2] = {-2.273, 0.459};
static const double sw_c1[6] = {0.0, 0.221157, -0.147981, -2.07119, 4.434685, -2.706056};
static const double sw_c2[6] = {0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633};
static const double sw_c3[4] = {0.544, -0.39978, 0.025054, -6.714e-4};
static const double sw_c4[4] = {1.3822, -0.77857, 0.062767, -0.0020322};
static const double sw_c5[4] = {-1.5861, -0.31082, -0.083751, 0.0038915};
static const double sw_c6[3] = {-0.4803, -0.082676, 0.0030302};

/* The coefficients a[1..n/2] (a[0] unused) of the largest order statistics. */
static void sw_coefficients(size_t n, double *a)
{
    size_t nn2 = n / 2;
    if (n == 3) {
        a[1] = sqrt(0.5);
        return;
    }
    double an = (double)n, an25 = an + 0.25, summ2 = 0.0;
    for (size_t i = 1; i <= nn2; i++) { /* Blom-type normal scores, stored in a[] */
        a[i] = sturdy_norm_ppf(((double)i - 0.375) / an25);
        summ2 += a[i] * a[i];
    }
    summ2 *= 2.0;
    double ssumm2 = sqrt(summ2), rsn = 1.0 / sqrt(an);
    double m1 = a[1], m2 = a[2];
    double a1 = poly(sw_c1, 6, rsn) - m1 / ssumm2, fac;
    size_t i1;
    if (n > 5) {
        double a2 = -m2 / ssumm2 + poly(sw_c2, 6, rsn);
        fac = sqrt((summ2 - 2.0 * m1 * m1 - 2.0 * m2 * m2) /
                   (1.0 - 2.0 * a1 * a1 - 2.0 * a2 * a2));
        a[2] = a2;
        i1 = 3;
    } else {
        fac = sqrt((summ2 - 2.0 * m1 * m1) / (1.0 - 2.0 * a1 * a1));
        i1 = 2;
    }
    a[1] = a1;
    for (size_t i = i1; i <= nn2; i++) a[i] = -a[i] / fac;
}

/* 1 − W from sorted y, as 1 − (squared correlation of y with the antisymmetric
 * coefficient vector), in AS R94's form that keeps 1 − W precise when W ≈ 1. The data
 * are centred on their middle value and scaled by the range first. */
static double sw_one_minus_w(const double *y, size_t n, const double *a)
{
    double range = y[n - 1] - y[0], mid = y[n / 2], sx = 0.0;
    for (size_t i = 0; i < n; i++) sx += (y[i] - mid) / range;
    sx /= (double)n;
    double ssa = 0.0, ssx = 0.0, sax = 0.0;
    for (size_t i = 0, j = n - 1; i < n; i++, j--) {
        /* the coefficients sum to zero, so they need no centring */
        double asa = i < j ? -a[i + 1] : i > j ? a[j + 1] : 0.0;
        double xsx = (y[i] - mid) / range - sx;
        ssa += asa * asa;
        ssx += xsx * xsx;
        sax += asa * xsx;
    }
    double ssassx = sqrt(ssa * ssx);
    return (ssassx - sax) * (ssassx + sax) / (ssa * ssx);
}

/* p of W (Royston 1995): exact for n = 3, else the normalising transformations. */
static double sw_pvalue(size_t n, double w, double w1)
{
    if (n == 3) { /* P(W ≤ w) = (6/π)(asin √w − π/3) */
        double p = 6.0 / PI * (asin(sqrt(w)) - PI / 3.0);
        return p < 0.0 ? 0.0 : p;
    }
    if (w1 <= 0.0) return 1.0;
    double an = (double)n, y = log(w1), m, s;
    if (n <= 11) {
        double gamma = poly(sw_g, 2, an);
        if (y >= gamma) return SW_P_FLOOR;
        y = -log(gamma - y);
        m = poly(sw_c3, 4, an);
        s = exp(poly(sw_c4, 4, an));
    } else {
        double xx = log(an);
        m = poly(sw_c5, 4, xx);
        s = exp(poly(sw_c6, 3, xx));
    }
    return sturdy_norm_cdf(-(y - m) / s); /* upper tail, precise when small */
}

sturdy_status sturdy_shapiro_wilk(const double *x, size_t n, double *w, double *p, char *err)
{
    if (n < SW_N_MIN || n > SW_N_MAX)
        return sturdy_fail(err, STURDY_EMODEL,
                           "Shapiro-Wilk needs between %d and %d values (Royston 1995), "
                           "got %zu", SW_N_MIN, SW_N_MAX, n);
    for (size_t i = 0; i < n; i++)
        if (!isfinite(x[i]))
            return sturdy_fail(err, STURDY_EDATA, "Shapiro-Wilk: value %zu is not finite",
                               i + 1);
    double *y = sturdy_malloc(n * sizeof *y), *a = sturdy_malloc((n / 2 + 1) * sizeof *a);
    if (!y || !a) {
        sturdy_free(y);
        sturdy_free(a);
        return sturdy_fail(err, STURDY_EINTERNAL, "Shapiro-Wilk: out of memory");
    }
    for (size_t i = 0; i < n; i++) y[i] = x[i];
    qsort(y, n, sizeof *y, sturdy_cmp_double);
    if (y[n - 1] == y[0] || !isfinite(y[n - 1] - y[0])) {
        int equal = y[n - 1] == y[0];
        sturdy_free(y);
        sturdy_free(a);
        return equal ? sturdy_fail(err, STURDY_EMODEL, "Shapiro-Wilk: all values are equal")
                     : sturdy_fail(err, STURDY_EDATA,
                                   "Shapiro-Wilk: the range of the values overflows a double");
    }
    sw_coefficients(n, a);
    double w1 = sw_one_minus_w(y, n, a);
    sturdy_free(y);
    sturdy_free(a);
    if (w1 < 0.0) w1 = 0.0; /* W ≤ 1 by Cauchy–Schwarz; rounding may overshoot */
    double wv = 1.0 - w1;
    if (w) *w = wv;
    if (p) *p = sw_pvalue(n, wv, w1);
    return STURDY_OK;
}

/* ---------------- moments ---------------- */

void sturdy_moments(const double *x, size_t n, double *skewness, double *excess_kurtosis)
{
    double g1 = NAN, g2 = NAN;
    if (n >= 2) {
        /* Two passes around x[0] first, so equal values give exactly zero moments. */
        double shift = x[0], mean = 0.0;
        for (size_t i = 0; i < n; i++) mean += x[i] - shift;
        mean /= (double)n;
        double m2 = 0.0, m3 = 0.0, m4 = 0.0;
        for (size_t i = 0; i < n; i++) {
            double d = (x[i] - shift) - mean, d2 = d * d;
            m2 += d2;
            m3 += d2 * d;
            m4 += d2 * d2;
        }
        m2 /= (double)n;
        m3 /= (double)n;
        m4 /= (double)n;
        if (m2 > 0.0) {
            g1 = m3 / (m2 * sqrt(m2));
            g2 = m4 / (m2 * m2) - 3.0;
        }
    }
    if (skewness) *skewness = g1;
    if (excess_kurtosis) *excess_kurtosis = g2;
}

/* ---------------- Brown–Forsythe ---------------- */

/* Median of v[0..m) (m ≥ 1), sorting v in place. */
static double median_sorted_in_place(double *v, size_t m)
{
    qsort(v, m, sizeof *v, sturdy_cmp_double);
    return m % 2 ? v[m / 2] : (v[m / 2 - 1] + v[m / 2]) / 2.0;
}

/* The arguments make sense: groups exist, every label is one of them, every value is
 * finite. */
static sturdy_status bf_check_input(const double *x, const size_t *group, size_t n,
                                    size_t ngroups, char *err)
{
    if (ngroups == 0)
        return sturdy_fail(err, STURDY_EMODEL, "Brown-Forsythe: no groups");
    for (size_t i = 0; i < n; i++) {
        if (group[i] >= ngroups)
            return sturdy_fail(err, STURDY_EINTERNAL,
                               "Brown-Forsythe: row %zu has group %zu of %zu", i + 1,
                               group[i], ngroups);
        if (!isfinite(x[i]))
            return sturdy_fail(err, STURDY_EDATA, "Brown-Forsythe: value %zu is not finite",
                               i + 1);
    }
    return STURDY_OK;
}

/* med[g] = the median of each non-empty group, whose rows are rows[start[g] ..
 * start[g + 1]); returns the number of non-empty groups, or SIZE_MAX when out of
 * memory. */
static size_t group_medians(const double *x, const size_t *start, const size_t *rows,
                            size_t ngroups, double *med)
{
    size_t n = start[ngroups], k = 0;
    double *v = sturdy_malloc((n ? n : 1) * sizeof *v);
    if (!v)
        return (size_t)-1;
    for (size_t j = 0; j < n; j++) v[j] = x[rows[j]];
    for (size_t g = 0; g < ngroups; g++) {
        size_t m = start[g + 1] - start[g];
        if (m == 0) continue;
        k++;
        med[g] = median_sorted_in_place(v + start[g], m);
    }
    sturdy_free(v);
    return k;
}

/* The one-way ANOVA on z = |x − median of its group| (Brown & Forsythe 1974). */
typedef struct {
    size_t nn, kk;   /* rows and non-empty groups that take part */
    double ssb, ssw; /* between- and within-group sums of squares of z */
    double xmax;     /* max |x| over every row: the scale of the rounding in z */
} bf_sums;

/* The sums over the rows that take part: every row, or with drop_zero all but, in each
 * group of odd size (start: group boundaries), one row equal to the median. */
static sturdy_status bf_anova_sums(const double *x, const size_t *group, size_t n,
                                   size_t ngroups, const size_t *start, const double *med,
                                   int drop_zero, bf_sums *a, char *err)
{
    size_t *cnt = sturdy_calloc(ngroups, sizeof *cnt);
    double *zsum = sturdy_calloc(ngroups, sizeof *zsum);
    unsigned char *skip = sturdy_calloc(n ? n : 1, 1), *dropped = sturdy_calloc(ngroups, 1);
    if (!cnt || !zsum || !skip || !dropped) {
        sturdy_free(cnt); sturdy_free(zsum); sturdy_free(skip); sturdy_free(dropped);
        return sturdy_fail(err, STURDY_EINTERNAL, "Brown-Forsythe: out of memory");
    }
    for (size_t i = 0; i < n; i++) {
        size_t g = group[i], m = start[g + 1] - start[g];
        if (drop_zero && m % 2 == 1 && !dropped[g] && x[i] == med[g]) {
            dropped[g] = 1;
            skip[i] = 1;
            continue;
        }
        cnt[g]++;
    }
    a->nn = a->kk = 0;
    for (size_t g = 0; g < ngroups; g++) {
        a->nn += cnt[g];
        a->kk += cnt[g] > 0;
    }
    double ztot = 0.0;
    a->xmax = 0.0;
    for (size_t i = 0; i < n; i++) {
        if (fabs(x[i]) > a->xmax) a->xmax = fabs(x[i]);
        if (skip[i]) continue;
        double z = fabs(x[i] - med[group[i]]);
        zsum[group[i]] += z;
        ztot += z;
    }
    double zbar = a->nn ? ztot / (double)a->nn : 0.0;
    a->ssb = a->ssw = 0.0;
    for (size_t g = 0; g < ngroups; g++) {
        if (cnt[g] == 0) continue;
        double d = zsum[g] / (double)cnt[g] - zbar;
        a->ssb += (double)cnt[g] * d * d;
    }
    for (size_t i = 0; i < n; i++) {
        if (skip[i]) continue;
        size_t g = group[i];
        double d = fabs(x[i] - med[g]) - zsum[g] / (double)cnt[g];
        a->ssw += d * d;
    }
    sturdy_free(cnt); sturdy_free(zsum); sturdy_free(skip); sturdy_free(dropped);
    return STURDY_OK;
}

/* F, its degrees of freedom and p from the sums, or why the test is undefined. */
static sturdy_status bf_finish(const bf_sums *a, int drop_zero, double *f, double *df1,
                               double *df2, double *p, char *err)
{
    size_t n = a->nn, k = a->kk;
    if (k < 2 || n <= k)
        return sturdy_fail(err, STURDY_EMODEL,
                           "Brown-Forsythe needs at least 2 non-empty groups and more rows "
                           "than groups (%zu groups, %zu rows%s)", k, n,
                           drop_zero ? " once the zero deviations are set aside" : "");
    double noise = BF_NOISE * a->xmax;
    if (a->ssw <= (double)n * noise * noise)
        return sturdy_fail(err, STURDY_EMODEL,
                           "Brown-Forsythe: the deviations from the group medians do not "
                           "vary within any group (every group has at most two rows, or all "
                           "values are equal), so the test is undefined");
    double d1 = (double)(k - 1), d2 = (double)(n - k);
    double fv = (a->ssb / d1) / (a->ssw / d2);
    if (f) *f = fv;
    if (df1) *df1 = d1;
    if (df2) *df2 = d2;
    if (p) *p = sturdy_f_sf(fv, d1, d2);
    return STURDY_OK;
}

/* Both forms; drop_zero removes, in each group of odd size, one row equal to the median
 * (its deviation is 0 by construction: Hines & O'Hara Hines 2000). */
static sturdy_status bf_core(const double *x, const size_t *group, size_t n, size_t ngroups,
                             int drop_zero, double *f, double *df1, double *df2, double *p,
                             char *err)
{
    sturdy_status st = bf_check_input(x, group, n, ngroups, err);
    if (st)
        return st;
    size_t *start = NULL, *rows = NULL, k = (size_t)-1;
    double *med = sturdy_malloc(ngroups * sizeof *med);
    if (med && !sturdy_bucket_rows(group, n, ngroups, &start, &rows, NULL))
        k = group_medians(x, start, rows, ngroups, med);
    sturdy_free(rows);
    bf_sums a = { 0, 0, 0.0, 0.0, 0.0 };
    if (k == (size_t)-1)
        st = sturdy_fail(err, STURDY_EINTERNAL, "Brown-Forsythe: out of memory");
    else if (k < 2 || n <= k)
        st = sturdy_fail(err, STURDY_EMODEL,
                         "Brown-Forsythe needs at least 2 non-empty groups and more rows "
                         "than groups (%zu groups, %zu rows)", k, n);
    else
        st = bf_anova_sums(x, group, n, ngroups, start, med, drop_zero, &a, err);
    sturdy_free(start);
    sturdy_free(med);
    return st ? st : bf_finish(&a, drop_zero, f, df1, df2, p, err);
}

sturdy_status sturdy_brown_forsythe(const double *x, const size_t *group, size_t n,
                                    size_t ngroups, double *f, double *df1, double *df2,
                                    double *p, char *err)
{
    return bf_core(x, group, n, ngroups, 0, f, df1, df2, p, err);
}

sturdy_status sturdy_brown_forsythe_modified(const double *x, const size_t *group, size_t n,
                                             size_t ngroups, double *f, double *df1,
                                             double *df2, double *p, char *err)
{
    return bf_core(x, group, n, ngroups, 1, f, df1, df2, p, err);
}

/* ---------------- studentized residuals ---------------- */

void sturdy_studentize(const double *e, const double *h, size_t n, size_t df,
                       double *internal, double *external)
{
    double sse = 0.0;
    for (size_t i = 0; i < n; i++) sse += e[i] * e[i];
    double s2 = df > 0 ? sse / (double)df : NAN, dfd = (double)df;
    for (size_t i = 0; i < n; i++) {
        double r = NAN, t = NAN;
        if (df > 0 && s2 > 0.0 && h[i] < 1.0 - STURDY_LEVERAGE_ONE_TOL) {
            r = e[i] / sqrt(s2 * (1.0 - h[i]));
            /* Belsley, Kuh & Welsch (1980): leave-one-out s from r without refitting.
             * df − r² = 0 means row i carries all the residual variation: t is
             * unbounded there, reported as NaN. */
            double rest = dfd - r * r;
            if (df >= 2 && rest > 0.0) t = r * sqrt((dfd - 1.0) / rest);
        }
        if (internal) internal[i] = r;
        if (external) external[i] = t;
    }
}
