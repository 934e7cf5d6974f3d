/* cellcount.c — the group sums of the permutation engine's columns from the table of
 * (original cell, new cell) counts of each rearrangement, at a cost that does not grow
 * with the number of columns times n.
 *
 * Why it holds. Every model the engine fits lives in group space (its fits are constant
 * within a group), so every vector it rearranges is v_j = e_b + a_j[group]: a vector e_b
 * with zero mean in every group (the within-group deviations of response b: the same
 * for every term, comparison and method of that response) plus a per-group constant
 * (Freedman–Lane: the full fit minus the reduced fit; ter Braak: 0; raw: the full fit
 * minus the mean; a comparison: its contrast's share). Under a rearrangement whose
 * position k (original group h_k) goes to group g_k,
 *     Σ_{k→g} v_j = Σ_{k→g} e_b  +  Σ_h N[h][g] a_j[h],
 *     Σ_{k→g} v_j² = Σ_{k→g} e_b² + Σ_h (2 a_j[h] E_b[h][g] + a_j[h]² N[h][g]),
 * with N the K × K counts and E_b[h][g] the sums of e_b over (h → g). One pass over the
 * n positions builds N (sparse: the pairs met, at most min(K², n)) and the per-group sums
 * of each e_b; then every column costs nnz(N) multiply-adds instead of n adds. With sign
 * flips nothing moves: Σ_{k∈g} s_k v_j = Σ_{k∈g} s_k e_b + a_j[g] Σ_{k∈g} s_k.
 *
 * The decomposition is found from the columns themselves, not from the method: a_j is
 * column j's group means and e_b its deviations from them; columns whose deviations agree
 * to 1e-12 of the column's size share one e_b, any other column gets its own, and past
 * CC_MAX_BASES the gather is kept. So the path is exact algebra for any column; only the
 * order of the floating-point sums differs from the gather, by rounding (≈1e-15
 * relative), which the engine's tie rule (STURDY_TIE_RTOL = 1e-10) absorbs: the same
 * rearrangements are counted on both paths (tests/test_paths.c).
 *
 * Cost model (per rearrangement, in units of one add of a column value; the same
 * shuffle is drawn on both paths and is left out): the gather adds n rows of Mp values;
 * this path makes one pass over n positions with a table update per base, then
 * nnz(N) rows of Mp multiply-adds. nnz(N) is estimated by its expectation for a
 * uniform permutation, Σ_{h,g} (1 − exp(−n_h n_g / n)). */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/cellcount.h"

#define CC_MAX_BASES 8
#define CC_MAX_K2 ((size_t)1 << 22)   /* K² cells of the count table at most */
#define CC_BASE_RTOL 1e-12

struct sturdy_cellcount {
    size_t n, K, Mp, nlin, nsq, R;
    int flip;
    const uint32_t *lab0;    /* n: the caller's (lives as long as the rearranger) */
    double *base;            /* n × R: the deviations e_b, position order */
    double *A;               /* K × Mp: multiplies N[h][g] (a_j[h]; squares: a_src[h]²) */
    double *Bq;              /* R × K × nsq: multiplies E_b[h][g] (2 a_src[h], or 0 when
                                the square's column is not of base b) */
    uint32_t *col_base;      /* nlin + nsq: the base of each column */
    size_t cap;              /* pairs in the list at most: min(K², n) */
};

struct sturdy_cellcount_work {
    uint32_t *N;             /* K²: counts (permutations) */
    uint32_t *list;          /* cap: the pairs met, in order of first meeting */
    double *Se;              /* R × K: Σ e_b (flips: Σ s e_b) per new group */
    double *SE2;             /* R × K: Σ e_b² per new group (squares only) */
    double *E;               /* R × K²: Σ e_b per pair (squares only) */
    double *Ns;              /* K: Σ s per group (flips) */
};

void sturdy_cellcount_free(sturdy_cellcount *cc)
{
    if (!cc)
        return;
    sturdy_free(cc->base);
    sturdy_free(cc->A);
    sturdy_free(cc->Bq);
    sturdy_free(cc->col_base);
    sturdy_free(cc);
}

sturdy_perm_path sturdy_perm_path_forced(void)
{
    static const struct { const char *name; sturdy_perm_path path; } names[] = {
        {"gather", STURDY_PATH_GATHER}, {"cells", STURDY_PATH_CELLS},
        {"pairs", STURDY_PATH_PAIRS}, {"pairs-dense", STURDY_PATH_PAIRS_DENSE},
        {"pairs-sparse", STURDY_PATH_PAIRS_SPARSE}};
    const char *s = getenv(STURDY_PERM_PATH_ENV);
    for (size_t i = 0; s && i < sizeof names / sizeof *names; i++)
        if (strcmp(s, names[i].name) == 0)
            return names[i].path;
    return STURDY_PATH_AUTO;
}

