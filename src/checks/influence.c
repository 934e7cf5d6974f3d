/* influence.c — how single rows move each term's F-test: exact leave-one-out F and p
 * for every used row, and a greedy search for the fewest rows whose removal changes the
 * term's conclusion at alpha.
 *
 * No refits. A term's test compares models R ⊂ A (fit.h) with the full model F as the
 * error model; each is a column space, and removing a set S of rows from a least-squares
 * fit changes its residual sum of squares by the deletion formula
 *     RSS(−S) = RSS − e_Sᵀ (I − H_SS)⁻¹ e_S
 * (Cook & Weisberg 1982, §3.6; for one row RSS − e_i²/(1 − h_i)), with e the model's
 * residuals and H its hat matrix. In group space (fit.h) H_ij = Σ_c U_{g_i c} U_{g_j c} /
 * √(n_{g_i} n_{g_j}) for a basis U, and the basis of A is [U_R, U_T], so every quantity
 * costs O(|S|·rank). The term's SS without S is RSS_R(−S) − RSS_A(−S), the error SS is
 * RSS_F(−S) on df_error − |S| df, exactly what a refit on the remaining rows gives as
 * long as no model loses rank: I − H_SS must stay positive definite in the full model
 * (then also in R and A, whose hat matrices are smaller). A set that breaks this — the
 * only row of a cell in a full factorial, the only row of a block level — changes the
 * design itself and is not tried; the note says how many rows are such.
 *
 * The search (greedy, documented as such): step 1 tries every row (exact and
 * exhaustive, so a single deciding row is always found); each later step keeps the rows
 * chosen so far and tries every other row with them, recomputing exactly, choosing the
 * one that moves p furthest toward the other side of alpha. It stops at the first set
 * that changes the conclusion or after SENS_MAX_ROWS rows. Greedy search can miss a
 * smaller set whose rows matter only together, so "none within 3" is not a proof. */
#include <math.h>
#include <string.h>

#include "checks/checks.h"
#include "core/core.h"
#include "sturdy/dist.h"

/* How many rows the search removes at most (issue 11: "up to 3"). */
#define SENS_MAX_ROWS 3
/* The headline opens with a term when at most SENS_DECISIVE_ROWS rows change its
 * conclusion, move its p at least SENS_DECISIVE_RATIO-fold, and one of them is flagged
 * by the outlier test (residuals.c). Without the ratio any p near alpha would qualify,
 * since one row nudges it across; without the flag, two ordinary rows move a p of 0.2
 * tenfold in about a quarter of clean 48-row datasets. With both, the rule fires on few
 * clean datasets and on nearly every dataset where a planted decimal slip decides a term
 * (tests/xcheck_sensitivity.py measures both). */
#define SENS_DECISIVE_ROWS 2
#define SENS_DECISIVE_RATIO 10.0
/* A pivot of the Cholesky factor of I − H_SS at or below this means the set takes a
 * dimension of the model with it (the same margin as a leverage of 1; core.h). */
#define PIVOT_TOL STURDY_LEVERAGE_ONE_TOL

/* One term's models as row-major group bases, the fitted values and the sums. */
typedef struct {
    size_t K, rR, rT, rF;
    double *UR, *UT, *UF;   /* K × r, row-major: row g is group g's coordinates */
    size_t rC;              /* R kept as its complement C within F (fit.h): UR is NULL, */
    double *UC;             /* H_R = H_F − H_C; UC is UT when C is the term's own basis */
    const double *inv_sqrt; /* K: 1/√n_g */
    double *eR, *eA, *eF;   /* n residuals of R, A and F */
    double ss_term, sse;    /* the term's SS and the error SS with every row */
    double df, dfe;
} infl_term;

/* Row-major copy of a K × r column-major basis. */
static double *row_major(const double *U, size_t K, size_t r)
{
    size_t len = K * r;
    double *o = sturdy_malloc((len ? len : 1) * sizeof *o);
    if (!o) return NULL;
    for (size_t g = 0; g < K; g++)
        for (size_t c = 0; c < r; c++) o[g * r + c] = U[c * K + g];
    return o;
}

static double dot_rows(const double *U, size_t r, size_t gi, size_t gj)
{
    double s = 0.0;
    for (size_t c = 0; c < r; c++) s += U[gi * r + c] * U[gj * r + c];
    return s;
}

/* A basis whose hat matrix is added to (sign +1) or taken from (−1) a model's. */
typedef struct {
    const double *U;
    size_t r;
    double sign;
} hat_part;

