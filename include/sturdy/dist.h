/* dist.h — distribution functions: F tails (GSL), the noncentral F distribution and the
 * noncentral-F confidence interval for partial η² (Steiger 2004), normal quantiles,
 * Clopper–Pearson intervals.
 *
 * All functions are pure (thread-safe, no state) and never abort: invalid arguments give
 * NaN (or a status), never a call into GSL's error handler. Accuracy, measured against
 * R's pbeta (TOMS 708), 40-digit mpmath and scipy: F tails to relative ~2e-12 for df up
 * to 2e4, ~8e-12 at 1e5, ~6e-11 at 1e6 and ~2e-10 at 3e6. */
#ifndef STURDY_DIST_H
#define STURDY_DIST_H

#include "common.h"

/* Upper tail P(F > f) of the central F(df1, df2), df1, df2 > 0 (not necessarily
 * integers). f ≤ 0 gives 1, f = +inf gives 0; NaN for NaN f or df ≤ 0 or infinite. */
double sturdy_f_sf(double f, double df1, double df2);

/* Quantile: the f with P(F > f) = q, for 0 < q < 1 (q ≤ 0 → +inf, q ≥ 1 → 0; NaN for
 * NaN q or invalid df). Found by bisection to adjacent doubles, so it is as accurate as
 * sturdy_f_sf allows, also far in the tails (q = 1e-300). */
double sturdy_f_isf(double q, double df1, double df2);

/* CDF P(F ≤ f | λ) of the noncentral F(df1, df2, λ), 0 ≤ λ ≤ 1e9: the Poisson(λ/2)
 * mixture Σ_j w_j I_x(df1/2 + j, df2/2), x = df1·f/(df1·f + df2). The indices kept
 * are found by walking outward from the Poisson mode until what the rest could add is
 * below 1e-17 of the result, so the sum keeps its relative precision also in the lower
 * tail. Only one incomplete beta is evaluated directly (at the top index); the others
 * follow by the all-positive recurrence I_x(a, b) = I_x(a+1, b) + x^a(1−x)^b/(aB(a,b)),
 * whose terms and the weights use Loader's (2000) saddle-point densities. Cost grows
 * like √λ: under 1 ms at λ = 1e5, ~50 ms at 1e9. f ≤ 0 → 0, f = +inf → 1; NaN for
 * invalid arguments and λ > 1e9. */
double sturdy_ncf_cdf(double f, double df1, double df2, double lambda);

/* Noncentral-F confidence interval for partial η² (Steiger 2004, Psychological Methods
 * 9:164–182): find λ_lo, λ_hi with P(F ≤ f_obs | λ_lo) = 1 − (1−conf)/2 and
 * P(F ≤ f_obs | λ_hi) = (1−conf)/2 (a bound is 0 when P(F ≤ f_obs | λ = 0) is already
 * at or below its target: no positive root), then partial η² = λ / (λ + df1 + df2 + 1).
 * The roots are bracketed by doubling from λ = max(1, df1·f_obs) and bisected to
 * adjacent doubles (CDF at the root equals its target to ~1e-15). Each pointer may be
 * NULL; nothing is written unless STURDY_OK is returned. Returns STURDY_EUSAGE for
 * f_obs < 0, NaN or infinite, df ≤ 0, or conf outside (0, 1); STURDY_EINTERNAL when
 * the search fails (a bound above λ = 1e9, where η² ≥ 1 − 1e-9 for any plausible df). */
sturdy_status sturdy_ncf_eta2_interval(double f_obs, double df1, double df2, double conf,
                                       double *eta_lo, double *eta_hi, double *lambda_lo,
                                       double *lambda_hi);

/* Standard normal CDF and quantile (GSL). ppf: p ≤ 0 → −inf, p ≥ 1 → +inf; NaN → NaN. */
double sturdy_norm_cdf(double z);
double sturdy_norm_ppf(double p);

/* Clopper–Pearson (1934) two-sided interval at level `conf` for k successes in n trials:
 * lo = B⁻¹(α/2; k, n−k+1) (0 when k = 0), hi = B⁻¹(1−α/2; k+1, n−k) (1 when k = n),
 * α = 1 − conf. Both are NaN when n = 0, k > n or conf is outside (0, 1). lo and hi may
 * be NULL. */
void sturdy_clopper_pearson(uint64_t k, uint64_t n, double conf, double *lo, double *hi);

#endif