/* The forced path, or -1 for the cost model. */
static int forced_path(void)
{
    sturdy_perm_path p = sturdy_perm_path_forced();
    return p == STURDY_PATH_AUTO ? -1 : p == STURDY_PATH_CELLS;
}

double sturdy_expected_met(const size_t *count, size_t K, size_t n, size_t g)
{
    double s = 0.0;
    for (size_t h = 0; h < K; h++)
        s += -expm1(-(double)count[h] * (double)count[g] / (double)n);
    return s;
}

/* Expected distinct (h, g) pairs of a uniform permutation, at most min(K², n). */
static double expected_pairs(const size_t *cnt, size_t K, size_t n)
{
    double s = 0.0, dn = (double)n;
    for (size_t g = 0; g < K; g++)
        s += sturdy_expected_met(cnt, K, n, g);
    return s < dn ? s : dn;
}

sturdy_status sturdy_cellcount_init(sturdy_cellcount **out, const double *V, size_t n,
                                    size_t Mp, size_t nlin, size_t nsq, const uint32_t *lab0,
                                    size_t K, int flip, char *err)
{
    *out = NULL;
    int force = forced_path();
    if (force == 0 || n == 0 || K == 0 || nlin == 0 || (flip && nsq) || nsq > nlin ||
        nlin + nsq > Mp || (!flip && K > CC_MAX_K2 / K))
        return STURDY_OK;
    /* a first look at the cost with one base, before any work of size n × Mp */
    size_t *cnt = sturdy_calloc(K, sizeof *cnt);
    if (!cnt)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t k = 0; k < n; k++)
        cnt[lab0[k]]++;
    double nnz = flip ? (double)K : expected_pairs(cnt, K, n);
    double dn = (double)n, gather = dn * ((double)Mp + (flip ? 6.0 : 4.0));
    double per_base = nsq ? 5.0 : 2.0, list_cost = nsq ? 3.0 : 2.0;
    double cells1 = dn * (4.0 + per_base) + nnz * list_cost * ((double)Mp + (double)nsq) +
                    2.0 * (double)K * (double)(nlin + nsq);
    if (force < 0 && !(cells1 < gather)) {
        sturdy_free(cnt);
        return STURDY_OK;
    }
    sturdy_cellcount *cc = sturdy_calloc(1, sizeof *cc);
    double *bases = NULL;
    if (!cc)
        goto oom;
    cc->n = n; cc->K = K; cc->Mp = Mp; cc->nlin = nlin; cc->nsq = nsq; cc->flip = flip;
    cc->lab0 = lab0;
    cc->cap = flip ? 0 : (K * K < n ? K * K : n);
    cc->A = sturdy_calloc(K * Mp, sizeof *cc->A);
    cc->col_base = sturdy_calloc(nlin + nsq + 1, sizeof *cc->col_base);
    bases = sturdy_malloc(n * CC_MAX_BASES * sizeof *bases); /* base b at b·n */
    if (!cc->A || !cc->col_base || !bases)
        goto oom;
    /* a_j: the group means of every column, in one pass over the rows */
    double *vmax = sturdy_calloc(2 * nlin + 1, sizeof *vmax), *dev = vmax + nlin;
    uint32_t *unset = sturdy_malloc((nlin + 1) * sizeof *unset);
    if (!vmax || !unset) {
        sturdy_free(vmax);
        sturdy_free(unset);
        goto oom;
    }
    for (size_t k = 0; k < n; k++) {
        const double *row = V + k * Mp;
        double *arow = cc->A + (size_t)lab0[k] * Mp;
        for (size_t j = 0; j < nlin; j++) {
            arow[j] += row[j];
            if (fabs(row[j]) > vmax[j]) vmax[j] = fabs(row[j]);
        }
    }
    for (size_t h = 0; h < K; h++)
        for (size_t j = 0; j < nlin; j++) {
            double *a = &cc->A[h * Mp + j];
            *a = cnt[h] ? *a / (double)cnt[h] : 0.0;
            if (fabs(*a) > vmax[j]) vmax[j] = fabs(*a);
        }
    /* the bases: the first column without one lends its deviations; every other column
     * without one whose deviations agree takes it (one pass over the rows per base) */
    size_t nunset = nlin;
    for (size_t j = 0; j < nlin; j++)
        unset[j] = (uint32_t)j;
    while (nunset) {
        if (cc->R == CC_MAX_BASES) {      /* columns of too many kinds: gather */
            sturdy_free(vmax);
            sturdy_free(unset);
            sturdy_free(bases);
            sturdy_free(cnt);
            sturdy_cellcount_free(cc);
            return STURDY_OK;
        }
        size_t b = cc->R++, j0 = unset[0];
        double *e = bases + b * n;
        for (size_t i = 0; i < nunset; i++)
            dev[i] = 0.0;
        for (size_t k = 0; k < n; k++) {
            const double *row = V + k * Mp, *arow = cc->A + (size_t)lab0[k] * Mp;
            e[k] = row[j0] - arow[j0];
            for (size_t i = 1; i < nunset; i++) {
                size_t j = unset[i];
                double x = fabs(row[j] - arow[j] - e[k]);
                if (!(x <= dev[i])) dev[i] = isnan(x) ? INFINITY : x;
            }
        }
        cc->col_base[j0] = (uint32_t)b;
        size_t left = 0;
        for (size_t i = 1; i < nunset; i++) {
            size_t j = unset[i];
            if (dev[i] <= CC_BASE_RTOL * vmax[j])
                cc->col_base[j] = (uint32_t)b;
            else
                unset[left++] = (uint32_t)j;
        }
        nunset = left;
    }
    sturdy_free(vmax);
    sturdy_free(unset);
    /* squares: column nlin + q is the square of column nlin − nsq + q */
    if (nsq) {
        cc->Bq = sturdy_calloc(CC_MAX_BASES * K * nsq, sizeof *cc->Bq);
        if (!cc->Bq)
            goto oom;
        for (size_t q = 0; q < nsq; q++) {
            size_t src = nlin - nsq + q, b = cc->col_base[src];
            cc->col_base[nlin + q] = (uint32_t)b;
            for (size_t h = 0; h < K; h++) {
                double a = cc->A[h * Mp + src];
                cc->A[h * Mp + nlin + q] = a * a;
                cc->Bq[(b * K + h) * nsq + q] = 2.0 * a;
            }
        }
    }
    /* the cost with the bases found */
    double R = (double)cc->R;
    double cells = dn * (4.0 + per_base * R) + nnz * ((double)Mp + R * (double)nsq) * list_cost +
                   2.0 * (double)K * (double)(nlin + nsq);
    if (force < 0 && !(cells < gather)) {
        sturdy_free(bases);
        sturdy_free(cnt);
        sturdy_cellcount_free(cc);
        return STURDY_OK;
    }
    /* the bases interleaved by position */
    cc->base = sturdy_malloc(n * cc->R * sizeof *cc->base);
    if (!cc->base)
        goto oom;
    for (size_t k = 0; k < n; k++)
        for (size_t b = 0; b < cc->R; b++)
            cc->base[k * cc->R + b] = bases[b * n + k];
    sturdy_free(bases);
    sturdy_free(cnt);
    *out = cc;
    return STURDY_OK;
