/* maxt_pairs.c — the comparisons' rearranged t*² (maxt.c) from the table of (original
 * cell, new cell) pairs of each rearrangement, at a cost that grows with the square of
 * the cells each comparison involves instead of with n times the number of comparisons.
 *
 * Why it holds. Comparison q rearranges v_q = e + a_q[h] (maxt.h's row form: e the
 * position's value of its response, a_q a per-cell constant, zero off the contrast's
 * cells S_q for Freedman–Lane and zero everywhere for ter Braak and raw). Under a
 * rearrangement sending position k (own cell h_k) to cell g_k,
 *     T_q[g] = Σ_{k→g} v_q = Se[g] + Σ_{h∈S_q} N[h][g] a_q[h],
 *     T2_q[g] = Σ_{k→g} v_q² = Q[g] + Σ_{h∈S_q} a_q[h] (2 E[h][g] + a_q[h] N[h][g]),
 * with N the counts of (h → g), E the sums of e over them, Se and Q the sums of e and e²
 * per new cell. The statistic needs
 *   - the numerator (Σ_{g∈S_q} z_g T_q[g]/√n_g)²: N and Se on S_q × S_q;
 *   - the residual SS ‖v_q‖² − Σ_g T_q[g]²/n_g (the full model spans group space, so
 *     ‖U_fullᵀs*‖ = ‖s*‖), where over all g
 *         Σ_g T_q[g]²/n_g = s0 + 2 Σ_{h∈S_q} a_q[h] c[h] + Σ_{h,h'∈S_q} a_q[h] a_q[h'] M[h][h'],
 *     s0 = Σ_g Se[g]²/n_g, c[h] = Σ_g N[h][g] Se[g]/n_g, M[h][h'] = Σ_g N[h][g] N[h'][g]/n_g:
 *     built once per rearrangement (and response, for s0 and c), then read on S_q × S_q;
 *   - for a Games–Howell comparison, T2_q on S_q: E and N on S_q × S_q.
 * One pass over the n positions builds N (each cell's column as a list of the cells met),
 * Se, Q and E; M costs Σ_g (entries of column g)²; then comparison q costs |S_q|² reads
 * of M and N (and E), against n adds (and n squares) in the gather. bal2000's 348
 * comparisons (n = 2000, 80 cells) involve 2880 cells in all, 44,000 cell pairs.
 *
 * Cells outside the contrast hold z_g = 0 up to the rounding of z = Uw (about 1e-17 of
 * its largest entry); they are left out below PAIRS_ZERO of it, which moves the
 * statistic by less than 1e-12 relative, far inside the engine's tie rule
 * (STURDY_TIE_RTOL = 1e-10): the same rearrangements are counted as on the gather
 * (tests/test_paths.c, forced through STURDY_PERM_PATH=pairs).
 *
 * M is built entry by entry from the columns' lists where N is sparse, and as one matrix
 * product W^T W (W = N D^(-1/2), dgemm) where it is dense enough that the product's
 * vector arithmetic wins (f5_20k: 144 cells of 139 rows, 90 entries per column).
 *
 * Cost model (per rearrangement, in multiply-adds): the gather adds n rows of Cp values
 * (and their squares with Games–Howell comparisons) a vector at a time, then copies,
 * clears and reduces K × Cp sums; this path makes the pass over n positions, builds M
 * from the expected column entries of a uniform permutation, Σ_h (1 − exp(−n_h n_g/n)),
 * and reads |S_q|² entries per comparison, one at a time. */
#include <assert.h>
#include <cblas.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/maxt_pairs.h"
#include "resampling/cellcount.h"

/* a contrast's cell whose |z_g| is below this fraction of its largest is not one of its
   cells (rounding of z = Uw) */
#define PAIRS_ZERO 1e-14
/* K² entries of the tables at most (and R·K² sums of E with Games–Howell) */
#define PAIRS_MAX_K2 ((size_t)1 << 22)
/* The gather's costs in multiply-adds of this path (about 0.35 ns each here: it reads its
   operands one at a time from scattered cells): a gathered value, added with others a
   vector at a time, and a group sum of a comparison, copied, cleared and reduced. Fitted
   to the wall time of both paths (forced) on bench/'s bal2000 and f5_20k and the
   nightly batch's n = 200 design, 2026-12-03; instruction counts mislead here, as they
   do not see the gather's cache misses. */
#define PAIRS_GATHER_VALUE 0.7
#define PAIRS_GATHER_SUM 5.0

