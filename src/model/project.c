/* project.c — projections onto the model's bases in group space (see fit.h): group sums
 * scaled by 1/√n_g, squared norms of projections, fitted values of the full and reduced
 * models and the reduced model's leverages. The bases themselves are built in fit.c. */
#include <assert.h>
#include <math.h>
#include <string.h>

#include "core/core.h"
#include "sturdy/fit.h"

void sturdy_model_group_scaled(const sturdy_design *d, const sturdy_model *m,
                               const double *v, double *s)
{
    size_t K = m->K;
    assert(K == d->ngroups && m->n == d->n);
    memset(s, 0, K * sizeof *s);
    for (size_t i = 0; i < d->n; i++)
        s[d->group[i]] += v[i];
    for (size_t g = 0; g < K; g++)
        s[g] /= m->sqrt_count[g];
}

double sturdy_proj_norm2(const double *U, size_t K, size_t r, const double *s)
{
    double total = 0.0, c[4];
    size_t q = 0;
    for (; q < r; q += 4) {
        size_t k = r - q < 4 ? r - q : 4;
        sturdy_dot_rows(U + q * K, K, k, s, c);
        for (size_t i = 0; i < k; i++)
            total += c[i] * c[i];
    }
    return total;
}

/* out[g] = Σ_q U[q·K + g]·coef[q] (U c in group space), each sum in order of q from 0,
 * over the rows of U side by side (the same bits as one cell at a time). */
static void combine_rows(const double *restrict U, size_t K, size_t r,
                         const double *restrict coef, double *restrict out)
{
    for (size_t g = 0; g < K; g++)
        out[g] = 0.0;
    for (size_t q = 0; q < r; q++) {
        const double *u = U + q * K;
        double cq = coef[q];
        for (size_t g = 0; g < K; g++)
            out[g] += u[g] * cq;
    }
}

void sturdy_model_group_projection(const sturdy_model *m, const double *U, size_t r,
                                   const double *s, double *work, double *gval)
{
    size_t K = m->K;
    double *coef = work;
    sturdy_dot_rows(U, K, r, s, coef);
    /* group value = (U c)_g / √n_g, then spread to rows */
    combine_rows(U, K, r, coef, gval);
    for (size_t g = 0; g < K; g++)
        gval[g] /= m->sqrt_count[g];
}

void sturdy_model_project(const sturdy_design *d, const sturdy_model *m, const double *U,
                          size_t r, const double *s, double *work, double *out)
{
    double *gval = work + r;
    sturdy_model_group_projection(m, U, r, s, work, gval);
    for (size_t i = 0; i < d->n; i++)
        out[i] = gval[d->group[i]];
}

/* The complement's basis of a term kept that way. */
static const double *comp_basis(const sturdy_term_basis *tb)
{
    return tb->Ucomp ? tb->Ucomp : tb->Uterm;
}

void sturdy_model_reduced_projection(const sturdy_model *m, size_t t, const double *s,
                                     double *work, double *gval)
{
    const sturdy_term_basis *tb = &m->terms[t];
    if (!tb->complement) {
        sturdy_model_group_projection(m, tb->Ured, tb->rank_red, s, work, gval);
        return;
    }
    size_t K = m->K, rc = tb->rank_comp;
    const double *U = m->U, *C = comp_basis(tb);
    double *coef = work;
    sturdy_dot_rows(U, K, m->rank, s, coef);
    combine_rows(U, K, m->rank, coef, gval);
    sturdy_dot_rows(C, K, rc, s, coef);
    /* C's part cell by cell (no room for a second vector in `work`), subtracted whole */
    for (size_t g = 0; g < K; g++) {
        double v = 0.0;
        for (size_t q = 0; q < rc; q++)
            v += C[q * K + g] * coef[q];
        gval[g] = (gval[g] - v) / m->sqrt_count[g];
    }
}

void sturdy_model_reduced_project(const sturdy_design *d, const sturdy_model *m, size_t t,
                                  const double *s, double *work, double *out)
{
    double *gval = work + m->rank;
    sturdy_model_reduced_projection(m, t, s, work, gval);
    for (size_t i = 0; i < d->n; i++)
        out[i] = gval[d->group[i]];
}

void sturdy_model_reduced_hat(const sturdy_model *m, size_t t, double *h)
{
    const sturdy_term_basis *tb = &m->terms[t];
    size_t K = m->K;
    for (size_t g = 0; g < K; g++) {
        double v = 0.0;
        if (!tb->complement) {
            for (size_t q = 0; q < tb->rank_red; q++)
                v += tb->Ured[q * K + g] * tb->Ured[q * K + g];
        } else {
            const double *C = comp_basis(tb);
            double c = 0.0;
            for (size_t q = 0; q < m->rank; q++)
                v += m->U[q * K + g] * m->U[q * K + g];
            for (size_t q = 0; q < tb->rank_comp; q++)
                c += C[q * K + g] * C[q * K + g];
            v -= c;
        }
        h[g] = v;
    }
}
