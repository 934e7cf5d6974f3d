/* test_dist.c — closed forms and contract checks for src/classical/dist.c (the grid against scipy
 * and R is tests/xcheck_dist.py). */
#include <float.h>
#include <math.h>
#include <stdio.h>

#include "check.h"
#include "sturdy/dist.h"

#define PI 3.14159265358979323846

int main(void)
{
    char name[160];

    /* F(2, d) has the closed-form tail (1 + 2f/d)^(−d/2) and quantile
     * (d/2)(q^(−2/d) − 1) (Johnson, Kotz & Balakrishnan 1995, ch. 27). d = 3e5 goes
     * through our continued fraction rather than GSL's. */
    const double d2s[] = {1, 7, 50, 3e5}, fs[] = {0.3, 2, 40};
    for (int i = 0; i < 4; i++) {
        double tol = d2s[i] > 1e4 ? 1e-10 : 1e-13;
        for (int j = 0; j < 3; j++) {
            double d = d2s[i], f = fs[j];
            snprintf(name, sizeof name, "F(2,%g) sf at %g vs closed form", d, f);
            CHECK_REL(name, sturdy_f_sf(f, 2, d), pow(1 + 2 * f / d, -d / 2), tol);
        }
        const double qs[] = {1e-12, 0.05, 0.9};
        for (int j = 0; j < 3; j++) {
            double d = d2s[i], q = qs[j];
            snprintf(name, sizeof name, "F(2,%g) isf at %g vs closed form", d, q);
            CHECK_REL(name, sturdy_f_isf(q, 2, d), d / 2 * expm1(-2 / d * log(q)), tol);
        }
    }
    /* F(1, 1) is the square of a Cauchy variable: P(F > f) = 1 − (2/π) atan √f. */
    CHECK_REL("F(1,1) sf at 3 vs Cauchy", sturdy_f_sf(3, 1, 1), 1 - 2 / PI * atan(sqrt(3)),
              1e-13);
    /* Non-integer df below 1, which GSL's quantile functions reject. */
    CHECK_REL("F(0.5,0.7) isf inverts sf", sturdy_f_sf(sturdy_f_isf(0.2, 0.5, 0.7), 0.5, 0.7),
              0.2, 1e-13);

    /* λ = 0 is the central F; a tiny λ is continuous with it; the CDF falls with λ. */
    CHECK_REL("ncF cdf lambda=0 = 1 - sf", sturdy_ncf_cdf(2.5, 3, 20, 0),
              1 - sturdy_f_sf(2.5, 3, 20), 1e-14);
    CHECK_REL("ncF cdf lambda=1e-12 ~ central", sturdy_ncf_cdf(2.5, 3, 20, 1e-12),
              1 - sturdy_f_sf(2.5, 3, 20), 1e-11);
    double prev = 1.0;
    int falls = 1;
    for (double lam = 0.5; lam < 2e4; lam *= 3) {
        double c = sturdy_ncf_cdf(30, 4, 60, lam);
        falls = falls && c < prev;
        prev = c;
    }
    CHECK("ncF cdf strictly decreasing in lambda", falls);

    /* Steiger interval: bounds solve their equations; zero bound when no root. */
    double elo, ehi, llo, lhi;
    sturdy_status st = sturdy_ncf_eta2_interval(6.0, 2, 24, 0.9, &elo, &ehi, &llo, &lhi);
    CHECK_INT("ncF interval status", st, STURDY_OK);
    CHECK_ABS("ncF interval lower root", sturdy_ncf_cdf(6.0, 2, 24, llo), 0.95, 1e-13);
    CHECK_ABS("ncF interval upper root", sturdy_ncf_cdf(6.0, 2, 24, lhi), 0.05, 1e-13);
    CHECK_REL("ncF interval eta from lambda", ehi, lhi / (lhi + 27), 1e-15);
    /* P(F(2,24) ≤ 0.03) = 1 − 1.0025^−12 ≈ 0.0295 < 0.05: no positive root at all. */
    st = sturdy_ncf_eta2_interval(0.03, 2, 24, 0.9, &elo, &ehi, NULL, NULL);
    CHECK("ncF interval f=0.03: both bounds 0", st == STURDY_OK && elo == 0 && ehi == 0);
    /* Few error df, many term df: the upper bound lies near 1e8, far above the starting
     * point df1·f of the bracketing; a start from df1²f/df2 (a slip once made) would
     * pass 1e9 and fail. */
    st = sturdy_ncf_eta2_interval(1e5, 167, 1, 0.95, &elo, &ehi, &llo, &lhi);
    CHECK_INT("ncF interval df2=1 status", st, STURDY_OK);
    CHECK_ABS("ncF interval df2=1 lower root", sturdy_ncf_cdf(1e5, 167, 1, llo), 0.975, 1e-13);
    CHECK_ABS("ncF interval df2=1 upper root", sturdy_ncf_cdf(1e5, 167, 1, lhi), 0.025, 1e-13);
    CHECK_INT("ncF interval conf=0 rejected",
              sturdy_ncf_eta2_interval(3, 2, 24, 0, &elo, &ehi, NULL, NULL), STURDY_EUSAGE);
    CHECK_INT("ncF interval NaN f rejected",
              sturdy_ncf_eta2_interval(NAN, 2, 24, 0.9, NULL, NULL, NULL, NULL),
              STURDY_EUSAGE);
    CHECK_INT("ncF interval beyond lambda 1e9 fails cleanly",
              sturdy_ncf_eta2_interval(1e12, 2, 10, 0.95, NULL, NULL, NULL, NULL),
              STURDY_EINTERNAL);

    /* Clopper & Pearson (1934) closed forms at k = 0 and k = n. */
    double lo, hi;
    sturdy_clopper_pearson(0, 20, 0.95, &lo, &hi);
    CHECK("Clopper-Pearson k=0 lo = 0", lo == 0);
    CHECK_REL("Clopper-Pearson k=0 hi", hi, 1 - pow(0.025, 1.0 / 20), 1e-13);
    sturdy_clopper_pearson(20, 20, 0.95, &lo, &hi);
    CHECK_REL("Clopper-Pearson k=n lo", lo, pow(0.025, 1.0 / 20), 1e-13);
    CHECK("Clopper-Pearson k=n hi = 1", hi == 1);
    sturdy_clopper_pearson(5, 20, 1.0, &lo, &hi);
    CHECK("Clopper-Pearson conf=1 gives NaN", isnan(lo) && isnan(hi));
    sturdy_clopper_pearson(5, 20, 0.95, NULL, NULL); /* NULL outputs allowed */

    /* The normal 97.5% point to 16 digits (standard tables) and symmetry. */
    CHECK_REL("normal ppf(0.975)", sturdy_norm_ppf(0.975), 1.959963984540054, 1e-15);
    CHECK_ABS("normal ppf(0.5)", sturdy_norm_ppf(0.5), 0.0, 1e-16);
    CHECK_REL("normal cdf(-ppf(1e-10))", sturdy_norm_cdf(sturdy_norm_ppf(1e-10)), 1e-10,
              1e-13);

    /* Invalid arguments: NaN, never a GSL abort. */
    CHECK("F sf df1<0 NaN", isnan(sturdy_f_sf(1, -1, 5)));
    CHECK("F isf df2=inf NaN", isnan(sturdy_f_isf(0.1, 2, INFINITY)));
    CHECK("ncF cdf lambda=inf NaN", isnan(sturdy_ncf_cdf(1, 2, 5, INFINITY)));
    CHECK("ncF cdf lambda>1e9 NaN", isnan(sturdy_ncf_cdf(1, 2, 5, 2e9)));
    CHECK("F isf q tiny finite", isfinite(sturdy_f_isf(1e-300, 1, 1)));
    CHECK("F sf f=DBL_MAX is 0 or tiny", sturdy_f_sf(DBL_MAX, 3, 7) < 1e-300);
    return check_done();
}
