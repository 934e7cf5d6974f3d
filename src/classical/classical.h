/* classical.h — the classical stage's interface: the F-test table with effect sizes and the
 * noncentral-F interval, and the unequal-variance tests' classical references. */
#ifndef STURDY_CLASSICAL_H
#define STURDY_CLASSICAL_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/fit.h"

/* Classical table of response r: SS, df, F, p, effect sizes and the noncentral-F
 * interval per term; error and total; fitted values and residuals; cell means/SDs.
 * `threads` (> 0) bounds the threads of the per-term interval searches. */
sturdy_status sturdy_anova_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                    double conf, int threads, sturdy_response_result *out,
                                    char *err);

/* Effect sizes from a term's SS and df and the error and total SS and df. Entries that
 * cannot be computed are NaN. */
void sturdy_effect_sizes(double ss, double df, double sse, double dfe, double sst, double n,
                         double es[STURDY_NES]);

/* Unequal-variance tests (unequal.c). 1 when the test uses HC3 (covariates, a block, or
 * rows as groups), 0 when it uses the cell variances (factor-only). */
int sturdy_uv_uses_hc3(const sturdy_design *d);

/* Classical part for every term of response r (needs the term's F and the model):
 * W, Johansen's approximate F or F(df, residual df), the ANOVA-type statistic. */
sturdy_status sturdy_uv_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                 sturdy_response_result *out, char *err);

/* p-values of the unequal-variance test's resampling counts in a finished run. */
sturdy_status sturdy_uv_finish(const sturdy_result *r, sturdy_term_result *t, char *err);

/* Marginal means and pairwise comparisons (compare.c). */
typedef struct {
    double conf;                 /* level of every interval */
    int spread_differs;          /* the spread rule fired: Games–Howell where it applies */
    size_t control_factor;       /* compare this factor's levels with control_level only;
                                    (size_t)-1: all pairs */
    size_t control_level;
} sturdy_compare_setup;

/* Fill out->means (every factor term, each level combination), out->comparisons (main
 * effects: pairs of levels; two-factor terms: simple effects) and a zeroed
 * out->compare_shown for response r. Needs the classical table (error MS and df, cell
 * SDs) already in `out`. */
sturdy_status sturdy_compare_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                      const sturdy_compare_setup *cs,
                                      sturdy_response_result *out, char *err);

/* The classical simultaneous intervals and adjusted p-values of the response's
 * comparisons (Tukey–Kramer or Games–Howell, from the studentized range at level conf).
 * Deferred to the finish of a run: the range's integrals are the costly part of the
 * comparisons, and a shard part does not need them. */
void sturdy_compare_adjust(sturdy_response_result *rr, double conf);

#endif
