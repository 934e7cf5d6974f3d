/* permute.c — permutation and sign-flipping tests for every term (Freedman & Lane 1983;
 * ter Braak 1992; raw data, Manly 1997; sign flipping, Winkler et al. 2014), with
 * exchangeability blocks, exact enumeration, and the Westfall–Young (1993) single-step
 * min-p count across all terms and responses.
 *
 * Design. Term t of response r is tested by rearranging a vector v (Freedman–Lane: the
 * residuals of t's reduced model; ter Braak: the full model's residuals; raw: the centred
 * response). Since the reduced model's fitted values lie inside every model compared,
 *     F* = (‖U_tᵀ s*‖² / df) / ((‖v‖² − ‖U_fullᵀ s*‖²) / df_error),
 * where s* are the group sums (÷√n_g) of the rearranged v (fit.h). ‖v‖² is invariant
 * under rearrangement, so each rearrangement costs one gather of n rows (all terms' v
 * stored side by side, so one row read serves every term) plus small products with the
 * group-space bases, done for a block of rearrangements at once with dgemm. For
 * factor-only models the groups are the cells, so nothing of size n × p is ever formed.
 *
 * Comparisons of marginal means (maxt.c) ride along: each is one more column of the
 * gathered matrix, so the single-step max-T counts (Westfall & Young 1993) use exactly
 * the rearrangements of the F tests, in the same pass over the rows.
 *
 * Reproducibility: rearrangement b uses generator sturdy_pcg_for(seed, PERMUTE, b) only
 * (or, when enumerating, the b-th rearrangement in a fixed order); counts are integers
 * summed per thread, so any split over threads, shards or ranks gives the same counts. */
#include <assert.h>
#include <cblas.h>
#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/permute_ctx.h"
#include "sturdy/dist.h"
#include "resampling/tail.h"
#include "classical/classical.h"

sturdy_status sturdy_permute_count(const sturdy_design *d, int flip, uint64_t *count,
                                   char *err)
{
    if (flip) {
        *count = d->n >= 64 ? UINT64_MAX : (uint64_t)1 << d->n;
        return STURDY_OK;
    }
    if (!d->has_block) {
        *count = sturdy_factorial_sat(d->n);
        return STURDY_OK;
    }
    size_t *cnt = sturdy_calloc(d->block.nlevels, sizeof *cnt);
    if (!cnt)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t i = 0; i < d->n; i++)
        cnt[d->block_level[i]]++;
    uint64_t total = 1;
    for (size_t k = 0; k < d->block.nlevels; k++) {
        uint64_t f = sturdy_factorial_sat(cnt[k]);
        if (f == UINT64_MAX || (f && total > UINT64_MAX / f)) {
            total = UINT64_MAX;
            break;
        }
        total *= f;
    }
    sturdy_free(cnt);
    *count = total;
    return STURDY_OK;
}

/* Is F* = (num/df)/(den/df_err) at least the threshold that `c` encodes (num ≥ c·den)?
 * The tie rule of the whole engine, with the zero-residual cases of PERM_ZERO_RTOL. */
static inline int at_least(double num, double den, double c, double vv)
{
    double zero = PERM_ZERO_RTOL * vv;
    if (den <= zero)
        return num > zero;
    return num >= c * den;
}

/* The scaled group sums of every member's vector under rearrangements [b0, b0 + nb):
 * w->S[(j·nb + bb)·K + g]. One pass over the rows per rearrangement serves all members. */