/* e_Sᵀ (I − H_SS)⁻¹ e_S for the model whose hat matrix is the signed sum of the parts'
 * (the first with sign +1), by Cholesky; returns 0 when I − H_SS is not safely positive
 * definite (the set takes a dimension of the model with it). */
static int deleted_ss(const infl_term *it, const sturdy_design *d, const hat_part *part,
                      size_t np, const double *e, const size_t *S, size_t s, double *out)
{
    double A[SENS_MAX_ROWS * SENS_MAX_ROWS], b[SENS_MAX_ROWS];
    for (size_t a = 0; a < s; a++) {
        size_t ga = d->group[S[a]];
        b[a] = e[S[a]];
        for (size_t c = 0; c <= a; c++) {
            size_t gc = d->group[S[c]];
            double h = dot_rows(part[0].U, part[0].r, ga, gc);
            for (size_t k = 1; k < np; k++) {
                if (part[k].sign > 0) h += dot_rows(part[k].U, part[k].r, ga, gc);
                else h -= dot_rows(part[k].U, part[k].r, ga, gc);
            }
            h *= it->inv_sqrt[ga] * it->inv_sqrt[gc];
            A[a * s + c] = (a == c ? 1.0 : 0.0) - h;
        }
    }
    /* Cholesky (lower), then ‖L⁻¹ b‖² */
    if (!sturdy_cholesky(A, s, PIVOT_TOL)) return 0;
    sturdy_cholesky_forward(A, s, b);
    double q = 0.0;
    for (size_t i = 0; i < s; i++) q += b[i] * b[i];
    *out = q;
    return 1;
}

/* F and p of the term with the rows S removed; 0 when the set cannot be removed. */
static int eval_set(const infl_term *it, const sturdy_design *d, const size_t *S, size_t s,
                    double *f, double *p)
{
    double qR, qA, qF;
    hat_part F[1] = { { it->UF, it->rF, 1.0 } };
    /* R = its own basis, or F less its complement; A = R plus the term */
    hat_part R[3] = { { it->UR, it->rR, 1.0 }, { it->UT, it->rT, 1.0 }, { NULL, 0, 0 } };
    size_t nR = 1;
    if (!it->UR) {
        R[0] = (hat_part){ it->UF, it->rF, 1.0 };
        R[1] = (hat_part){ it->UC, it->rC, -1.0 };
        R[2] = (hat_part){ it->UT, it->rT, 1.0 };
        nR = 2;
    }
    if (!deleted_ss(it, d, F, 1, it->eF, S, s, &qF) ||
        !deleted_ss(it, d, R, nR, it->eR, S, s, &qR) ||
        !deleted_ss(it, d, R, nR + 1, it->eA, S, s, &qA))
        return 0;
    double dfe = it->dfe - (double)s, sse = it->sse - qF;
    if (!(dfe >= 1.0) || !(sse > 0.0)) return 0;
    double ss = it->ss_term - qR + qA;
    if (ss < 0.0) ss = 0.0; /* rounding below an exact zero */
    *f = (ss / it->df) / (sse / dfe);
    *p = sturdy_f_sf(*f, it->df, dfe);
    return 1;
}

static void infl_free(infl_term *it)
{
    sturdy_free(it->UR);
    if (it->UC != it->UT) sturdy_free(it->UC);
    sturdy_free(it->UT);
    sturdy_free(it->UF);
    sturdy_free(it->eR);
    sturdy_free(it->eA);
    sturdy_free(it->eF);
}

/* The fitted group values of y's projection on a basis (K × r column-major). */
static void fitted(const sturdy_model *m, const double *U, size_t r, const double *s,
                   double *work, double *gval)
{
    if (r == 0) {
        memset(gval, 0, m->K * sizeof *gval);
        return;
    }
    sturdy_model_group_projection(m, U, r, s, work, gval);
}

