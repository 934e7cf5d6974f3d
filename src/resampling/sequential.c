/* sequential.c — Besag & Clifford (1991) sequential Monte Carlo p-values for the
 * permutation tests (--stop-early).
 *
 * A term stops once h of its rearrangements are at least as extreme as the data; with L
 * the index (1-based) of the h-th such rearrangement in the run's fixed sequence, its
 * p-value is h/L; a term that never reaches h keeps the full-B p (1 + e)/(1 + B). Both
 * depend only on the term's own statistics at rearrangements 0, 1, 2, … — the exact
 * index of the h-th exceedance is recovered from the threads' records of the round in
 * which it fell — so the p-value is the same whatever the threads, blocks or
 * checkpoints. The checkpoints only decide when the whole run stops: at the first one at
 * which every term has stopped, a fixed function of the rearrangements before it.
 *
 * A term whose p is far below α would need about h/p rearrangements to see h of them
 * (all of B at p = 0.001), though its decision is settled long before. The decision rule
 * stops it at a checkpoint c < B once the one-sided Clopper–Pearson (1934) upper bound of
 * its exceedance probability, from its e exceedances among the first c rearrangements at
 * level 1 − ε/K, is below α; K is the number of checkpoints before B and ε =
 * STURDY_STOP_EARLY_RISK. Its p is then (1 + e)/(1 + c). For a term whose true p is α or
 * more, each checkpoint fires with probability at most ε/K (the bound is exact-
 * conservative), so the rule calls it significant with probability at most ε over the
 * whole run (Bonferroni over the checkpoints; the risk-spending idea of Gandy 2009, in its
 * simplest form). Like the rest it depends on the counts at fixed checkpoints only. */
#include <assert.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/sequential.h"
#include "core/core.h"
#include "sturdy/analysis.h"
#include "sturdy/dist.h"

uint64_t sturdy_seq_next_checkpoint(uint64_t c, uint64_t B)
{
    uint64_t step = 128;
    while (c >= 1024 && step * 2 <= c / 8)
        step *= 2;
    uint64_t next = (c / step + 1) * step;
    return next < B ? next : B;
}

uint64_t sturdy_seq_ncheckpoints(uint64_t B)
{
    uint64_t k = 0;
    for (uint64_t c = sturdy_seq_next_checkpoint(0, B); c < B;
         c = sturdy_seq_next_checkpoint(c, B))
        k++;
    return k;
}

int sturdy_seq_init(sturdy_seq *s, size_t M, unsigned h, int nt, double alpha, uint64_t B)
{
    memset(s, 0, sizeof *s);
    s->M = M;
    s->h = h;
    s->B = B;
    uint64_t K = sturdy_seq_ncheckpoints(B);
    s->alpha = alpha > 0 && alpha < 1 && K > 0 ? alpha : 0.0;
    s->eps = K > 0 ? STURDY_STOP_EARLY_RISK / (double)K : 0.0;
    s->left = M;
    s->count = sturdy_calloc(M + 1, sizeof *s->count);
    s->stop = sturdy_calloc(M + 1, sizeof *s->stop);
    s->xstop = sturdy_calloc(M + 1, sizeof *s->xstop);
    s->rule = sturdy_calloc(M + 1, sizeof *s->rule);
    s->merge = sturdy_malloc(((size_t)(nt > 0 ? nt : 1) * h + 1) * sizeof *s->merge);
    if (!s->count || !s->stop || !s->xstop || !s->rule || !s->merge) {
        sturdy_seq_free(s);
        return -1;
    }
    return 0;
}

void sturdy_seq_free(sturdy_seq *s)
{
    sturdy_free(s->count);
    sturdy_free(s->stop);
    sturdy_free(s->xstop);
    sturdy_free(s->rule);
    sturdy_free(s->merge);
    s->count = s->stop = s->xstop = s->merge = NULL;
    s->rule = NULL;
}

int sturdy_seq_thread_init(sturdy_seq_thread *t, size_t M, unsigned h)
{
    t->M = M;
    t->h = h;
    t->pos = sturdy_malloc((M * h + 1) * sizeof *t->pos);
    t->npos = sturdy_calloc(M + 1, sizeof *t->npos);
    if (!t->pos || !t->npos) {
        sturdy_seq_thread_free(t);
        return -1;
    }
    return 0;
}

void sturdy_seq_thread_free(sturdy_seq_thread *t)
{
    sturdy_free(t->pos);
    sturdy_free(t->npos);
    t->pos = NULL;
    t->npos = NULL;
}

static int cmp_u64(const void *a, const void *b)
{
    uint64_t x = *(const uint64_t *)a, y = *(const uint64_t *)b;
    return (x > y) - (x < y);
}

/* Is p ≤ α settled by e exceedances among the first c rearrangements? The upper bound
 * exceeds e/c, so only a term whose estimate is below α can pass. */
static int decided(const sturdy_seq *s, uint64_t e, uint64_t c)
{
    if (!(s->alpha > 0) || c == 0 || (double)e >= s->alpha * (double)c)
        return 0;
    double hi;
    sturdy_clopper_pearson(e, c, 1.0 - 2.0 * s->eps, NULL, &hi);
    return hi < s->alpha;
}

void sturdy_seq_checkpoint(sturdy_seq *s, uint64_t at, const uint64_t *total,
                           sturdy_seq_thread *ts, int nt)
{
    for (size_t j = 0; j < s->M; j++) {
        if (!s->stop[j] && total[j] >= s->h) {
            /* the (h − count)-th exceedance of the round in index order: each thread
               kept its h smallest, so the union holds the round's k smallest, k ≤ h */
            size_t k = (size_t)(s->h - s->count[j]), n = 0;
            for (int i = 0; i < nt; i++)
                for (unsigned q = 0; q < ts[i].npos[j]; q++)
                    s->merge[n++] = ts[i].pos[j * s->h + q];
            qsort(s->merge, n, sizeof *s->merge, cmp_u64);
            assert(k >= 1 && k <= n);
            s->stop[j] = s->merge[k - 1] + 1;
            s->xstop[j] = s->h;
            s->rule[j] = STURDY_SEQ_EXCEEDANCES;
            s->left--;
        } else if (!s->stop[j] && at < s->B && decided(s, total[j], at)) {
            s->stop[j] = at;
            s->xstop[j] = total[j];
            s->rule[j] = STURDY_SEQ_DECIDED;
            s->left--;
        }
        s->count[j] = total[j];
    }
    for (int i = 0; i < nt; i++)
        memset(ts[i].npos, 0, s->M * sizeof *ts[i].npos);
}
