/* unequal.h — the unequal-variance statistic's pieces shared by unequal.c (the statistic
 * and its classical references) and unequal_resample.c (its wild bootstrap and
 * permutation); private to the library. The method is described in unequal.c. */
#ifndef STURDY_UNEQUAL_H
#define STURDY_UNEQUAL_H

#include "classical/classical.h"

typedef struct {
    const sturdy_design *d;
    const sturdy_model *m;
    size_t K, T;         /* groups; members (testable terms of one response) */
    int saturated;       /* the full model spans group space: its fit is the group mean */
    double *ng;          /* K: n_g */
    double *hw;          /* K: 1 / (n_g (1 − h_g)^δ) */
    double *scale;       /* K: 1 / √(1 − h_g), the wild bootstrap's residual scaling */
} uv_ctx;

/* Group weights of the statistic for a model; *why (static text) is set when the test
 * cannot be done at all. On failure frees what it made. */
sturdy_status uv_ctx_init(uv_ctx *c, const sturdy_design *d, const sturdy_model *m, int hc3,
                          const char **why, char *err);
void uv_ctx_free(uv_ctx *c);

/* Workspace doubles that uv_wald needs for a term of `df` degrees of freedom. */
size_t uv_wald_work(const uv_ctx *c, size_t df);

/* W from the perturbation's group sums A and sums of squares Q (unequal.c); NaN when
 * U_tᵀΩU_t is singular. */
double uv_wald(const uv_ctx *c, const double *Ut, size_t df, const double *A, const double *Q,
               double *work);

/* The perturbation base v = y − f̃ of a term, with its group sums A and sums of squares
 * Q. ft: n scratch; s: K; work: rank + K. */
void uv_restricted_residuals(const uv_ctx *c, const double *y, const double *Ut, size_t df,
                             double *v, double *ft, double *A, double *Q, double *s,
                             double *work);

#endif