struct sturdy_maxt_pairs {
    size_t n, K, R, C;
    int het;                 /* some comparison is Games–Howell: Q and E are kept */
    int dense;               /* M by one matrix product (else entry by entry) */
    double *isq;             /* K: 1/√n_g */
    const uint32_t *lab0;    /* n (the rearranger's) */
    const double *E;         /* n × R (x->E) */
    double *inv_n;           /* K: 1/n_g */
    size_t *col_off;         /* K + 1: where cell g's list of cells met starts */
    size_t *sup_off;         /* C + 1: comparison q's cells [sup_off[q], sup_off[q+1]) */
    uint32_t *sup_cell;      /* its cells */
    double *sup_a;           /* a_q at them */
    double *sup_zs;          /* z_g / √n_g */
    double *sup_zh;          /* z_g² / (n_g − 1), or 0 (n_g < 2, or not Games–Howell) */
    uint32_t *resp;          /* C: the response of each comparison */
    unsigned char *a_zero;   /* C: a_q is zero everywhere (ter Braak, raw) */
};

struct sturdy_maxt_pairs_work {
    double *NT;              /* K²: counts, NT[g·K + h] = N[h][g] */
    double *ET;              /* R × K²: sums of e per pair, ET[g·K + h] (het only) */
    double *M;               /* K²: M[h·K + h'] */
    uint32_t *col, *len;     /* the cells h met by each g (col_off), and how many */
    double *v;               /* K: one column's counts, in its list's order */
    double *W;               /* K²: N D^(-1/2) by columns (dense M only) */
    size_t entries;          /* Σ_g len_g²: the entries of M written */
    double *Se, *Q, *c;      /* R × K */
    double *s0;              /* R */
};

/* -1: the cost model; 0: never; 1: wherever it holds; 2 and 3: so, with M forced to the
   product or to the entries */
static int forced(void)
{
    switch (sturdy_perm_path_forced()) {
    case STURDY_PATH_PAIRS: return 1;
    case STURDY_PATH_PAIRS_DENSE: return 2;
    case STURDY_PATH_PAIRS_SPARSE: return 3;
    case STURDY_PATH_GATHER: case STURDY_PATH_CELLS: return 0;
    default: return -1;
    }
}

void sturdy_maxt_pairs_free(sturdy_maxt_pairs *p)
{
    if (!p)
        return;
    sturdy_free(p->inv_n);
    sturdy_free(p->isq);
    sturdy_free(p->col_off);
    sturdy_free(p->sup_off);
    sturdy_free(p->sup_cell);
    sturdy_free(p->sup_a);
    sturdy_free(p->sup_zs);
    sturdy_free(p->sup_zh);
    sturdy_free(p->resp);
    sturdy_free(p->a_zero);
    sturdy_free(p);
}

/* the size below which z_g is rounding: PAIRS_ZERO of the largest |z_g| */
static double zero_of(const sturdy_maxt_member *mb, size_t K)
{
    double zmax = 0.0;
    for (size_t g = 0; g < K; g++)
        zmax = fmax(zmax, fabs(mb->z[g]));
    return PAIRS_ZERO * zmax;
}