/* Sets up term k of response ri; STURDY_EMODEL when the term has no test. */
static sturdy_status infl_init(const sturdy_design *d, const sturdy_model *m, size_t ri,
                               size_t k, infl_term *it, char *err)
{
    const sturdy_term_basis *tb = &m->terms[k];
    memset(it, 0, sizeof *it);
    if (!tb->testable || tb->df == 0 || m->df_error < 2)
        return sturdy_fail(err, STURDY_EMODEL, "the term has no F-test to change");
    size_t K = m->K, n = d->n;
    const double *y = d->y + ri * n;
    it->K = K;
    it->rR = tb->rank_red;
    it->rT = tb->df;
    it->rF = m->rank;
    it->df = (double)tb->df;
    it->dfe = (double)m->df_error;
    it->UT = row_major(tb->Uterm, K, it->rT);
    int have_r = 1;         /* R's basis, or its complement (fit.h keeps the smaller) */
    if (!tb->complement) {
        it->UR = row_major(tb->Ured, K, it->rR);
        have_r = it->UR != NULL;
    } else {
        it->rC = tb->rank_comp;
        it->UC = tb->Ucomp ? row_major(tb->Ucomp, K, it->rC) : it->UT;
        have_r = it->UC != NULL;
    }
    it->UF = row_major(m->U, K, it->rF);
    it->eR = sturdy_malloc(n * sizeof *it->eR);
    it->eA = sturdy_malloc(n * sizeof *it->eA);
    it->eF = sturdy_malloc(n * sizeof *it->eF);
    double *s = sturdy_malloc(K * sizeof *s), *work = sturdy_malloc((K + it->rF + 1) * sizeof *work);
    double *gR = sturdy_malloc(K * sizeof *gR), *gT = sturdy_malloc(K * sizeof *gT);
    double *gF = sturdy_malloc(K * sizeof *gF), *isq = sturdy_malloc(K * sizeof *isq);
    sturdy_status st = STURDY_OK;
    if (!have_r || !it->UT || !it->UF || !it->eR || !it->eA || !it->eF || !s || !work ||
        !gR || !gT || !gF || !isq) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    } else {
        sturdy_model_group_scaled(d, m, y, s);
        sturdy_model_reduced_projection(m, k, s, work, gR);
        fitted(m, tb->Uterm, it->rT, s, work, gT);
        fitted(m, m->U, it->rF, s, work, gF);
        for (size_t g = 0; g < K; g++) isq[g] = 1.0 / m->sqrt_count[g];
        double ss = 0.0, sse = 0.0;
        for (size_t i = 0; i < n; i++) {
            size_t g = d->group[i];
            it->eR[i] = y[i] - gR[g];
            it->eA[i] = it->eR[i] - gT[g];
            it->eF[i] = y[i] - gF[g];
            ss += gT[g] * gT[g];
            sse += it->eF[i] * it->eF[i];
        }
        it->ss_term = ss;
        it->sse = sse;
    }
    sturdy_free(s);
    sturdy_free(work);
    sturdy_free(gR);
    sturdy_free(gT);
    sturdy_free(gF);
    /* inv_sqrt is kept with the term: freed by the caller through infl_release */
    it->inv_sqrt = isq;
    if (st) {
        infl_free(it);
        sturdy_free(isq);
        it->inv_sqrt = NULL;
    }
    return st;
}

static void infl_release(infl_term *it)
{
    infl_free(it);
    sturdy_free((void *)it->inv_sqrt);
    it->inv_sqrt = NULL;
}

sturdy_status sturdy_influence_loo(const sturdy_design *d, const sturdy_model *m, size_t ri,
                                   size_t k, double *f, double *p, char *err)
{
    infl_term it;
    sturdy_status st = infl_init(d, m, ri, k, &it, err);
    if (st) return st;
    for (size_t i = 0; i < d->n; i++) {
        size_t S[1] = { i };
        if (!eval_set(&it, d, S, 1, &f[i], &p[i])) f[i] = p[i] = NAN;
    }
    infl_release(&it);
    return STURDY_OK;
}

/* Does p land on the other side of alpha than the term's own p? */
static int changes(double p0, double p, double alpha)
{
    return (p0 <= alpha) != (p <= alpha);
}

/* Row i of the design as the result lists it. */
static sturdy_sens_row sens_row(const sturdy_design *d, size_t i, double f, double p)
{
    sturdy_sens_row r;
    r.index = i;
    r.row = d->row[i] + 1;
    r.line = d->line[i];
    r.cell = d->cell[i];
    r.f_without = f;
    r.p_without = p;
    return r;
}

/* |log p − log p0|: how far removing the row moves p, in either direction. */
static double move(double p0, double p)
{
    return fabs(log(fmax(p, 1e-300)) - log(fmax(p0, 1e-300)));
}

