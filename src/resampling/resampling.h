/* resampling.h — the resampling stage's interface: permutation and sign-flipping tests,
 * the bootstrap of the effect sizes and the resampled unequal-variance test. */
#ifndef STURDY_RESAMPLING_H
#define STURDY_RESAMPLING_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/fit.h"
#include "classical/classical.h"

/* Relative tolerance of the exceedance rule: a rearrangement counts as at least as
 * extreme when F* ≥ F_obs·(1 − STURDY_TIE_RTOL). Rearrangements that reproduce the
 * observed statistic (the identity, or a shuffle among equal values) then count on every
 * computational path, whatever the order of its floating-point sums; 1e-10 is far above
 * the rounding noise of those sums (≈1e-14 relative) and far below any F difference that
 * matters to a p-value. */
#define STURDY_TIE_RTOL 1e-10

/* Permutation stage: adds to exceed / exceed_fwer of every term of every response over
 * the rearrangements [run->perm_begin, run->perm_end). Reads each term's F and p and the
 * residuals from the classical stage's part of r. */
sturdy_status sturdy_permute_run(const sturdy_run *run, const sturdy_design *d,
                                 const sturdy_model *m, sturdy_result *r, char *err);

/* *count = the number of distinct rearrangements (permutations within blocks, or sign
 * patterns), saturating at UINT64_MAX. STURDY_EINTERNAL when out of memory. */
sturdy_status sturdy_permute_count(const sturdy_design *d, int flip, uint64_t *count,
                                   char *err);

/* Bootstrap stage: fills term->boot for replicates [run->boot_begin, run->boot_end) and
 * term->accel (jackknife acceleration) for every term of every response. */
sturdy_status sturdy_bootstrap_run(const sturdy_run *run, const sturdy_design *d,
                                   const sturdy_model *m, sturdy_result *r, char *err);

/* Percentile and BCa intervals from a term's replicates (all of them: the finished run)
 * and its acceleration. */
sturdy_status sturdy_bootstrap_intervals(const sturdy_result *r, sturdy_term_result *t,
                                         char *err);

/* Resampling part: adds to uv.exceed_wild (and uv.exceed_perm under the permutation
 * scheme) over the rearrangement slice [run->perm_begin, run->perm_end). */
sturdy_status sturdy_uv_run(const sturdy_run *run, const sturdy_design *d,
                            const sturdy_model *m, sturdy_result *r, char *err);

#endif