static void group_sums(const perm_ctx *c, uint64_t b0, size_t nb, perm_work *w)
{
    size_t n = c->d->n, K = c->m->K, M = c->M, Mp = c->Mp;
    /* with the pair table the comparisons have no group sums here */
    size_t C = c->mp ? 0 : c->maxt.C, Cp = c->maxt.Cp, Csq = c->mp ? 0 : c->maxt.Csq;
    for (size_t bb = 0; bb < nb; bb++) {
        sturdy_rearrange(&c->ra, b0 + bb, w->lab, w->sign, w->pool);
        double *tmp = w->tmp;
        /* the values in order, each added to the group its position now carries */
        const uint32_t *lab = c->flip ? c->ra.lab0 : w->lab;
        if (c->cc) {
            sturdy_cellcount_sums(c->cc, w->ccw, w->lab, w->sign, tmp);
        } else if (c->flip) {
            for (size_t k = 0; k < n; k++) {
                const double *row = c->V + k * Mp;
                double *dst = tmp + (size_t)lab[k] * Mp;
                double sg = (double)w->sign[k];
                for (size_t j = 0; j < Mp; j += 4) {
                    dst[j] += sg * row[j];
                    dst[j + 1] += sg * row[j + 1];
                    dst[j + 2] += sg * row[j + 2];
                    dst[j + 3] += sg * row[j + 3];
                }
            }
        } else {
            for (size_t k = 0; k < n; k++) {
                const double *row = c->V + k * Mp;
                double *dst = tmp + (size_t)lab[k] * Mp;
                for (size_t j = 0; j < Mp; j += 4) {
                    dst[j] += row[j];
                    dst[j + 1] += row[j + 1];
                    dst[j + 2] += row[j + 2];
                    dst[j + 3] += row[j + 3];
                }
            }
        }
        if (c->cc) {   /* every column's sums, the comparisons' too, are in tmp */
            for (size_t g = 0; g < K; g++) {
                double inv = 1.0 / c->m->sqrt_count[g];
                for (size_t j = 0; j < M + C + Csq; j++)
                    w->S[(j * nb + bb) * K + g] = tmp[g * Mp + j] * inv;
                for (size_t j = 0; j < Mp; j++)
                    tmp[g * Mp + j] = 0.0;
            }
            continue;
        }
        if (c->mp) {   /* the comparisons' t*² at once, from the pair table */
            sturdy_maxt_pairs_t2(c->mp, w->mpw, &c->maxt, w->lab, PERM_ZERO_RTOL, w->t2, nb,
                                 bb);
        } else if (C) {   /* the comparisons' vectors, from their row form */
            sturdy_maxt_gather(&c->maxt, n, lab, c->ra.lab0, c->flip ? w->sign : NULL,
                               w->T, Csq ? w->T2 : NULL);
        }
        for (size_t g = 0; g < K; g++) {
            double inv = 1.0 / c->m->sqrt_count[g];
            for (size_t j = 0; j < M; j++)
                w->S[(j * nb + bb) * K + g] = tmp[g * Mp + j] * inv;
            for (size_t j = 0; j < Mp; j++)
                tmp[g * Mp + j] = 0.0;
        }
        /* the comparisons' sums a column at a time, so that each goes to K consecutive
           places of S (a row at a time wrote C places nb·K apart for every cell, a
           cache miss each) */
        const double *sc = c->m->sqrt_count;
        for (size_t q = 0; q < C; q++) {
            double *dst = w->S + ((M + q) * nb + bb) * K;
            for (size_t g = 0; g < K; g++)
                dst[g] = w->T[g * Cp + q] * (1.0 / sc[g]);
        }
        for (size_t q = 0; q < Csq; q++) {
            double *dst = w->S + ((M + C + q) * nb + bb) * K;
            for (size_t g = 0; g < K; g++)
                dst[g] = w->T2[g * Cp + q] * (1.0 / sc[g]);
        }
        if (C)
            memset(w->T, 0, K * Cp * sizeof *w->T);
        if (Csq)
            memset(w->T2, 0, K * Cp * sizeof *w->T2);
    }
}

/* ‖U_tᵀs*‖² (w->num) and ‖v‖² − ‖U_fullᵀs*‖² (w->den) of every member and rearrangement
 * of the block, with one dgemm per member for the block. */
