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
/* An observed statistic below these is zero up to rounding (an F of a term whose sum of
 * squares vanishes, a comparison of two equal means: the rounding of such a statistic is
 * ~1e-30, where a relative tolerance means nothing); it is taken as exactly zero, so that
 * every rearrangement counts as at least as extreme on every computational path instead
 * of those whose own rounding happens to exceed the observed rounding. F and pooled t²
 * below 1e-16 (|t| < 1e-8); a Games–Howell comparison's −ln p below 1e-8 (about the
 * same |t|). */
#define STURDY_TIE_ZERO 1e-16
#define STURDY_TIE_ZERO_LOGP 1e-8

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
 * and its acceleration, as computed (intervals.c applies the edges); *bca_failed: some
 * BCa interval is absent (all replicates on one side, or no acceleration). */
sturdy_status sturdy_bootstrap_intervals(const sturdy_result *r, sturdy_term_result *t,
                                         int *bca_failed, char *err);

/* Every interval of a finished term (intervals.c): percentile and BCa with their edges
 * (declined below STURDY_BOOT_MIN_DF_ERROR residual df, else clamped to the parameter's
 * range), the test inversion mapped to the effect sizes, and the recommended interval of
 * each effect size with its reason; the notes say what was declined or clamped. */
sturdy_status sturdy_term_intervals(const sturdy_result *r, const sturdy_response_result *resp,
                                    sturdy_term_result *t, char *err);

/* The test-inversion interval of a term's effect scale s (testinv.c), from nrows
 * replicate rows rows[b·stride + 0, 1, 2] = (vᵀu*_b, ‖u*_b‖², SSE*_b), A = ‖v‖² = SS and
 * k = SS/SSE of the data, at tail levels alpha_lo, alpha_hi. Rows with a non-finite value
 * are left out (used counts the rest). s_lo ≤ s_hi, both ≥ 0 (s_hi may be +∞ when A = 0);
 * NaN when no row is usable or A, k are not finite. The noncentrality of world s is
 * s²·A / (the bootstrap world's error variance). */
typedef struct {
    double s_lo, s_hi;
    uint64_t used;               /* replicates counted (B) */
    uint64_t null_count;         /* N(0): replicates with F*(0) ≥ F in the null world */
} sturdy_testinv;

sturdy_status sturdy_testinv_endpoints(const double *rows, size_t stride, uint64_t nrows,
                                       double A, double k, double alpha_lo, double alpha_hi,
                                       sturdy_testinv *out, char *err);

/* The studentized test inversion of a term's noncentrality λ (testinv.c), from nrows
 * replicate rows rows[b·stride + 0..3] = (vᵀu*_b, ‖u*_b‖², SSE*_b, κ*_b); rows with a
 * non-finite value are left out (used counts the rest). [lam_lo, lam_hi], both ≥ 0
 * (lam_hi +∞ when every λ tried is accepted; [0, 0] when none is); NaN when it cannot be
 * computed (A = 0, no usable rows, a tail with no replicate, a parameter out of range). */
typedef struct {
    double A, mse, kappa;        /* the data: SS of the term, MSE, residual excess kurtosis */
    double world_var;            /* the bootstrap world's error variance σ²_w */
    double df1, df2, c2;         /* the term's and the error's df; C2 = Σ(1 − h_i)² */
    double alpha_lo, alpha_hi;   /* tail levels of the lower and upper end */
    double ti_lo, ti_hi;         /* the plain test inversion's λ interval (grid hints;
                                    NaN when absent) */
} sturdy_sti_params;

typedef struct {
    double lam_lo, lam_hi;
    uint64_t used;
} sturdy_sti;

sturdy_status sturdy_sti_endpoints(const double *rows, size_t stride, uint64_t nrows,
                                   const sturdy_sti_params *p, sturdy_sti *out, char *err);

/* Resampling part: adds to uv.exceed_wild (and uv.exceed_perm under the permutation
 * scheme) over the rearrangement slice [run->perm_begin, run->perm_end). */
sturdy_status sturdy_uv_run(const sturdy_run *run, const sturdy_design *d,
                            const sturdy_model *m, sturdy_result *r, char *err);

/* The resistant test's resampling part (resistant_perm.c): adds to rs.exceed of every term
 * with a resistant statistic over the rearrangement slice, with the run's rearrangements;
 * notes why a term has no resampled p. Needs sturdy_rs_response's statistics. */
sturdy_status sturdy_rs_run(const sturdy_run *run, const sturdy_design *d,
                            const sturdy_model *m, sturdy_result *r, char *err);

/* p_perm of the resistant test from its count in a finished run, and the headline rule
 * (rs.disagrees; needs t's p and p_perm and resp's outlier flags). */
void sturdy_rs_finish(const sturdy_result *r, const sturdy_response_result *resp,
                      sturdy_term_result *t);

#endif