oom:
    sturdy_free(bases);
    sturdy_free(cnt);
    sturdy_cellcount_free(cc);
    return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

double sturdy_cellcount_work_bytes(const sturdy_cellcount *cc)
{
    if (!cc)
        return 0.0;
    double K = (double)cc->K, R = (double)cc->R;
    if (cc->flip)
        return 8.0 * (K * (R + 1.0) + 4.0);
    return 4.0 * (K * K + (double)cc->cap) + 8.0 * (2.0 * R * K + (cc->nsq ? R * K * K : 0.0)) +
           64.0;
}

void sturdy_cellcount_work_free(sturdy_cellcount_work *w)
{
    if (!w)
        return;
    sturdy_free(w->N);
    sturdy_free(w->list);
    sturdy_free(w->Se);
    sturdy_free(w->SE2);
    sturdy_free(w->E);
    sturdy_free(w->Ns);
    sturdy_free(w);
}

sturdy_cellcount_work *sturdy_cellcount_work_alloc(const sturdy_cellcount *cc)
{
    size_t K = cc->K, R = cc->R;
    sturdy_cellcount_work *w = sturdy_calloc(1, sizeof *w);
    if (!w)
        return NULL;
    w->Se = sturdy_calloc(R * K, sizeof *w->Se);
    int ok = w->Se != NULL;
    if (cc->flip) {
        ok = ok && (w->Ns = sturdy_calloc(K, sizeof *w->Ns)) != NULL;
    } else {
        ok = ok && (w->N = sturdy_calloc(K * K, sizeof *w->N)) != NULL;
        ok = ok && (w->list = sturdy_malloc(cc->cap * sizeof *w->list + 1)) != NULL;
        if (cc->nsq) {
            ok = ok && (w->SE2 = sturdy_calloc(R * K, sizeof *w->SE2)) != NULL;
            ok = ok && (w->E = sturdy_calloc(R * K * K, sizeof *w->E)) != NULL;
        }
    }
    if (!ok) {
        sturdy_cellcount_work_free(w);
        return NULL;
    }
    return w;
}