static void numerators(const perm_ctx *c, size_t nb, perm_work *w)
{
    const sturdy_model *m = c->m;
    size_t K = m->K;
    for (size_t j = 0; j < c->M; j++) {
        const member *mj = &c->mem[j];
        const double *S = w->S + j * nb * K;
        cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, (int)mj->df, (int)nb, (int)K,
                    1.0, mj->U, (int)K, S, (int)K, 0.0, w->C, (int)mj->df);
        for (size_t bb = 0; bb < nb; bb++) {
            double s2 = 0.0;
            for (size_t q = 0; q < mj->df; q++)
                s2 += w->C[bb * mj->df + q] * w->C[bb * mj->df + q];
            w->num[j * nb + bb] = s2;
        }
        if (m->rank == K) { /* the full model spans group space: ‖U_fullᵀ s‖ = ‖s‖ */
            for (size_t bb = 0; bb < nb; bb++) {
                double s2 = 0.0;
                for (size_t g = 0; g < K; g++)
                    s2 += S[bb * K + g] * S[bb * K + g];
                w->den[j * nb + bb] = mj->vv - s2;
            }
        } else {
            cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, (int)m->rank, (int)nb,
                        (int)K, 1.0, m->U, (int)K, S, (int)K, 0.0, w->C, (int)m->rank);
            for (size_t bb = 0; bb < nb; bb++) {
                double s2 = 0.0;
                for (size_t q = 0; q < m->rank; q++)
                    s2 += w->C[bb * m->rank + q] * w->C[bb * m->rank + q];
                w->den[j * nb + bb] = mj->vv - s2;
            }
        }
    }
}

/* t*² of every comparison column (after the M members) for the block, into w->t2. */
static void comparison_stats(const perm_ctx *c, size_t nb, perm_work *w)
{
    const sturdy_model *m = c->m;
    size_t K = m->K;
    for (size_t q = 0; !c->mp && q < c->maxt.C; q++) {
        const double *S = w->S + (c->M + q) * nb * K;
        double *num = w->num + (c->M + q) * nb, *den = w->den + (c->M + q) * nb;
        sturdy_maxt_numerators(&c->maxt, q, S, K, nb, num);
        if (m->rank == K) {
            for (size_t bb = 0; bb < nb; bb++) {
                double s2 = 0.0;
                for (size_t g = 0; g < K; g++)
                    s2 += S[bb * K + g] * S[bb * K + g];
                den[bb] = c->maxt.cm[q].vv - s2;
            }
        } else {
            cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, (int)m->rank, (int)nb,
                        (int)K, 1.0, m->U, (int)K, S, (int)K, 0.0, w->C, (int)m->rank);
            for (size_t bb = 0; bb < nb; bb++) {
                double s2 = 0.0;
                for (size_t r = 0; r < m->rank; r++)
                    s2 += w->C[bb * m->rank + r] * w->C[bb * m->rank + r];
                den[bb] = c->maxt.cm[q].vv - s2;
            }
        }
        if (c->maxt.cm[q].het) {
            const double *Q = c->maxt.Qfix ? c->maxt.Qfix + q * K
                                           : w->S + (c->M + c->maxt.C + q) * nb * K;
            size_t step = c->maxt.Qfix ? 0 : K;
            for (size_t bb = 0; bb < nb; bb++)
                w->t2[q * nb + bb] =
                    sturdy_maxt_t2_het(&c->maxt, q, S + bb * K, Q + bb * step, m->sqrt_count,
                                       K, num[bb], PERM_ZERO_RTOL);
            continue;
        }
        for (size_t bb = 0; bb < nb; bb++)
            w->t2[q * nb + bb] = sturdy_maxt_t2(&c->maxt, q, num[bb], den[bb], PERM_ZERO_RTOL);
    }
    sturdy_maxt_count(&c->maxt, w->t2, nb, w->cexceed);
}

/* Add F* of one rearrangement to member j's fixed bins; an undefined F* (no residual
 * and no term part, see PERM_ZERO_RTOL) is not counted, as at_least never counts it. */