sturdy_status sturdy_maxt_pairs_init(sturdy_maxt_pairs **out, const sturdy_maxt *x,
                                     size_t n, size_t K, size_t rank, const uint32_t *lab0,
                                     int flip, char *err)
{
    *out = NULL;
    int force = forced();
    size_t C = x->C, R = x->nresp;
    if (force == 0 || flip || C == 0 || n == 0 || K == 0 || rank != K || !x->E || !x->A ||
        K > PAIRS_MAX_K2 / K || (x->Csq && R > PAIRS_MAX_K2 / (K * K)))
        return STURDY_OK;
    sturdy_maxt_pairs *p = sturdy_calloc(1, sizeof *p);
    size_t *cnt = sturdy_calloc(K, sizeof *cnt);
    if (!p || !cnt)
        goto oom;
    p->n = n; p->K = K; p->R = R; p->C = C; p->het = x->Csq > 0;
    p->lab0 = lab0;
    p->E = x->E;
    for (size_t k = 0; k < n; k++)
        cnt[lab0[k]]++;
    /* the cost: the pass over the positions, M from the expected entries of each column
       of N under a uniform permutation, and |S_q|² reads per comparison */
    double pairs = (double)n * (2.0 + (double)R * (p->het ? 3.0 : 1.0)), sparse_m = 0.0;
    for (size_t g = 0; g < K; g++) {
        double col = sturdy_expected_met(cnt, K, n, g);
        sparse_m += col * col * 2.0 + col * (double)R * 2.0;
    }
    /* the product: K³ multiply-adds, about four at a time */
    double dense_m = (double)K * (double)K * ((double)K + 2.0 * (double)R) / 4.0;
    p->dense = force == 2 || (force != 3 && dense_m < sparse_m);
    pairs += p->dense ? dense_m : sparse_m;
    size_t nsup = 0;
    for (size_t q = 0; q < C; q++) {
        const sturdy_maxt_member *mb = &x->cm[q];
        double zz = zero_of(mb, K), s = 0.0;
        for (size_t g = 0; g < K; g++)
            s += fabs(mb->z[g]) > zz;
        nsup += (size_t)s;
        pairs += s * s * (mb->het ? 4.0 : 2.0) + 4.0 * s;
    }
    double gather = (double)x->Cp * (PAIRS_GATHER_VALUE * (double)n * (p->het ? 2.0 : 1.0) +
                                     PAIRS_GATHER_SUM * (double)K * (p->het ? 1.5 : 1.0));
    if (force < 0 && !(pairs < gather)) {
        sturdy_free(cnt);
        sturdy_maxt_pairs_free(p);
        return STURDY_OK;
    }
    p->inv_n = sturdy_calloc(K, sizeof *p->inv_n);
    p->isq = sturdy_calloc(K, sizeof *p->isq);
    p->col_off = sturdy_calloc(K + 1, sizeof *p->col_off);
    p->sup_off = sturdy_calloc(C + 1, sizeof *p->sup_off);
    p->sup_cell = sturdy_calloc(nsup + 1, sizeof *p->sup_cell);
    p->sup_a = sturdy_calloc(nsup + 1, sizeof *p->sup_a);
    p->sup_zs = sturdy_calloc(nsup + 1, sizeof *p->sup_zs);
    p->sup_zh = sturdy_calloc(nsup + 1, sizeof *p->sup_zh);
    p->resp = sturdy_calloc(C + 1, sizeof *p->resp);
    p->a_zero = sturdy_calloc(C + 1, 1);
    if (!p->inv_n || !p->isq || !p->col_off || !p->sup_off || !p->sup_cell || !p->sup_a ||
        !p->sup_zs || !p->sup_zh || !p->resp || !p->a_zero)
        goto oom;
    for (size_t g = 0; g < K; g++) {
        p->inv_n[g] = cnt[g] ? 1.0 / (double)cnt[g] : 0.0;
        p->isq[g] = cnt[g] ? 1.0 / sqrt((double)cnt[g]) : 0.0;
        p->col_off[g + 1] = p->col_off[g] + (cnt[g] < K ? cnt[g] : K);
    }
    size_t s = 0, ri = 0;
    for (size_t q = 0; q < C; q++) {
        const sturdy_maxt_member *mb = &x->cm[q];
        while (ri + 1 < R && q >= x->resp_begin[ri + 1])
            ri++;
        p->resp[q] = (uint32_t)ri;
        p->sup_off[q] = s;
        p->a_zero[q] = 1;
        double zz = zero_of(mb, K);
        for (size_t g = 0; g < K; g++) {
            if (!(fabs(mb->z[g]) > zz))
                continue;
            double ng = (double)cnt[g];
            p->sup_cell[s] = (uint32_t)g;
            p->sup_a[s] = x->A[g * x->Cp + q];
            p->sup_zs[s] = ng > 0 ? mb->z[g] / sqrt(ng) : 0.0;
            p->sup_zh[s] = mb->het && ng >= 2.0 ? mb->z[g] * mb->z[g] / (ng - 1.0) : 0.0;
            if (p->sup_a[s] != 0.0)
                p->a_zero[q] = 0;
            s++;
        }
    }
    p->sup_off[C] = s;
    assert(s == nsup);
    sturdy_free(cnt);
    *out = p;
    return STURDY_OK;
oom:
    sturdy_free(cnt);
    sturdy_maxt_pairs_free(p);
    return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

double sturdy_maxt_pairs_work_bytes(const sturdy_maxt_pairs *p)
{
    if (!p)
        return 0.0;
    double K = (double)p->K, R = (double)p->R;
    return 8.0 * (p->dense ? 3.0 : 2.0) * K * K + 4.0 * ((double)p->col_off[p->K] + K) +
           8.0 * (3.0 * R * K + R + K) + (p->het ? 8.0 * R * K * K : 0.0);
}

void sturdy_maxt_pairs_work_free(sturdy_maxt_pairs_work *w)
{
    if (!w)
        return;
    sturdy_free(w->NT); sturdy_free(w->ET); sturdy_free(w->M);
    sturdy_free(w->col); sturdy_free(w->len); sturdy_free(w->v); sturdy_free(w->W);
    sturdy_free(w->Se); sturdy_free(w->Q); sturdy_free(w->c); sturdy_free(w->s0);
    sturdy_free(w);
}

sturdy_maxt_pairs_work *sturdy_maxt_pairs_work_alloc(const sturdy_maxt_pairs *p)
{
    size_t K = p->K, R = p->R;
    sturdy_maxt_pairs_work *w = sturdy_calloc(1, sizeof *w);
    if (!w)
        return NULL;
    w->NT = sturdy_calloc(K * K, sizeof *w->NT);
    w->ET = p->het ? sturdy_calloc(R * K * K, sizeof *w->ET) : NULL;
    w->M = sturdy_calloc(K * K, sizeof *w->M);
    w->col = sturdy_calloc(p->col_off[K] + 1, sizeof *w->col);
    w->len = sturdy_calloc(K, sizeof *w->len);
    w->v = sturdy_calloc(K, sizeof *w->v);
    w->W = p->dense ? sturdy_calloc(K * K, sizeof *w->W) : NULL;
    w->Se = sturdy_calloc(R * K, sizeof *w->Se);
    w->Q = sturdy_calloc(R * K, sizeof *w->Q);
    w->c = sturdy_calloc(R * K, sizeof *w->c);
    w->s0 = sturdy_calloc(R, sizeof *w->s0);
    if (!w->NT || (p->het && !w->ET) || !w->M || !w->col || !w->len || !w->v ||
        (p->dense && !w->W) || !w->Se || !w->Q || !w->c || !w->s0) {
        sturdy_maxt_pairs_work_free(w);
        return NULL;
    }
    return w;
}

/* N (by columns), Se, Q and E of the rearrangement lab; then M, c and s0 */
static void pairs_build(const sturdy_maxt_pairs *p, sturdy_maxt_pairs_work *w,
                        const uint32_t *lab)
{
    size_t n = p->n, K = p->K, R = p->R;
    const uint32_t *lab0 = p->lab0;
    for (size_t k = 0; k < n; k++) {
        size_t h = lab0[k], g = lab[k], idx = g * K + h;
        if (w->NT[idx] == 0.0)
            w->col[p->col_off[g] + w->len[g]++] = (uint32_t)h;
        w->NT[idx] += 1.0;
        const double *e = p->E + k * R;
        for (size_t r = 0; r < R; r++) {
            w->Se[r * K + g] += e[r];
            if (p->het) {
                w->Q[r * K + g] += e[r] * e[r];
                w->ET[r * K * K + idx] += e[r];
            }
        }
    }
    size_t entries = 0;
    if (p->dense) {   /* M = Wᵀ W and c_r = Wᵀ (Se_r / √n), W = N D^(−1/2) */
        for (size_t g = 0; g < K; g++) {
            entries += (size_t)w->len[g] * w->len[g];
            for (size_t h = 0; h < K; h++)
                w->W[g * K + h] = w->NT[g * K + h] * p->isq[g];
        }
        cblas_dgemm(CblasRowMajor, CblasTrans, CblasNoTrans, (int)K, (int)K, (int)K, 1.0, w->W,
                    (int)K, w->W, (int)K, 0.0, w->M, (int)K);
        for (size_t r = 0; r < R; r++) {
            for (size_t g = 0; g < K; g++)
                w->v[g] = w->Se[r * K + g] * p->isq[g];
            cblas_dgemv(CblasRowMajor, CblasTrans, (int)K, (int)K, 1.0, w->W, (int)K, w->v, 1,
                        0.0, w->c + r * K, 1);
        }
    }
    for (size_t g = 0; !p->dense && g < K; g++) {
        const uint32_t *col = w->col + p->col_off[g];
        const double *Ng = w->NT + g * K;
        size_t len = w->len[g];
        double *v = w->v;
        for (size_t j = 0; j < len; j++)
            v[j] = Ng[col[j]];
        entries += len * len;
        for (size_t i = 0; i < len; i++) {
            size_t h = col[i];
            double nh = v[i] * p->inv_n[g];
            double *Mh = w->M + h * K;
            for (size_t j = 0; j < len; j++)
                Mh[col[j]] += nh * v[j];
            for (size_t r = 0; r < R; r++)
                w->c[r * K + h] += nh * w->Se[r * K + g];
        }
    }
    w->entries = entries;
    for (size_t r = 0; r < R; r++) {
        double s = 0.0;
        for (size_t g = 0; g < K; g++)
            s += w->Se[r * K + g] * w->Se[r * K + g] * p->inv_n[g];
        w->s0[r] = s;
    }
}

/* back to zeros for the next rearrangement */
static void pairs_clear(const sturdy_maxt_pairs *p, sturdy_maxt_pairs_work *w)
{
    size_t K = p->K, R = p->R;
    /* a whole table at a time where that is fewer stores (a store of 8 values costs
       about what one scattered entry does) */
    int whole = K * K <= 8 * w->entries;
    if (whole) {
        if (!p->dense)   /* the product writes all of M */
            memset(w->M, 0, K * K * sizeof *w->M);
        memset(w->NT, 0, K * K * sizeof *w->NT);
        if (p->het)
            memset(w->ET, 0, R * K * K * sizeof *w->ET);
    }
    for (size_t g = 0; g < K; g++) {
        const uint32_t *col = w->col + p->col_off[g];
        for (size_t i = 0; !whole && i < w->len[g]; i++) {
            size_t h = col[i];
            w->NT[g * K + h] = 0.0;
            for (size_t r = 0; p->het && r < R; r++)
                w->ET[r * K * K + g * K + h] = 0.0;
            for (size_t j = 0; !p->dense && j < w->len[g]; j++)
                w->M[h * K + col[j]] = 0.0;
        }
        w->len[g] = 0;
    }
    memset(w->Se, 0, R * K * sizeof *w->Se);
    memset(w->c, 0, R * K * sizeof *w->c);
    if (p->het)
        memset(w->Q, 0, R * K * sizeof *w->Q);
}

void sturdy_maxt_pairs_t2(const sturdy_maxt_pairs *p, sturdy_maxt_pairs_work *w,
                          const sturdy_maxt *x, const uint32_t *lab, double zero_rtol,
                          double *t2, size_t nb, size_t bb)
{
    size_t K = p->K;
    pairs_build(p, w, lab);
    for (size_t q = 0; q < p->C; q++) {
        const sturdy_maxt_member *mb = &x->cm[q];
        size_t r = p->resp[q], s0 = p->sup_off[q], s1 = p->sup_off[q + 1];
        const uint32_t *cell = p->sup_cell;
        const double *a = p->sup_a;
        const double *Se = w->Se + r * K, *Q = w->Q + r * K, *c = w->c + r * K;
        const double *ET = p->het ? w->ET + r * K * K : NULL;
        int moved = !p->a_zero[q], het = mb->het;
        /* for each cell of S: Σ_g T_g²/n_g = s0 + Σ_{h∈S} a_h (2 c_h + Σ_{h'∈S} a_h'
           M[h][h']), the numerator's T_g and, Games–Howell, Σ_g z_g² (T2_g − T_g²/n_g) /
           (n_g − 1), in one pass over S × S */
        double fit = w->s0[r], acc = 0.0, var = 0.0;
        for (size_t i = s0; i < s1; i++) {
            size_t g = cell[i];
            const double *Mg = w->M + g * K, *Ng = w->NT + g * K;
            double T = Se[g];
            int gh = het && p->sup_zh[i] != 0.0;
            if (moved && gh) {
                const double *Eg = ET + g * K;
                double in = 0.0, t = 0.0, t2 = 0.0;
                for (size_t j = s0; j < s1; j++) {
                    size_t h = cell[j];
                    double aj = a[j], nj = Ng[h];
                    in += aj * Mg[h];
                    t += aj * nj;
                    t2 += aj * (2.0 * Eg[h] + aj * nj);
                }
                fit += a[i] * (2.0 * c[g] + in);
                T += t;
                double ss = Q[g] + t2 - T * T * p->inv_n[g];
                var += p->sup_zh[i] * (ss < 0 ? 0 : ss);
            } else if (moved) {
                double in = 0.0, t = 0.0;
                for (size_t j = s0; j < s1; j++) {
                    size_t h = cell[j];
                    in += a[j] * Mg[h];
                    t += a[j] * Ng[h];
                }
                fit += a[i] * (2.0 * c[g] + in);
                T += t;
            } else if (gh) {
                double ss = Q[g] - T * T * p->inv_n[g];
                var += p->sup_zh[i] * (ss < 0 ? 0 : ss);
            }
            acc += p->sup_zs[i] * T;
        }
        double num = acc * acc;
        if (!het) {
            t2[q * nb + bb] = sturdy_maxt_t2(x, q, num, mb->vv - fit, zero_rtol);
            continue;
        }
        double zero = zero_rtol * mb->vv * mb->ww;
        t2[q * nb + bb] = var <= zero ? (num > zero ? INFINITY : NAN) : num / var;
    }
    pairs_clear(p, w);
}
