/* diagnose.h — residual diagnostics: Shapiro–Wilk, moments, Brown–Forsythe, studentized
 * residuals. The functions take plain arrays so they are independent of the model. */
#ifndef STURDY_DIAGNOSE_H
#define STURDY_DIAGNOSE_H

#include "common.h"

/* Shapiro–Wilk W and p (Royston 1995, Applied Statistics 44:547–551, algorithm AS R94).
 * Valid for 3 ≤ n ≤ 5000; returns STURDY_EMODEL with a reason outside that range or when
 * all values are equal. x need not be sorted; it is not modified. */
sturdy_status sturdy_shapiro_wilk(const double *x, size_t n, double *w, double *p, char *err);

/* Sample skewness g1 = m3 / m2^(3/2) and excess kurtosis g2 = m4 / m2² − 3 with
 * biased central moments m_k = Σ(x−x̄)^k / n (scipy.stats.skew / kurtosis with
 * bias=True). NaN when m2 = 0 or n < 2. */
void sturdy_moments(const double *x, size_t n, double *skewness, double *excess_kurtosis);

/* Brown–Forsythe test (Brown & Forsythe 1974): one-way ANOVA F on |x − median of its
 * group| across `ngroups` groups; group[i] in [0, ngroups). Groups with no rows are
 * ignored; df1 = (non-empty groups) − 1, df2 = n − non-empty groups. Returns
 * STURDY_EMODEL when df1 < 1 or df2 < 1 or all deviations are zero. */
sturdy_status sturdy_brown_forsythe(const double *x, const size_t *group, size_t n,
                                    size_t ngroups, double *f, double *df1, double *df2,
                                    double *p, char *err);

/* Internally and externally studentized residuals from residuals e, leverages h and the
 * residual degrees of freedom df (= n − rank):
 *   s² = Σe²/df,  r_i = e_i / (s √(1−h_i)),
 *   t_i = r_i √((df − 1) / (df − r_i²))  (Belsley, Kuh & Welsch 1980).
 * Entries with h_i ≥ 1 − 1e-10 (a row alone in its cell) get NaN. */
void sturdy_studentize(const double *e, const double *h, size_t n, size_t df,
                       double *internal, double *external);

#endif
