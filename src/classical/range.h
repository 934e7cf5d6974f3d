/* range.h — the studentized range distribution (range.c), for the simultaneous intervals
 * of pairwise comparisons. */
#ifndef STURDY_RANGE_H
#define STURDY_RANGE_H

#include <stddef.h>

/* P(Q > q) for the studentized range of k ≥ 2 means with df degrees of freedom (df may be
 * fractional, as Welch's; INFINITY: a known variance). NaN for df ≤ 0 or NaN input. */
double sturdy_range_upper(double q, double k, double df);

/* q with P(Q ≤ q) = p, to a relative 1e-12; NaN outside 0 < p < 1 or for df ≤ 0. */
double sturdy_range_quantile(double p, double k, double df);

/* q[i] = sturdy_range_quantile(p, k, df[i]) for n df at once, through a Chebyshev series
 * in 1/df checked against exact quantiles to 1e-11 relative where 16 or more distinct df
 * share k ≥ 3 (returns 1 then), else exactly (returns 0). work holds n doubles. */
int sturdy_range_quantiles(double p, double k, const double *df, size_t n, double *q,
                           double *work);

/* The largest many-to-one family given the exact adjustment (compare.c); a factor with
 * more levels keeps the range bound. */
/* The inner tail of the range for one k, tabulated once (range.c): with it the tail and
 * the quantile cost a few thousand operations instead of a double integral, to 4e-15
 * relative. NULL for k ≤ 2 or without memory; the _tab functions then integrate. */
typedef struct sturdy_range_table sturdy_range_table;
sturdy_range_table *sturdy_range_table_new(double k);
void sturdy_range_table_free(sturdy_range_table *t);
double sturdy_range_upper_tab(const sturdy_range_table *tab, double q, double k, double df);
double sturdy_range_quantile_tab(const sturdy_range_table *tab, double p, double k, double df);

/* The cache's table of k (sturdy_cache, analysis.h; cache.c), or NULL; and keeping t,
 * the table of k, in it: 1 when kept (the cache owns it then), 0 when the cache is full
 * or NULL. */
struct sturdy_cache;
sturdy_range_table *sturdy_cache_range_table(struct sturdy_cache *c, double k);
int sturdy_cache_keep_range_table(struct sturdy_cache *c, sturdy_range_table *t, double k);
/* sturdy_range_quantile_tab(tab, p, k, df), kept in the cache for the next run that asks
 * (the same double; c may be NULL). Safe from several threads at once. */
double sturdy_cache_range_quantile(struct sturdy_cache *c, const sturdy_range_table *tab,
                                   double p, double k, double df);

#define STURDY_MANYONE_MAX 256

/* P(max_i |T_i| > c) for m many-to-one t statistics with df degrees of freedom whose
 * correlations are ρ_ij = λ_iλ_j (|λ_i| < 1; Dunnett 1955). NaN for df ≤ 0. */
double sturdy_manyone_upper(double c, size_t m, const double *lambda, double df);

/* c with P(max |T_i| ≤ c) = p, to a relative 1e-12. */
double sturdy_manyone_quantile(double p, size_t m, const double *lambda, double df);

#endif
