/* diagnose.h — residual diagnostics: Shapiro–Wilk, moments, Brown–Forsythe, studentized
 * residuals. The functions take plain arrays so they are independent of the model. */
#ifndef STURDY_DIAGNOSE_H
#define STURDY_DIAGNOSE_H

#include "common.h"

/* Shapiro–Wilk W and p (Royston 1995, Applied Statistics 44:547–551, algorithm AS R94),
 * in double precision: coefficients from Royston's polynomial approximations, the exact
 * distribution for n = 3, the normalising transformations for 4 ≤ n ≤ 11 and n ≥ 12.
 * When W lies below the range of the n ≤ 11 transformation, p is AS R94's floor 1e-19.
 * Agrees with R's shapiro.test to 1e-15 (W) and 1e-12 (p); scipy 1.10 runs the same
 * algorithm in single precision and differs by up to 5e-5 (W) and 1e-3 (p) at n = 5000.
 * x need not be sorted; it is not modified; w or p may be NULL. Returns STURDY_EMODEL
 * outside 3 ≤ n ≤ 5000 or when all values are equal, STURDY_EDATA for a non-finite
 * value, STURDY_EINTERNAL when out of memory. */
sturdy_status sturdy_shapiro_wilk(const double *x, size_t n, double *w, double *p, char *err);

/* Sample skewness g1 = m3 / m2^(3/2) and excess kurtosis g2 = m4 / m2² − 3 with
 * biased central moments m_k = Σ(x−x̄)^k / n (scipy.stats.skew / kurtosis with
 * bias=True), by two passes around x[0] (exact zero for equal values). NaN when m2 = 0
 * or n < 2. Either output pointer may be NULL. */
void sturdy_moments(const double *x, size_t n, double *skewness, double *excess_kurtosis);

/* Brown–Forsythe test (Brown & Forsythe 1974): one-way ANOVA F on |x − median of its
 * group| across `ngroups` groups (scipy.stats.levene with center='median');
 * group[i] in [0, ngroups). Groups with no rows are ignored; df1 = (non-empty groups)
 * − 1, df2 = n − non-empty groups; p from F(df1, df2). Outputs may be NULL and are
 * written only on success. Returns STURDY_EMODEL when df1 < 1 or df2 < 1, or when the
 * deviations do not vary within any group (all equal up to rounding, as with groups of
 * at most two rows: F would be infinite or 0/0); STURDY_EDATA for a non-finite x;
 * STURDY_EINTERNAL for a group index out of range or when out of memory. */
sturdy_status sturdy_brown_forsythe(const double *x, const size_t *group, size_t n,
                                    size_t ngroups, double *f, double *df1, double *df2,
                                    double *p, char *err);

/* The same test with the structural zeros removed (Hines & O'Hara Hines 2000, Biometrics
 * 56): in each group of odd size one row equal to the group's median, whose deviation is
 * 0 by construction, is set aside before the ANOVA (a group of one row then drops out).
 * Those zeros pull the small groups' mean deviations down and cost the test power in
 * small cells. Same outputs and statuses as sturdy_brown_forsythe. */
sturdy_status sturdy_brown_forsythe_modified(const double *x, const size_t *group, size_t n,
                                             size_t ngroups, double *f, double *df1,
                                             double *df2, double *p, char *err);

/* Internally and externally studentized residuals from residuals e, leverages h and the
 * residual degrees of freedom df (= n − rank):
 *   s² = Σe²/df,  r_i = e_i / (s √(1−h_i)),
 *   t_i = r_i √((df − 1) / (df − r_i²))  (Belsley, Kuh & Welsch 1980).
 * Both are NaN for entries with h_i ≥ 1 − 1e-10 (a row alone in its cell), and
 * everywhere when df = 0 or Σe² = 0; t_i alone is NaN when df < 2 or df − r_i² ≤ 0
 * (row i carries all the residual variation: t unbounded). internal or external may
 * be NULL. */
void sturdy_studentize(const double *e, const double *h, size_t n, size_t df,
                       double *internal, double *external);

#endif