/* The leave-one-out step: the most influential rows and the first greedy choice. */
static void loo_step(const infl_term *it, const sturdy_design *d, const sturdy_term_result *t,
                     sturdy_sensitivity *sv, size_t *fixed)
{
    *fixed = 0;
    for (size_t i = 0; i < d->n; i++) {
        size_t S[1] = { i };
        double f, p;
        if (!eval_set(it, d, S, 1, &f, &p)) {
            (*fixed)++;
            continue;
        }
        /* keep the SENS_TOP rows that move p most, in order (ties: the earlier row) */
        double mv = move(t->p, p);
        size_t pos = sv->ntop;
        while (pos > 0 && move(t->p, sv->top[pos - 1].p_without) < mv) pos--;
        if (pos < SENS_TOP) {
            size_t last = sv->ntop < SENS_TOP ? sv->ntop : SENS_TOP - 1;
            for (size_t j = last; j > pos; j--) sv->top[j] = sv->top[j - 1];
            sv->top[pos] = sens_row(d, i, f, p);
            if (sv->ntop < SENS_TOP) sv->ntop++;
        }
    }
}

/* The greedy search from the empty set; fills sv->rows/nrows and the result. */
static void greedy(const infl_term *it, const sturdy_design *d, const sturdy_term_result *t,
                   sturdy_sensitivity *sv)
{
    int sig = t->p <= sv->alpha;
    size_t S[SENS_MAX_ROWS];
    double best_f = NAN, best_p = NAN;
    for (size_t s = 0; s < SENS_MAX_ROWS; s++) {
        size_t best = (size_t)-1;
        for (size_t i = 0; i < d->n; i++) {
            int used = 0;
            for (size_t j = 0; j < s; j++) used |= S[j] == i;
            if (used) continue;
            S[s] = i;
            double f, p;
            if (!eval_set(it, d, S, s + 1, &f, &p)) continue;
            /* significant: look for the largest p; not: the smallest */
            if (best == (size_t)-1 || (sig ? p > best_p : p < best_p)) {
                best = i;
                best_f = f;
                best_p = p;
            }
        }
        if (best == (size_t)-1) return;
        S[s] = best;
        if (changes(t->p, best_p, sv->alpha)) {
            sv->nrows = s + 1;
            for (size_t j = 0; j <= s; j++) {
                double fj = NAN, pj = NAN;
                size_t one[1] = { S[j] };
                eval_set(it, d, one, 1, &fj, &pj);
                sv->rows[j] = sens_row(d, S[j], fj, pj);
            }
            sv->direction = sig ? STURDY_SENS_CREATES : STURDY_SENS_HIDES;
            sv->f_without = best_f;
            sv->p_without = best_p;
            return;
        }
    }
}

sturdy_status sturdy_sensitivity_term(const sturdy_design *d, const sturdy_model *m, size_t ri,
                                      size_t k, double alpha,
                                      const sturdy_response_result *resp,
                                      sturdy_term_result *t, char *err)
{
    sturdy_sensitivity *sv = &t->sens;
    memset(sv, 0, sizeof *sv);
    sv->alpha = alpha;
    sv->f_without = sv->p_without = NAN;
    sv->f_refit = sv->p_perm_without = NAN;
    if (isnan(t->p)) return STURDY_OK;
    infl_term it;
    char msg[STURDY_ERR_LEN];
    sturdy_status st = infl_init(d, m, ri, k, &it, msg);
    if (st == STURDY_EMODEL) return STURDY_OK;
    if (st) return sturdy_fail(err, st, "%s", msg);
    size_t fixed = 0;
    loo_step(&it, d, t, sv, &fixed);
    greedy(&it, d, t, sv);
    infl_release(&it);
    sv->searched = 1;
    sv->not_removable = fixed;
    int flagged = 0;
    for (size_t j = 0; j < sv->nrows; j++)
        for (size_t o = 0; o < resp->diag.noutliers; o++)
            flagged |= resp->diag.outliers[o].row == sv->rows[j].row;
    sv->decisive = flagged && sv->nrows >= 1 && sv->nrows <= SENS_DECISIVE_ROWS &&
                   move(t->p, sv->p_without) >= log(SENS_DECISIVE_RATIO);
    for (size_t j = 0; j < sv->nrows; j++) {
        size_t same = 0;
        for (size_t l = 0; l < sv->nrows; l++) same += sv->rows[l].cell == sv->rows[j].cell;
        sv->empties_cell |= d->cell_count[sv->rows[j].cell] == same;
    }
    return STURDY_OK;
}
