/* means.h — estimable linear functions of the full model (means.c): least-squares
 * marginal means and their contrasts. */
#ifndef STURDY_MEANS_H
#define STURDY_MEANS_H

#include "core/result.h"
#include "sturdy/fit.h"

typedef struct {
    size_t p, rank;
    double *R;       /* rank × p: the coded design in the model's orthonormal basis */
    double *chol;    /* rank × rank: Cholesky factor of R Rᵀ */
    double *work;    /* scratch for the callers: 2·(rank + p) + K doubles */
} sturdy_lsm;

/* Set up for design d and its full model m; free with sturdy_lsm_free (also on error). */
sturdy_status sturdy_lsm_init(const sturdy_design *d, const sturdy_model *m,
                              sturdy_lsm *out, char *err);
void sturdy_lsm_free(sturdy_lsm *l);

/* w (rank) with Rᵀw = L when L (length p) is estimable: returns 1, else 0. The estimate
 * of Lᵀβ is wᵀQᵀy and its standard error σ‖w‖. */
int sturdy_lsm_weights(const sturdy_lsm *l, const double *L, double *w);

/* The coefficient vector (length d->p) of the least-squares mean of the factors in
 * `mask` at levels level[f] (indexed by factor): intercept plus the coded columns of
 * every factor term within mask; other terms, the block and the (centred) covariates
 * average to zero. */
void sturdy_lsm_vector(const sturdy_design *d, uint32_t mask, const size_t *level, double *L);

#endif
