/* engine.h — the analysis stages' internal interface (classical table, resampling,
 * bootstrap, diagnostics, verdicts), shared by analysis.c and its stage files. */
#ifndef STURDY_ENGINE_H
#define STURDY_ENGINE_H

#include "sturdy/analysis.h"
#include "sturdy/fit.h"

/* Relative tolerance of the exceedance rule: a rearrangement counts as at least as
 * extreme when F* ≥ F_obs·(1 − STURDY_TIE_RTOL). Rearrangements that reproduce the
 * observed statistic (the identity, or a shuffle among equal values) then count on every
 * computational path, whatever the order of its floating-point sums; 1e-10 is far above
 * the rounding noise of those sums (≈1e-14 relative) and far below any F difference that
 * matters to a p-value. */
#define STURDY_TIE_RTOL 1e-10

/* Classical table of response r: SS, df, F, p, effect sizes and the noncentral-F
 * interval per term; error and total; fitted values and residuals; cell means/SDs.
 * `threads` (> 0) bounds the threads of the per-term interval searches. */
sturdy_status sturdy_anova_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                    double conf, int threads, sturdy_response_result *out,
                                    char *err);

/* Threads to use: --threads, or all the OpenMP runtime offers when it is 0. */
int sturdy_thread_count(const sturdy_options *o);

/* Effect sizes from a term's SS and df and the error and total SS and df. Entries that
 * cannot be computed are NaN. */
void sturdy_effect_sizes(double ss, double df, double sse, double dfe, double sst, double n,
                         double es[STURDY_NES]);

/* Permutation stage: fills exceed / exceed_fwer of every term of every response for the
 * rearrangements [r->perm_begin, r->perm_end). */
sturdy_status sturdy_permute_run(const sturdy_design *d, const sturdy_model *m,
                                 sturdy_result *r, char *err);

/* *count = the number of distinct rearrangements (permutations within blocks, or sign
 * patterns), saturating at UINT64_MAX. STURDY_EINTERNAL when out of memory. */
sturdy_status sturdy_permute_count(const sturdy_design *d, int flip, uint64_t *count,
                                   char *err);

/* Bootstrap stage: fills term->boot for replicates [r->boot_begin, r->boot_end) and
 * term->accel (jackknife acceleration) for every term of every response. */
sturdy_status sturdy_bootstrap_run(const sturdy_design *d, const sturdy_model *m,
                                   sturdy_result *r, char *err);

/* Percentile and BCa intervals from a term's replicates (all of them: the finished run)
 * and its acceleration. */
sturdy_status sturdy_bootstrap_intervals(const sturdy_result *r, sturdy_term_result *t,
                                         char *err);

/* Unequal-variance tests (unequal.c). 1 when the test uses HC3 (covariates, a block, or
 * rows as groups), 0 when it uses the cell variances (factor-only). */
int sturdy_uv_uses_hc3(const sturdy_design *d);

/* Classical part for every term of response r (needs the term's F and the model):
 * W, Johansen's approximate F or F(df, residual df), the ANOVA-type statistic. */
sturdy_status sturdy_uv_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                 sturdy_response_result *out, char *err);

/* Resampling part: adds to uv.exceed_wild (and uv.exceed_perm under the permutation
 * scheme) over the rearrangement slice [r->perm_begin, r->perm_end). */
sturdy_status sturdy_uv_run(const sturdy_design *d, const sturdy_model *m, sturdy_result *r,
                            char *err);

/* p-values of a finished run from the counts. */
sturdy_status sturdy_uv_finish(const sturdy_result *r, sturdy_term_result *t, char *err);

/* Diagnostics of response r (needs fitted/residual). */
sturdy_status sturdy_diagnose_response(const sturdy_design *d, const sturdy_model *m,
                                       sturdy_response_result *resp, char *err);

/* Verdict of a finished term at level alpha, with its one-line reason. */
sturdy_status sturdy_verdict_term(const sturdy_response_result *resp, sturdy_term_result *t,
                                  double alpha, char *err);

#endif
