/* fit.h — orthonormal bases of the full model and of every term's comparison.
 *
 * A term's test compares a reduced model R with an augmented model A = R + term:
 *   Type I   R = the terms before it,            A = R + term
 *   Type II  R = the terms not containing it,    A = R + term
 *   Type III R = all other terms,                A = full model
 * (the block and covariates never "contain" a factor term and are contained by none).
 * Bases live in group space (design.h): for a model with group-space basis U (K × r),
 * the row-space basis is Q = G·diag(n_g)^(-1/2)·U with G the n × K group indicator, so
 * for any row vector v with group sums s, Qᵀv = Uᵀ(s ⊘ √n_g). Bases are found by
 * Householder QR with column pivoting (LAPACK dgeqp3) and a relative rank tolerance. */
#ifndef STURDY_FIT_H
#define STURDY_FIT_H

#include "design.h"

/* Relative tolerance on |R_jj| / max column norm below which a column is taken as
 * linearly dependent on earlier ones. 1e-9 sits far above the rounding level of
 * doubles (≈1e-16·condition) for any design with cells of reasonable size and far
 * below any genuine contrast between sum-to-zero coded columns. */
#define STURDY_RANK_TOL 1e-9

typedef struct {
    size_t df;              /* rank the term adds to R (0 when fully confounded) */
    size_t df_nominal;      /* its coded columns */
    int testable;           /* 0: F, p and effect sizes are not computed */
    int deficient;          /* df < df_nominal: empty cells or collinearity took some
                               degrees of freedom (tested under Types I and II with the
                               df that remain, as a sequential comparison allows; under
                               Type III not tested, since its hypothesis would involve
                               the means of empty cells) */
    int by_block;           /* the lost df are confounded with the block (or, for the
                               block, with factor terms), not lost to empty cells: with
                               every cell filled Type III tests the estimable df */
    char *why_not;          /* reason when !testable (owned), else NULL */
    char *why_short;        /* when testable with df < df_nominal: where the rest went
                               (owned), else NULL */
    size_t rank_red;        /* rank of R */
    double *Uterm;          /* K × df basis of the part of A orthogonal to R */
    /* R itself is kept in whichever form is smaller (sturdy_model_reduced_* read
     * either): its own basis, or the basis of its complement within the full model,
     * span(R) = span(U) ⊖ span(C), so that projections onto R are U Uᵀ s − C Cᵀ s.
     * When A is the full model (Type III; the last term of Type I) the complement is
     * Uterm itself and nothing more is stored. */
    int complement;         /* 1: R is kept as its complement C */
    double *Ured;           /* K × rank_red basis of R, or NULL when C is kept */
    size_t rank_comp;       /* rank − rank_red when C is kept, else 0 */
    double *Ucomp;          /* K × rank_comp basis of C when it is kept and is not
                               Uterm (owned), else NULL */
} sturdy_term_basis;

typedef struct {
    int ss_type;            /* 1, 2 or 3 */
    size_t n, K;            /* rows and groups */
    size_t rank;            /* rank of the full model */
    double *U;              /* K × rank basis of the full model */
    double *sqrt_count;     /* K: √n_g */
    double *leverage;       /* K: leverage of a row in group g (h_i = ‖U_g·‖² / n_g) */
    size_t df_error;        /* n − rank */
    size_t nterms;
    sturdy_term_basis *terms;
} sturdy_model;

/* Build every basis for `ss_type` (1, 2 or 3). Terms that cannot be tested are marked
 * with a reason: a term with no degrees of freedom left; under Type III also a term that
 * empty cells leave fewer degrees of freedom than it has coded columns, and every term
 * it contains, since their hypotheses would involve the means of empty cells. A model without
 * residual degrees of freedom is still built (the classical stage says what is missing).
 * *out is owned by the caller. */
sturdy_status sturdy_model_build(const sturdy_design *d, int ss_type, sturdy_model **out,
                                 char *err);

void sturdy_model_free(sturdy_model *m);

/* What sturdy_model_build would take for `ss_type`, from the design's dimensions alone
 * (nothing is allocated): *bytes, the peak of the bases and work matrices (K × the
 * columns of the work matrix, the full model, every term's kept bases — Uterm and R's
 * smaller form, nothing more under Type III — and the largest pair of bases built for
 * one term at a time): an upper bound of what the build allocates for them, rank
 * deficiency included, unless a complement's rank decision disagrees with R's at the
 * tolerance (R's basis is then kept); and *flops, the floating-point operations of
 * their QR factorisations. The build refuses (STURDY_EMODEL) when *bytes plus the coded
 * design exceed d->max_memory. */
void sturdy_model_estimate(const sturdy_design *d, int ss_type, double *bytes, double *flops);

/* The reduced model R of term t, in whichever form the model keeps (see above):
 *   reduced_projection  gval_g = (P_R s)_g / √n_g, the value every row of group g gets
 *                       from the projection onto R; `work` has room for m->rank doubles
 *   reduced_project     the same spread to the n rows (out); `work` has room for
 *                       m->rank + K doubles; `s` must be sturdy_model_group_scaled(v)
 *   reduced_hat         h_g = ‖(basis of R)_g·‖², the diagonal of P_R in group space
 *                       (a row's leverage in R is h_g / n_g)
 *   reduced_basis       an explicit K × *r basis of R, for the fits that need a basis
 *                       of R itself: a copy of the kept one, or rebuilt from the design
 *                       exactly as sturdy_model_build built it (same columns, same QR:
 *                       the same numbers). *U is the caller's, from the library's
 *                       allocator (released with sturdy_free). */
void sturdy_model_reduced_projection(const sturdy_model *m, size_t t, const double *s,
                                     double *work, double *gval);
void sturdy_model_reduced_project(const sturdy_design *d, const sturdy_model *m, size_t t,
                                  const double *s, double *work, double *out);
void sturdy_model_reduced_hat(const sturdy_model *m, size_t t, double *h);
sturdy_status sturdy_model_reduced_basis(const sturdy_design *d, const sturdy_model *m,
                                         size_t t, double **U, size_t *r, char *err);

/* Group sums of a row vector v (length n) into s (length K), divided by √n_g. */
void sturdy_model_group_scaled(const sturdy_design *d, const sturdy_model *m,
                               const double *v, double *s);

/* ‖Uᵀs‖² for a K × r basis U (column-major) and group vector s. */
double sturdy_proj_norm2(const double *U, size_t K, size_t r, const double *s);

/* The same projection per group: gval_g = (U Uᵀ s)_g / √n_g, the value every row of group
 * g gets. `work` has room for r doubles. */
void sturdy_model_group_projection(const sturdy_model *m, const double *U, size_t r,
                                   const double *s, double *work, double *gval);

/* Row-space projection of v onto a basis: out = Q Qᵀ v (length n). `s` must be
 * sturdy_model_group_scaled(v). `work` has room for r + K doubles. */
void sturdy_model_project(const sturdy_design *d, const sturdy_model *m, const double *U,
                          size_t r, const double *s, double *work, double *out);

#endif