static inline void hist_add(const member *mj, double num, double den, uint64_t *hist)
{
    double zero = PERM_ZERO_RTOL * mj->vv;
    if (!(mj->top > 0))
        return;
    if (den <= zero) {
        if (num > zero)
            hist[STURDY_FHIST_BINS - 1]++;
        return;
    }
    hist[sturdy_fhist_bin(mj->to_f * num / den, mj->top)]++;
}

/* Add F* of one rearrangement to member j's largest (--tail-fit), with hist_add's rule:
 * no residual but a term part is +∞, neither is undefined and not kept. */
static inline void top_add(const member *mj, double num, double den, double *heap,
                           size_t *n)
{
    double zero = PERM_ZERO_RTOL * mj->vv;
    if (den > zero)
        sturdy_tail_push(heap, n, mj->to_f * num / den);
    else if (num > zero)
        sturdy_tail_push(heap, n, INFINITY);
}

/* Statistics of rearrangements [b0, b0 + cnt) and their counts. */
static void run_block(const perm_ctx *c, uint64_t b0, size_t cnt, perm_work *w)
{
    size_t M = c->M, nb = cnt;
    assert(cnt >= 1 && cnt <= c->nb);   /* the workspaces hold c->nb rearrangements */
    group_sums(c, b0, nb, w);
    numerators(c, nb, w);
    if (c->maxt.C)
        comparison_stats(c, nb, w);
    for (size_t bb = 0; bb < nb; bb++) {
        for (size_t j = 0; j < M; j++)
            if (at_least(w->num[j * nb + bb], w->den[j * nb + bb], c->mem[j].c,
                         c->mem[j].vv)) {
                w->exceed[j]++;
                if (w->seq)
                    sturdy_seq_note(w->seq, j, b0 + bb);
            }
        for (size_t j = 0; j < M; j++)
            hist_add(&c->mem[j], w->num[j * nb + bb], w->den[j * nb + bb],
                     w->hist + j * STURDY_FHIST_BINS);
        for (size_t j = 0; c->tail && j < M; j++)
            top_add(&c->mem[j], w->num[j * nb + bb], w->den[j * nb + bb],
                    w->top + j * STURDY_TAIL_KEEP, &w->ntop[j]);
        /* Westfall–Young: is the smallest p* over the family ≤ p_j? */
        for (size_t j = 0; j < M; j++)
            for (size_t t = 0; t < M; t++)
                if (at_least(w->num[t * nb + bb], w->den[t * nb + bb], c->thr[t * M + j],
                             c->mem[t].vv)) {
                    w->fwer[j]++;
                    break;
                }
    }
}

/* Progress after `add` more rearrangements of `total`: at most every 0.2 s, and at the
 * end. Called inside a critical section. */
static void report_progress(const sturdy_run *run, uint64_t add, uint64_t total,
                            uint64_t *done, double *last)
{
    *done += add;
    double t = sturdy_now_seconds();
    if (t - *last > 0.2 || *done == total) {
        *last = t;
        run->progress(run->progress_arg, *done, total);
    }
}

typedef struct {
    uint64_t done;
    double last;
    uint64_t total;
} perm_progress;

/* Rearrangements [b0, b1) over the threads, in blocks of c->nb aligned on multiples of
 * c->nb; each thread adds to its own workspace's counts. */
