/* fit.c — orthonormal bases for the full model and each term's reduced-vs-augmented
 * comparison, in group space (see fit.h), by pivoted Householder QR (LAPACK). The
 * projections onto them are in project.c. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "core/lapack.h"
#include "model/build.h"
#include "sturdy/fit.h"
#include "sturdy/buf.h"

/* Orthonormal basis of the span of the columns of A (K × k, column-major, overwritten):
 * columns are scaled to unit length first, so that the rank decision does not depend
 * on the units of a covariate; a column whose pivoted |R_jj| falls below
 * STURDY_RANK_TOL is dependent. `ref_norm[j]`, when given, replaces the norm used for
 * scaling column j (for residualised columns: their norm before residualising, so that
 * a column that vanished in the projection is recognised as dependent).
 * On success *U (K × *rank, owned) holds the basis; *U is NULL when the rank is 0. */
static sturdy_status orth_basis(double *A, size_t K, size_t k, const double *ref_norm,
                                double **U, size_t *rank, char *err)
{
    *U = NULL;
    *rank = 0;
    if (k == 0)
        return STURDY_OK;
    for (size_t j = 0; j < k; j++) {
        double nrm = 0.0;
        if (ref_norm) {
            nrm = ref_norm[j];
        } else {
            for (size_t g = 0; g < K; g++)
                nrm += A[j * K + g] * A[j * K + g];
            nrm = sqrt(nrm);
        }
        if (nrm > 0.0)
            for (size_t g = 0; g < K; g++)
                A[j * K + g] /= nrm;
    }
    size_t mn = K < k ? K : k;
    int *jpvt = sturdy_calloc(k, sizeof *jpvt);
    double *tau = sturdy_malloc(mn * sizeof *tau);
    if (!jpvt || !tau) {
        sturdy_free(jpvt); sturdy_free(tau);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    int info = sturdy_lapack_geqp3((int)K, (int)k, A, (int)K, jpvt, tau);
    sturdy_free(jpvt);
    if (info != 0) {
        sturdy_free(tau);
        if (info == STURDY_LAPACK_NO_MEMORY)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        return sturdy_fail(err, STURDY_EINTERNAL, "QR factorisation failed (info %d)",
                           (int)info);
    }
    size_t r = 0;
    while (r < mn && fabs(A[r * K + r]) > STURDY_RANK_TOL)
        r++;
    if (r == 0) {
        sturdy_free(tau);
        return STURDY_OK;
    }
    info = sturdy_lapack_orgqr((int)K, (int)r, (int)r, A, (int)K, tau);
    sturdy_free(tau);
    if (info == STURDY_LAPACK_NO_MEMORY)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (info != 0)
        return sturdy_fail(err, STURDY_EINTERNAL, "forming Q failed (info %d)", (int)info);
    double *Q = sturdy_malloc(K * r * sizeof *Q);
    if (!Q)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    memcpy(Q, A, K * r * sizeof *Q);
    *U = Q;
    *rank = r;
    return STURDY_OK;
}

/* Columns [col0, col0+ncols) of the weighted design √n_g·X_g appended to A at column k. */
static void take_columns(const sturdy_design *d, const double *sq, size_t col0,
                         size_t ncols, double *A, size_t k)
{
    size_t K = d->ngroups;
    for (size_t j = 0; j < ncols; j++)
        for (size_t g = 0; g < K; g++)
            A[(k + j) * K + g] = d->Xg[(col0 + j) * K + g] * sq[g];
}

/* Does term b contain term a (a's factors are a proper subset of b's)? Only factor
 * terms contain one another. */
static int contains(const sturdy_term *b, const sturdy_term *a)
{
    return a->kind == STURDY_TERM_FACTORS && b->kind == STURDY_TERM_FACTORS &&
           a->mask != b->mask && (a->mask & b->mask) == a->mask;
}

/* Is term j in the reduced model of term t under the SS type? */
static int in_reduced(const sturdy_design *d, int ss_type, size_t t, size_t j)
{
    if (j == t)
        return 0;
    switch (ss_type) {
    case 1: return j < t;
    case 2: return !contains(&d->terms[j], &d->terms[t]);
    default: return 1;
    }
}

/* The basis of term t's reduced model, leaving term `skip` (an index, or nterms for
 * none) out of it: *U (K × *r, owned). `A` has room for K × p doubles. */
static sturdy_status reduced_span(const sturdy_design *d, const sturdy_model *m, size_t t,
                                  size_t skip, double *A, double **U, size_t *r, char *err)
{
    /* reduced model: intercept + the terms the SS type keeps */
    size_t k = 0;
    take_columns(d, m->sqrt_count, 0, 1, A, k++);
    for (size_t j = 0; j < d->nterms; j++)
        if (j != skip && in_reduced(d, m->ss_type, t, j)) {
            take_columns(d, m->sqrt_count, d->terms[j].col0, d->terms[j].ncols, A, k);
            k += d->terms[j].ncols;
        }
    assert(k + d->terms[t].ncols <= d->p);    /* A has room for K × p */
    return orth_basis(A, d->ngroups, k, NULL, U, r, err);
}

/* Columns Z (K × c) residualised twice against the basis U (K × r): one pass of
 * classical Gram–Schmidt loses orthogonality when columns are nearly dependent.
 * nrm[j] gets column j's norm before. */
static void residualise(double *Z, size_t K, size_t c, const double *U, size_t r,
                        double *nrm)
{
    for (size_t j = 0; j < c; j++) {
        double s = 0.0;
        for (size_t g = 0; g < K; g++)
            s += Z[j * K + g] * Z[j * K + g];
        nrm[j] = sqrt(s);
    }
    /* four columns side by side: each column's steps are the same, in the same order,
       but the four dot products no longer wait on each other's adds */
    for (int pass = 0; pass < 2; pass++) {
        size_t j = 0;
        for (; j + 4 <= c; j += 4) {
            double *z0 = Z + j * K, *z1 = z0 + K, *z2 = z1 + K, *z3 = z2 + K;
            for (size_t q = 0; q < r; q++) {
                const double *u = U + q * K;
                double d0 = 0.0, d1 = 0.0, d2 = 0.0, d3 = 0.0;
                for (size_t g = 0; g < K; g++) {
                    d0 += u[g] * z0[g];
                    d1 += u[g] * z1[g];
                    d2 += u[g] * z2[g];
                    d3 += u[g] * z3[g];
                }
                for (size_t g = 0; g < K; g++) {
                    z0[g] -= d0 * u[g];
                    z1[g] -= d1 * u[g];
                    z2[g] -= d2 * u[g];
                    z3[g] -= d3 * u[g];
                }
            }
        }
        for (; j < c; j++)
            for (size_t q = 0; q < r; q++) {
                const double *u = U + q * K;
                double dot = 0.0;
                for (size_t g = 0; g < K; g++)
                    dot += u[g] * Z[j * K + g];
                for (size_t g = 0; g < K; g++)
                    Z[j * K + g] -= dot * u[g];
            }
    }
}

/* The basis of term t against its reduced model, leaving term `skip` (an index, or
 * nterms for none) out of the reduced model: tb's Ured, rank_red, Uterm and df. `A` has
 * room for K × p doubles. */
static sturdy_status span(const sturdy_design *d, const sturdy_model *m, size_t t,
                          size_t skip, double *A, sturdy_term_basis *tb, char *err)
{
    size_t K = d->ngroups;
    const sturdy_term *term = &d->terms[t];
    sturdy_status st = reduced_span(d, m, t, skip, A, &tb->Ured, &tb->rank_red, err);
    if (st)
        return st;
    /* the term's columns, residualised against the reduced basis */
    size_t c = term->ncols;
    double *Z = A, *nrm = sturdy_malloc(c * sizeof *nrm);
    if (!nrm)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    take_columns(d, m->sqrt_count, term->col0, c, Z, 0);
    residualise(Z, K, c, tb->Ured, tb->rank_red, nrm);
    st = orth_basis(Z, K, c, nrm, &tb->Uterm, &tb->df, err);
    sturdy_free(nrm);
    return st;
}

/* Rank term t adds when term `skip` leaves its reduced model (*df), on a scratch basis. */
static sturdy_status rank_without(const sturdy_design *d, const sturdy_model *m, size_t t,
                                  size_t skip, size_t *df, char *err)
{
    sturdy_term_basis tb = { 0 };
    double *A = sturdy_malloc(d->ngroups * d->p * sizeof *A);
    if (!A)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    sturdy_status st = span(d, m, t, skip, A, &tb, err);
    *df = tb.df;
    sturdy_free(A);
    sturdy_free(tb.Ured);
    sturdy_free(tb.Uterm);
    return st;
}

/* A term that lost degrees of freedom: are they confounded with the block (for the
 * block: with factor terms)? A 2^k trial in blocks that confound the highest interaction
 * (a classic fractional blocking) loses nothing to empty cells: taking the block out of
 * the reduced model gives the term its df back. On success *names lists the terms that
 * took them ("" when none did alone; owned). */
static sturdy_status block_cause(const sturdy_design *d, const sturdy_model *m, size_t t,
                                 size_t df, char **names, char *err)
{
    *names = NULL;
    sturdy_buf b;
    sturdy_buf_init(&b);
    const sturdy_term *term = &d->terms[t];
    for (size_t j = 0; j < d->nterms; j++) {
        const sturdy_term *o = &d->terms[j];
        int pair = term->kind == STURDY_TERM_BLOCK ? o->kind == STURDY_TERM_FACTORS
                                                   : o->kind == STURDY_TERM_BLOCK;
        if (!pair || !in_reduced(d, m->ss_type, t, j))
            continue;
        size_t without = 0;
        sturdy_status st = rank_without(d, m, t, j, &without, err);
        if (st) {
            sturdy_buf_free(&b);
            return st;
        }
        if (without > df)
            sturdy_buf_printf(&b, "%s'%s'", b.len ? ", " : "", o->label);
    }
    if (b.failed) {
        sturdy_buf_free(&b);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    *names = sturdy_strdup(b.data ? b.data : "");
    sturdy_buf_free(&b);
    return *names ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

static sturdy_status term_basis(const sturdy_design *d, const sturdy_model *m, size_t t,
                                double *A, sturdy_term_basis *tb, char *err)
{
    const sturdy_term *term = &d->terms[t];
    size_t c = term->ncols;
    sturdy_status st = span(d, m, t, d->nterms, A, tb, err);
    if (st)
        return st;
    char *conf = NULL;     /* the terms that took the lost df, when it was the block */
    if (tb->df < c && d->has_block && (st = block_cause(d, m, t, tb->df, &conf, err)))
        return st;
    if (conf && !*conf) {
        sturdy_free(conf);
        conf = NULL;
    }
    int empty = d->ncells < d->ncells_possible;
    const char *other = empty ? "empty cells" : d->ncov ? "collinear covariates"
                                                        : "collinearity with other terms";
    assert(tb->df <= c);                /* a term adds at most its own columns' rank */
    tb->df_nominal = c;
    tb->testable = 1;
    if (tb->df == 0 && conf && term->kind == STURDY_TERM_BLOCK) {
        tb->testable = 0;
        tb->why_not = sturdy_asprintf(
            "not testable: every contrast of the block '%s' is confounded with %s",
            term->label, conf);
    } else if (tb->df == 0 && conf) {
        tb->testable = 0;
        tb->why_not = sturdy_asprintf(
            "not testable: '%s' is confounded with the block %s (the design puts its "
            "contrast between blocks, so the block effects carry it); the other terms are "
            "estimated within blocks", term->label, conf);
    } else if (tb->df == 0) {
        tb->testable = 0;
        tb->why_not = sturdy_asprintf(
            "not testable: '%s' is completely confounded with the other terms (%s)",
            term->label, other);
    } else if (tb->df < c && conf && !empty) {
        /* every cell is filled: the estimable df test a well-defined hypothesis under
         * every SS type (as a reduced-versus-full comparison does) */
        tb->deficient = 1;
        tb->by_block = 1;
        tb->why_short = term->kind == STURDY_TERM_BLOCK
            ? sturdy_asprintf("'%s' is tested with %zu of its %zu degrees of freedom: the "
                              "rest are confounded with %s", term->label, tb->df, c, conf)
            : sturdy_asprintf("'%s' is tested with %zu of its %zu degrees of freedom: the "
                              "rest are confounded with the block %s", term->label, tb->df,
                              c, conf);
        if (!tb->why_short) {
            sturdy_free(conf);
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        }
    } else if (tb->df < c) {
        tb->deficient = 1;
        tb->why_short = sturdy_asprintf("'%s' is tested with %zu of its %zu degrees of "
                                        "freedom: %s took the rest", term->label, tb->df, c,
                                        other);
        if (!tb->why_short) {
            sturdy_free(conf);
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        }
        if (m->ss_type == 3) {
            tb->testable = 0;
            tb->why_not = sturdy_asprintf(
                "not testable under Type III: %s leave '%s' only %zu of its %zu degrees "
                "of freedom; use sums of squares of Type I or II, or drop the highest "
                "interactions (lower the interaction order)%s",
                other, term->label, tb->df, c, empty ? " or fill the cells" : "");
        }
    }
    sturdy_free(conf);
    if (!tb->testable && !tb->why_not)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    return STURDY_OK;
}

/* Keep term t's reduced model in the smaller form (fit.h): its complement within the
 * full model when that has fewer columns, else its own basis. When the term's columns
 * complete the reduced model to the full one, the complement is Uterm and costs
 * nothing; otherwise it is the full model's columns left out of R, residualised
 * against R (its rank must come out as rank − rank_red, or R's basis is kept). */
static sturdy_status keep_smaller(const sturdy_design *d, const sturdy_model *m, size_t t,
                                  double *A, sturdy_term_basis *tb, char *err)
{
    size_t K = d->ngroups;
    assert(tb->rank_red >= 1 && tb->rank_red <= m->rank);
    size_t rc = m->rank - tb->rank_red;
    if (tb->rank_red + tb->df == m->rank) {
        sturdy_free(tb->Ured);
        tb->Ured = NULL;
        tb->complement = 1;
        tb->rank_comp = tb->df;
        return STURDY_OK;
    }
    if (rc >= tb->rank_red)
        return STURDY_OK;
    size_t c = 0;
    for (size_t j = 0; j < d->nterms; j++)
        if (!in_reduced(d, m->ss_type, t, j)) {
            take_columns(d, m->sqrt_count, d->terms[j].col0, d->terms[j].ncols, A, c);
            c += d->terms[j].ncols;
        }
    double *nrm = sturdy_malloc((c ? c : 1) * sizeof *nrm);
    if (!nrm)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    residualise(A, K, c, tb->Ured, tb->rank_red, nrm);
    double *C = NULL;
    size_t r = 0;
    sturdy_status st = orth_basis(A, K, c, nrm, &C, &r, err);
    sturdy_free(nrm);
    if (st)
        return st;
    if (r != rc) {          /* the rank decisions disagree: keep R's own basis */
        sturdy_free(C);
        return STURDY_OK;
    }
    sturdy_free(tb->Ured);
    tb->Ured = NULL;
    tb->complement = 1;
    tb->rank_comp = rc;
    tb->Ucomp = C;
    return STURDY_OK;
}

void sturdy_model_free(sturdy_model *m)
{
    if (!m)
        return;
    sturdy_free(m->U);
    sturdy_free(m->sqrt_count);
    sturdy_free(m->leverage);
    for (size_t t = 0; m->terms && t < m->nterms; t++) {
        sturdy_free(m->terms[t].why_not);
        sturdy_free(m->terms[t].why_short);
        sturdy_free(m->terms[t].Ured);
        sturdy_free(m->terms[t].Uterm);
        sturdy_free(m->terms[t].Ucomp);
    }
    sturdy_free(m->terms);
    sturdy_free(m);
}

/* Columns of term t's reduced model (the intercept included) under the SS type. */
static size_t reduced_columns(const sturdy_design *d, int ss_type, size_t t)
{
    size_t k = 1;
    for (size_t j = 0; j < d->nterms; j++)
        if (in_reduced(d, ss_type, t, j))
            k += d->terms[j].ncols;
    return k;
}

void sturdy_model_estimate(const sturdy_design *d, int ss_type, double *bytes, double *flops)
{
    double K = (double)d->ngroups, p = (double)d->p;
    double kp = p < K ? p : K;
    double cols = p + kp;                   /* the work matrix and the full basis */
    double f = 4.0 * K * p * p;             /* its QR and Q */
    double kept = 0.0, passing = 0.0;       /* bases kept; the largest built for one term */
    for (size_t t = 0; t < d->nterms; t++) {
        double kr = (double)reduced_columns(d, ss_type, t), c = (double)d->terms[t].ncols;
        double rest = p - kr;               /* the full model's columns outside R */
        double krK = kr < K ? kr : K;       /* no basis outgrows the groups */
        double cK = c < K ? c : K;
        double now = krK;                   /* R's basis, built for every term */
        kept += cK;                         /* Uterm */
        f += 4.0 * K * krK * krK + 4.0 * K * krK * cK + 4.0 * K * cK * cK;
        if (rest > c) {
            /* R plus the term is not the full model: R is kept as its own basis or as
             * its complement (rank − rank_R ≤ rest columns), whichever is smaller, and
             * the complement is built only when it may be the smaller */
            double comp = rest < K ? rest : K;
            if (comp < krK) {
                kept += comp;
                f += 4.0 * K * krK * comp + 4.0 * K * comp * comp;
            } else {
                kept += krK;
            }
            now += comp < krK ? comp : krK;
        }
        /* else the complement is Uterm: nothing more is kept (Type III) */
        if (now > passing)
            passing = now;
    }
    cols += kept + passing;
    if (d->has_block)                       /* the block's confounding check: one more
                                               work matrix and its bases */
        cols += p + kp;
    *bytes = cols * K * sizeof(double);
    *flops = f;
}

/* The model's estimated memory within the design's budget, or STURDY_EMODEL. */
static sturdy_status check_budget(const sturdy_design *d, int ss_type, char *err)
{
    double bytes, flops;
    sturdy_model_estimate(d, ss_type, &bytes, &flops);
    double design = (double)d->ngroups * (double)d->p * sizeof(double);
    size_t limit = d->max_memory ? d->max_memory : STURDY_DEFAULT_MAX_MEMORY;
    double ops = d->max_build_ops > 0 ? d->max_build_ops : STURDY_DEFAULT_MAX_BUILD_OPS;
    char a[32], b[32];
    if (bytes + design <= (double)limit && flops > ops)
        return sturdy_fail(err, STURDY_EMODEL,
                           "the model would take about %.2g floating-point operations to "
                           "build (%zu groups; %zu terms, each with bases of up to %zu "
                           "columns; about %s of memory), more than the limit on build work "
                           "of %.2g; lower the interaction order or raise the limit on "
                           "build work",
                           flops, d->ngroups, d->nterms, d->p,
                           sturdy_format_bytes(bytes + design, a), ops);
    if (bytes + design <= (double)limit)
        return STURDY_OK;
    return sturdy_fail(err, STURDY_EMODEL,
                       "the model would need about %s of memory and %.2g floating-point "
                       "operations to build (%zu groups; %zu terms, each with bases of up "
                       "to %zu columns), more than the limit on memory of %s; lower the "
                       "interaction order or raise the limit on memory",
                       sturdy_format_bytes(bytes + design, a), flops, d->ngroups, d->nterms,
                       d->p, sturdy_format_bytes((double)limit, b));
}

/* Scratch of the term loop beyond this many bytes keeps it on one thread (each thread
   holds its own K × p copy of the design) */
#define BUILD_SCRATCH_MAX (256.0 * 1024 * 1024)

/* Every term's bases (term_basis, keep_smaller), on up to `threads` threads: each term
 * reads the full model and writes its own basis only, with its own scratch, so the
 * threads change nothing but the time. The first failure in term order is the one
 * reported. */
static sturdy_status term_bases(const sturdy_design *d, sturdy_model *m, double *A,
                                int threads, char *err)
{
    size_t nt = d->nterms, Kp = d->ngroups * d->p;
    if (threads > (int)nt)
        threads = (int)nt;
    if (threads > 1 && (double)threads * (double)Kp * sizeof *A > BUILD_SCRATCH_MAX)
        threads = 1;
    if (threads <= 1) {
        sturdy_status st = STURDY_OK;
        for (size_t t = 0; t < nt && !st; t++)
            if (!(st = term_basis(d, m, t, A, &m->terms[t], err)))
                st = keep_smaller(d, m, t, A, &m->terms[t], err);
        return st;
    }
    sturdy_status *sts = sturdy_calloc(nt, sizeof *sts);
    char *msgs = sturdy_malloc(nt * STURDY_ERR_LEN);
    if (!sts || !msgs) {
        sturdy_free(sts);
        sturdy_free(msgs);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    int no_scratch = 0;    /* a thread without its scratch, whether or not it got a term */
#pragma omp parallel num_threads(threads)
    {
        double *own = sturdy_malloc((Kp ? Kp : 1) * sizeof *own);
        if (!own) {
#pragma omp atomic write
            no_scratch = 1;
        }
#pragma omp for schedule(dynamic, 1)
        for (size_t t = 0; t < nt; t++) {
            char *msg = msgs + t * STURDY_ERR_LEN;
            msg[0] = '\0';
            if (!own)
                sts[t] = sturdy_fail(msg, STURDY_EINTERNAL, "out of memory");
            else if (!(sts[t] = term_basis(d, m, t, own, &m->terms[t], msg)))
                sts[t] = keep_smaller(d, m, t, own, &m->terms[t], msg);
        }
        sturdy_free(own);
    }
    sturdy_status st = no_scratch ? sturdy_fail(err, STURDY_EINTERNAL, "out of memory")
                                  : STURDY_OK;
    for (size_t t = 0; t < nt && !st; t++)
        if ((st = sts[t]))
            sturdy_fail(err, st, "%s", msgs + t * STURDY_ERR_LEN);
    sturdy_free(sts);
    sturdy_free(msgs);
    return st;
}

static sturdy_status build(const sturdy_design *d, sturdy_model *m, int threads, char *err)
{
    size_t K = d->ngroups, p = d->p;
    sturdy_status budget = check_budget(d, m->ss_type, err);
    if (budget)
        return budget;
    m->n = d->n;
    m->K = K;
    m->nterms = d->nterms;
    m->sqrt_count = sturdy_calloc(K, sizeof *m->sqrt_count);
    m->leverage = sturdy_malloc(K * sizeof *m->leverage);
    m->terms = sturdy_calloc(d->nterms ? d->nterms : 1, sizeof *m->terms);
    double *A = sturdy_malloc(K * p * sizeof *A);
    if (!m->sqrt_count || !m->leverage || !m->terms || !A) {
        sturdy_free(A);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory (design of %zu × %zu)", K, p);
    }
    for (size_t g = 0; g < K; g++)
        m->sqrt_count[g] = sqrt((double)d->group_count[g]);
    take_columns(d, m->sqrt_count, 0, p, A, 0);
    sturdy_status st = orth_basis(A, K, p, NULL, &m->U, &m->rank, err);
    if (st) {
        sturdy_free(A);
        return st;
    }
    /* the intercept column alone has rank 1; no basis outgrows its columns or groups */
    assert(m->rank >= 1 && m->rank <= p && m->rank <= K && m->rank <= d->n);
    m->df_error = d->n - m->rank;
    for (size_t g = 0; g < K; g++) {
        double h = 0.0;
        for (size_t q = 0; q < m->rank; q++)
            h += m->U[q * K + g] * m->U[q * K + g];
        m->leverage[g] = h / (double)d->group_count[g];
    }
    st = term_bases(d, m, A, threads, err);
    sturdy_free(A);
    if (st)
        return st;
    /* Type III with an inestimable term: the hypotheses of the terms it contains are
     * defined through the means of its empty cells, so they are not tested either. */
    if (m->ss_type == 3)
        for (size_t t = 0; t < d->nterms; t++) {
            if (!m->terms[t].testable || d->terms[t].kind != STURDY_TERM_FACTORS)
                continue;
            for (size_t b = 0; b < d->nterms; b++)
                if (m->terms[b].deficient && !m->terms[b].by_block &&
                    contains(&d->terms[b], &d->terms[t])) {
                    m->terms[t].testable = 0;
                    m->terms[t].why_not = sturdy_asprintf(
                        "not testable under Type III: its hypothesis involves the means of "
                        "empty cells of '%s'; use sums of squares of Type I or II, or drop that "
                        "interaction (lower the interaction order)", d->terms[b].label);
                    if (!m->terms[t].why_not)
                        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
                    break;
                }
        }
    return STURDY_OK;
}

sturdy_status sturdy_model_build(const sturdy_design *d, int ss_type, sturdy_model **out,
                                 char *err)
{
    return sturdy_model_build_on(d, ss_type, 1, out, err);
}

sturdy_status sturdy_model_build_on(const sturdy_design *d, int ss_type, int threads,
                                    sturdy_model **out, char *err)
{
    *out = NULL;
    if (ss_type < 1 || ss_type > 3)
        return sturdy_fail(err, STURDY_EUSAGE, "sums of squares type must be 1, 2 or 3");
    sturdy_model *m = sturdy_calloc(1, sizeof *m);
    if (!m)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    m->ss_type = ss_type;
    sturdy_status st = build(d, m, threads, err);
    if (st) {
        sturdy_model_free(m);
        return st;
    }
    *out = m;
    return STURDY_OK;
}

sturdy_status sturdy_model_reduced_basis(const sturdy_design *d, const sturdy_model *m,
                                         size_t t, double **U, size_t *r, char *err)
{
    const sturdy_term_basis *tb = &m->terms[t];
    size_t K = m->K;
    assert(K == d->ngroups && t < d->nterms);
    *U = NULL;
    *r = 0;
    if (!tb->complement) {
        double *c = sturdy_malloc(K * tb->rank_red * sizeof *c);   /* 0 is served as 1 byte */
        if (!c)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        memcpy(c, tb->Ured, K * tb->rank_red * sizeof *c);
        *U = c;
        *r = tb->rank_red;
        return STURDY_OK;
    }
    double *A = sturdy_malloc(K * d->p * sizeof *A);
    if (!A)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory (a basis of %zu × %zu)",
                           K, d->p);
    sturdy_status st = reduced_span(d, m, t, d->nterms, A, U, r, err);
    sturdy_free(A);
    assert(st || *r == tb->rank_red);
    return st;
}
