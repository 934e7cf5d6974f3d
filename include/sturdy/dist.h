/* dist.h — distribution functions: F tails (GSL), the noncentral F distribution and the
 * noncentral-F confidence interval for partial η² (Steiger 2004), normal quantiles. */
#ifndef STURDY_DIST_H
#define STURDY_DIST_H

#include "common.h"

/* Upper tail P(F > f) of the central F(df1, df2). f ≤ 0 gives 1. */
double sturdy_f_sf(double f, double df1, double df2);

/* Quantile: the f with P(F > f) = q, for 0 < q < 1 (q ≤ 0 → +inf, q ≥ 1 → 0). */
double sturdy_f_isf(double q, double df1, double df2);

/* CDF P(F ≤ f) of the noncentral F(df1, df2, λ) (λ ≥ 0): the Poisson(λ/2) mixture of
 * regularised incomplete beta functions I_x(df1/2 + j, df2/2), x = df1·f/(df1·f + df2),
 * summed outward from the Poisson mode until the remaining weight is below 1e-15. */
double sturdy_ncf_cdf(double f, double df1, double df2, double lambda);

/* Noncentral-F confidence interval for partial η² (Steiger 2004, Psychological Methods
 * 9:164–182): find λ_lo, λ_hi with P(F ≤ f_obs | λ_lo) = 1 − (1−conf)/2 and
 * P(F ≤ f_obs | λ_hi) = (1−conf)/2 (λ = 0 when the equation has no positive root),
 * then partial η² = λ / (λ + df1 + df2 + 1). Writes the λ bounds when the pointers are
 * non-NULL. Returns STURDY_OK, or STURDY_EINTERNAL when the root search fails. */
sturdy_status sturdy_ncf_eta2_interval(double f_obs, double df1, double df2, double conf,
                                       double *eta_lo, double *eta_hi, double *lambda_lo,
                                       double *lambda_hi);

/* Standard normal CDF and quantile. */
double sturdy_norm_cdf(double z);
double sturdy_norm_ppf(double p);

/* Clopper–Pearson two-sided interval at level `conf` for k successes in n trials. */
void sturdy_clopper_pearson(uint64_t k, uint64_t n, double conf, double *lo, double *hi);

#endif