static void run_range(const perm_ctx *c, const sturdy_run *run, perm_work *ws, int nthreads,
                      uint64_t b0, uint64_t b1, perm_progress *prog)
{
    uint64_t first_blk = b0 / c->nb, last_blk = (b1 + c->nb - 1) / c->nb;
    int64_t nblocks = (int64_t)(last_blk - first_blk);
#pragma omp parallel num_threads(nthreads)
    {
        perm_work *w = &ws[omp_get_thread_num()];
#pragma omp for schedule(dynamic, 1)
        for (int64_t k = 0; k < nblocks; k++) {
            if (sturdy_run_cancelled(run))
                continue;
            uint64_t lo = (first_blk + (uint64_t)k) * c->nb, hi = lo + c->nb;
            if (lo < b0) lo = b0;
            if (hi > b1) hi = b1;
            assert(lo < hi && hi <= run->nperm);
            run_block(c, lo, (size_t)(hi - lo), w);
            if (run->progress) {
#pragma omp critical(sturdy_progress)
                report_progress(run, hi - lo, prog->total, &prog->done, &prog->last);
            }
        }
    }
}

/* --stop-early (sequential.c): rounds of rearrangements up to fixed checkpoints; at each,
 * the members whose h-th exceedance fell in the round stop (Besag & Clifford 1991), then
 * those whose p ≤ α is settled (the decision rule; not with --tail-fit, whose p below 1/B
 * needs the small-p terms' whole run), and the run stops when all have.
 * Sets the stopped members' exceed (h, or the count at their checkpoint), perm_used (L)
 * and stopped_early (how: STURDY_SEQ_*) in r, and r->perm_stop (the rearrangements the
 * run made: the counts in the workspaces cover [0, perm_stop)). Whole runs only (no
 * shards: analysis.c). */
