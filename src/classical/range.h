/* range.h — the studentized range distribution (range.c), for the simultaneous intervals
 * of pairwise comparisons. */
#ifndef STURDY_RANGE_H
#define STURDY_RANGE_H

/* P(Q > q) for the studentized range of k ≥ 2 means with df degrees of freedom (df may be
 * fractional, as Welch's; INFINITY: a known variance). NaN for df ≤ 0 or NaN input. */
double sturdy_range_upper(double q, double k, double df);

/* q with P(Q ≤ q) = p, to a relative 1e-12; NaN outside 0 < p < 1 or for df ≤ 0. */
double sturdy_range_quantile(double p, double k, double df);

#endif