/* Sign flips: nothing moves, so per group Σ s e_b and Σ s. */
static void sums_flip(const sturdy_cellcount *cc, sturdy_cellcount_work *w,
                      const signed char *sign, double *tmp)
{
    size_t n = cc->n, K = cc->K, R = cc->R, Mp = cc->Mp;
    const uint32_t *lab0 = cc->lab0;
    memset(w->Se, 0, R * K * sizeof *w->Se);
    memset(w->Ns, 0, K * sizeof *w->Ns);
    for (size_t k = 0; k < n; k++) {
        size_t g = lab0[k];
        double s = (double)sign[k];
        w->Ns[g] += s;
        for (size_t b = 0; b < R; b++)
            w->Se[b * K + g] += s * cc->base[k * R + b];
    }
    for (size_t g = 0; g < K; g++) {
        double *dst = tmp + g * Mp;
        const double *arow = cc->A + g * Mp;
        for (size_t j = 0; j < cc->nlin; j++)
            dst[j] += w->Se[cc->col_base[j] * K + g] + arow[j] * w->Ns[g];
    }
}

void sturdy_cellcount_sums(const sturdy_cellcount *cc, sturdy_cellcount_work *w,
                           const uint32_t *lab, const signed char *sign, double *tmp)
{
    if (cc->flip) {
        sums_flip(cc, w, sign, tmp);
        return;
    }
    size_t n = cc->n, K = cc->K, K2 = K * K, R = cc->R, Mp = cc->Mp, nlin = cc->nlin,
           nsq = cc->nsq, nnz = 0;
    const uint32_t *lab0 = cc->lab0;
    const double *base = cc->base;
    uint32_t *N = w->N, *list = w->list;
    double *Se = w->Se;
    memset(Se, 0, R * K * sizeof *Se);
    /* the pass over the positions: counts, and the per-group (per-pair) sums of e_b */
    if (nsq) {
        double *E = w->E, *SE2 = w->SE2;
        memset(SE2, 0, R * K * sizeof *SE2);
        for (size_t k = 0; k < n; k++) {
            size_t g = lab[k], idx = (size_t)lab0[k] * K + g;
            if (!N[idx]++)
                list[nnz++] = (uint32_t)idx;
            for (size_t b = 0; b < R; b++) {
                double e = base[k * R + b];
                Se[b * K + g] += e;
                SE2[b * K + g] += e * e;
                E[b * K2 + idx] += e;
            }
        }
    } else if (R == 1) {
        for (size_t k = 0; k < n; k++) {
            size_t g = lab[k], idx = (size_t)lab0[k] * K + g;
            if (!N[idx]++)
                list[nnz++] = (uint32_t)idx;
            Se[g] += base[k];
        }
    } else {
        for (size_t k = 0; k < n; k++) {
            size_t g = lab[k], idx = (size_t)lab0[k] * K + g;
            if (!N[idx]++)
                list[nnz++] = (uint32_t)idx;
            for (size_t b = 0; b < R; b++)
                Se[b * K + g] += base[k * R + b];
        }
    }
    assert(nnz <= cc->cap);
    /* every column from the pairs met: Mp multiply-adds per pair (Mp is a multiple of 4) */
    for (size_t i = 0; i < nnz; i++) {
        size_t idx = list[i], h = idx / K, g = idx - h * K;
        double cnt = (double)N[idx];
        N[idx] = 0;
        double *dst = tmp + g * Mp;
        const double *arow = cc->A + h * Mp;
        for (size_t j = 0; j < Mp; j += 4) {
            dst[j] += cnt * arow[j];
            dst[j + 1] += cnt * arow[j + 1];
            dst[j + 2] += cnt * arow[j + 2];
            dst[j + 3] += cnt * arow[j + 3];
        }
        for (size_t b = 0; nsq && b < R; b++) {
            double e = w->E[b * K2 + idx];
            w->E[b * K2 + idx] = 0.0;
            const double *brow = cc->Bq + (b * K + h) * nsq;
            double *dq = dst + nlin;
            for (size_t q = 0; q < nsq; q++)
                dq[q] += e * brow[q];
        }
    }
    /* the within-group parts */
    for (size_t g = 0; g < K; g++) {
        double *dst = tmp + g * Mp;
        for (size_t j = 0; j < nlin; j++)
            dst[j] += Se[cc->col_base[j] * K + g];
        for (size_t q = 0; q < nsq; q++)
            dst[nlin + q] += w->SE2[cc->col_base[nlin + q] * K + g];
    }
}