static sturdy_status run_sequential(const perm_ctx *c, const sturdy_run *run, perm_work *ws,
                                    int nthreads, perm_progress *prog, sturdy_result *r,
                                    char *err)
{
    unsigned h = STURDY_STOP_EARLY_H;
    uint64_t B = run->perm_end;
    assert(run->perm_begin == 0);
    sturdy_seq seq;
    sturdy_seq_thread *ts = sturdy_calloc((size_t)nthreads, sizeof *ts);
    uint64_t *total = sturdy_calloc(c->M + 1, sizeof *total);
    double alpha = c->tail ? 0.0 : run->opts.alpha;   /* the decision rule's level */
    int ok = ts && total && !sturdy_seq_init(&seq, c->M, h, nthreads, alpha, B);
    for (int i = 0; ok && i < nthreads; i++)
        ok = !sturdy_seq_thread_init(&ts[i], c->M, h);
    if (!ok) {
        for (int i = 0; ts && i < nthreads; i++)
            sturdy_seq_thread_free(&ts[i]);
        sturdy_free(ts);
        sturdy_free(total);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (int i = 0; i < nthreads; i++)
        ws[i].seq = &ts[i];
    uint64_t lo = 0, hi = 0;
    while (lo < B && seq.left > 0 && !sturdy_run_cancelled(run)) {
        hi = sturdy_seq_next_checkpoint(lo, B);
        run_range(c, run, ws, nthreads, lo, hi, prog);
        for (size_t j = 0; j < c->M; j++) {
            total[j] = 0;
            for (int i = 0; i < nthreads; i++)
                total[j] += ws[i].exceed[j];
        }
        sturdy_seq_checkpoint(&seq, hi, total, ts, nthreads);
        lo = hi;
    }
    r->perm_stop = lo;
    for (size_t j = 0; j < c->M; j++) {
        sturdy_term_result *tr = &r->resp[c->mem[j].resp].terms[c->mem[j].term];
        tr->stopped_early = seq.rule[j];
        tr->perm_used = seq.stop[j] ? seq.stop[j] : lo;
        if (seq.stop[j])
            tr->exceed = seq.xstop[j];
    }
    if (run->progress && prog->done < prog->total)   /* the progress line ends */
        run->progress(run->progress_arg, prog->total, prog->total);
    for (int i = 0; i < nthreads; i++) {
        ws[i].seq = NULL;
        sturdy_seq_thread_free(&ts[i]);
    }
    sturdy_free(ts);
    sturdy_free(total);
    sturdy_seq_free(&seq);
    return STURDY_OK;
}

sturdy_status sturdy_permute_run(const sturdy_run *run, const sturdy_design *d,
                                 const sturdy_model *m, sturdy_result *r, char *err)
{
    perm_ctx c;
    memset(&c, 0, sizeof c);
    c.d = d;
    c.m = m;
    c.flip = run->opts.flip;
    c.tail = run->opts.tail_fit;
    sturdy_status st = sturdy_perm_setup(&c, run, r, err);
    uint64_t b0 = run->perm_begin, b1 = run->perm_end;
    perm_work *ws = NULL;
    int nthreads = run->threads;
    if (st || c.M + c.maxt.C == 0 || b1 <= b0 || (st = sturdy_perm_workspaces(&c, &nthreads, &ws, err)))
        goto done;
    uint64_t *exceed = sturdy_calloc(c.M + 1, sizeof *exceed);
    uint64_t *fwer = sturdy_calloc(c.M + 1, sizeof *fwer);
    uint64_t *cexceed = sturdy_calloc(c.maxt.C + 1, sizeof *cexceed);
    uint64_t *hist = sturdy_calloc(c.M * STURDY_FHIST_BINS + 1, sizeof *hist);
    perm_progress prog = { 0, sturdy_now_seconds(), b1 - b0 };
    if (!exceed || !fwer || !cexceed || !hist) {
        sturdy_free(exceed); sturdy_free(fwer); sturdy_free(cexceed); sturdy_free(hist);
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    if (!run->opts.stop_early || run->exact) {
        run_range(&c, run, ws, nthreads, b0, b1, &prog);
    } else if ((st = run_sequential(&c, run, ws, nthreads, &prog, r, err))) {
        sturdy_free(exceed); sturdy_free(fwer); sturdy_free(cexceed); sturdy_free(hist);
        goto done;
    }
    for (int i = 0; i < nthreads; i++) {      /* in thread order: the sums are integers */
        for (size_t j = 0; j < c.M; j++) {
            exceed[j] += ws[i].exceed[j];
            fwer[j] += ws[i].fwer[j];
        }
        for (size_t q = 0; q < c.maxt.C; q++)
            cexceed[q] += ws[i].cexceed[q];
        for (size_t q = 0; q < c.M * STURDY_FHIST_BINS; q++)
            hist[q] += ws[i].hist[q];
    }
    if (sturdy_run_cancelled(run)) {
        st = sturdy_fail(err, STURDY_ECANCELLED, "cancelled during the permutation tests");
    } else {
        for (size_t j = 0; j < c.M; j++) {
            sturdy_term_result *tr = &r->resp[c.mem[j].resp].terms[c.mem[j].term];
            tr->exceed += tr->stopped_early ? 0 : exceed[j]; /* stopped: set by
                                                               run_sequential */
            tr->exceed_fwer += fwer[j];
            for (size_t q = 0; q < STURDY_FHIST_BINS; q++)
                tr->f_hist[q] += hist[j * STURDY_FHIST_BINS + q];
            for (int i = 0; c.tail && i < nthreads; i++)   /* order-free: a multiset */
                sturdy_tail_merge(tr->f_top, &tr->n_top, ws[i].top + j * STURDY_TAIL_KEEP,
                                  ws[i].ntop[j]);
        }
        for (size_t q = 0; q < c.maxt.C; q++)
            c.maxt.cm[q].cmp->exceed_maxt += cexceed[q];
    }
    sturdy_free(exceed);
    sturdy_free(fwer);
    sturdy_free(cexceed);
    sturdy_free(hist);
done:
    for (int i = 0; ws && i < nthreads; i++)
        sturdy_perm_work_free(&ws[i]);
    sturdy_free(ws);
    sturdy_free(c.mem);
    sturdy_free(c.V);
    sturdy_free(c.thr);
    sturdy_rearranger_free(&c.ra);
    sturdy_cellcount_free(c.cc);
    sturdy_maxt_pairs_free(c.mp);
    sturdy_maxt_free(&c.maxt);
    return st;
}
