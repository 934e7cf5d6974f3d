/* means.c — least-squares marginal means and their contrasts from the full model's
 * orthonormal basis: the estimable-function machinery that compare.c builds on.
 *
 * With the row-space basis Q = G·diag(n_g)^(-1/2)·U of the full model (fit.h) the coded
 * design is X = Q·R with R = Uᵀ·diag(√n_g)·X_g (rank × p). A linear function Lᵀβ is
 * estimable iff L lies in the row space of R (Searle 1971, §5.4); then L = Rᵀw with
 * w = (R Rᵀ)⁻¹ R L, its least-squares estimate is wᵀQᵀy and its variance σ²‖w‖². */
#include <assert.h>
#include <math.h>
#include <string.h>

#include "classical/means.h"
#include "core/core.h"
#include "core/lapack.h"

/* L is taken as estimable when ‖Rᵀw − L‖ ≤ this × max(1, ‖L‖): coded columns are
 * 0/±1 products, so a non-estimable L misses the row space by an amount of order one,
 * while rounding leaves ≈ 1e-15 × the condition of R Rᵀ (the same scale as the rank
 * tolerance STURDY_RANK_TOL of fit.h). */
#define ESTIMABLE_TOL 1e-7

sturdy_status sturdy_lsm_init(const sturdy_design *d, const sturdy_model *m,
                              sturdy_lsm *out, char *err)
{
    memset(out, 0, sizeof *out);
    size_t K = d->ngroups, p = d->p, r = m->rank;
    out->p = p;
    out->rank = r;
    out->R = sturdy_calloc(r * p + 1, sizeof(double));
    out->chol = sturdy_calloc(r * r + 1, sizeof(double));
    out->work = sturdy_calloc(2 * (r + p) + K + 1, sizeof(double));
    if (!out->R || !out->chol || !out->work) {
        sturdy_lsm_free(out);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    /* R[a, j] = Σ_g U[g, a] √n_g X_g[g, j]  (column-major, rank × p) */
    for (size_t j = 0; j < p; j++)
        for (size_t a = 0; a < r; a++) {
            double s = 0;
            for (size_t g = 0; g < K; g++)
                s += m->U[a * K + g] * m->sqrt_count[g] * d->Xg[j * K + g];
            out->R[j * r + a] = s;
        }
    /* R Rᵀ and its Cholesky factor */
    for (size_t a = 0; a < r; a++)
        for (size_t b = 0; b <= a; b++) {
            double s = 0;
            for (size_t j = 0; j < p; j++)
                s += out->R[j * r + a] * out->R[j * r + b];
            out->chol[b * r + a] = out->chol[a * r + b] = s;
        }
    if (r > 0 && sturdy_lapack_potrf_lower((int)r, out->chol, (int)r) != 0) {
        sturdy_lsm_free(out);
        return sturdy_fail(err, STURDY_EINTERNAL,
                           "the model's basis is not of full rank (marginal means)");
    }
    return STURDY_OK;
}

void sturdy_lsm_free(sturdy_lsm *l)
{
    if (!l)
        return;
    sturdy_free(l->R);
    sturdy_free(l->chol);
    sturdy_free(l->work);
    memset(l, 0, sizeof *l);
}

int sturdy_lsm_weights(const sturdy_lsm *l, const double *L, double *w)
{
    size_t r = l->rank, p = l->p;
    double nl = 0;
    for (size_t j = 0; j < p; j++)
        nl += L[j] * L[j];
    for (size_t a = 0; a < r; a++) {
        double s = 0;
        for (size_t j = 0; j < p; j++)
            s += l->R[j * r + a] * L[j];
        w[a] = s;
    }
    if (r > 0)
        sturdy_lapack_potrs_lower((int)r, 1, l->chol, (int)r, w, (int)r);
    double miss = 0;
    for (size_t j = 0; j < p; j++) {
        double s = -L[j];
        for (size_t a = 0; a < r; a++)
            s += l->R[j * r + a] * w[a];
        miss += s * s;
    }
    return sqrt(miss) <= ESTIMABLE_TOL * fmax(1.0, sqrt(nl));
}

/* Sum-to-zero code of level `lev` of an L-level factor in column j < L−1 (terms.c). */
static double sum_code(size_t lev, size_t L, size_t j)
{
    return lev == L - 1 ? -1.0 : (lev == j ? 1.0 : 0.0);
}

void sturdy_lsm_vector(const sturdy_design *d, uint32_t mask, const size_t *level, double *L)
{
    memset(L, 0, d->p * sizeof *L);
    L[0] = 1.0;
    for (size_t ti = 0; ti < d->nterms; ti++) {
        const sturdy_term *t = &d->terms[ti];
        /* terms with a factor outside `mask`, the block and the centred covariates
           average to zero over equal weights */
        if (t->kind != STURDY_TERM_FACTORS || (t->mask & ~mask))
            continue;
        for (size_t col = 0; col < t->ncols; col++) {
            size_t rest = col;
            double v = 1.0;
            for (size_t f = 0; f < d->nfactors; f++) {
                if (!(t->mask & (1u << f)))
                    continue;
                size_t nl = d->factors[f].nlevels;
                size_t j = rest % (nl - 1);
                rest /= nl - 1;
                v *= sum_code(level[f], nl, j);
            }
            L[t->col0 + col] = v;
        }
    }
}
