/* permute_setup.c — the permutation engine's set-up (permute.c runs it): the members
 * (each response and term with an F to compare), the vectors they rearrange, the
 * comparisons' columns, which path forms the group sums (the row gather or the cell-count
 * table, cellcount.c) and the comparisons' statistics (their gathered sums or the pair
 * table, maxt_pairs.c), the thresholds of the min-p count, and the per-thread workspaces
 * sized to the address space the run may use. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/permute_ctx.h"
#include "classical/classical.h"
#include "resampling/tail.h"
#include "sturdy/dist.h"

void sturdy_perm_work_free(perm_work *w)
{
    if (!w)
        return;
    sturdy_free(w->lab); sturdy_free(w->pool); sturdy_free(w->sign); sturdy_free(w->tmp);
    sturdy_free(w->S); sturdy_free(w->C);
    sturdy_free(w->num); sturdy_free(w->den); sturdy_free(w->exceed); sturdy_free(w->fwer);
    sturdy_free(w->cexceed); sturdy_free(w->t2); sturdy_free(w->hist);
    sturdy_free(w->T); sturdy_free(w->T2);
    sturdy_free(w->top); sturdy_free(w->ntop);
    sturdy_cellcount_work_free(w->ccw);
    sturdy_maxt_pairs_work_free(w->mpw);
}

/* Bytes of one thread's workspace (work_alloc) at c->nb rearrangements per block. */
static double work_bytes(const perm_ctx *c)
{
    double n = (double)c->d->n, K = (double)c->m->K, M = (double)c->M;
    double nb = (double)c->nb, MC = M + (double)c->maxt.C, maxdf = (double)c->m->rank;
    for (size_t j = 0; j < c->M; j++)
        if ((double)c->mem[j].df > maxdf)
            maxdf = (double)c->mem[j].df;
    if (c->maxt.Csq)
        MC += (double)c->maxt.Csq;
    return n * 9.0 + 8.0 * (K * (double)c->Mp + MC * K * nb + maxdf * nb + 2.0 * MC * nb +
                            2.0 * M + (double)c->maxt.C * (nb + 1.0) +
                            2.0 * K * (double)c->maxt.Cp + M * STURDY_FHIST_BINS + 8.0 +
                            (c->tail ? M * (STURDY_TAIL_KEEP + 1.0) : 0.0)) +
           sturdy_cellcount_work_bytes(c->cc) + sturdy_maxt_pairs_work_bytes(c->mp);
}

static int work_alloc(const perm_ctx *c, perm_work *w)
{
    size_t n = c->d->n, K = c->m->K, M = c->M, nb = c->nb, maxdf = c->m->rank;
    size_t MC = M + c->maxt.C + c->maxt.Csq;
    for (size_t j = 0; j < M; j++)
        if (c->mem[j].df > maxdf)
            maxdf = c->mem[j].df;
    memset(w, 0, sizeof *w);
    w->lab = sturdy_malloc(n * sizeof *w->lab);
    w->pool = sturdy_malloc(n * sizeof *w->pool);
    w->sign = sturdy_malloc(n);
    w->tmp = sturdy_calloc(K * c->Mp, sizeof *w->tmp);
    w->S = sturdy_malloc(MC * K * nb * sizeof *w->S + 1);
    w->C = sturdy_malloc(maxdf * nb * sizeof *w->C);
    w->num = sturdy_malloc(MC * nb * sizeof *w->num + 1);
    w->den = sturdy_malloc(MC * nb * sizeof *w->den + 1);
    w->exceed = sturdy_calloc(M + 1, sizeof *w->exceed);
    w->fwer = sturdy_calloc(M + 1, sizeof *w->fwer);
    w->cexceed = sturdy_calloc(c->maxt.C + 1, sizeof *w->cexceed);
    w->t2 = sturdy_malloc((c->maxt.C * nb + 1) * sizeof *w->t2);
    w->hist = sturdy_calloc(M * STURDY_FHIST_BINS + 1, sizeof *w->hist);
    w->T = sturdy_calloc(K * c->maxt.Cp + 1, sizeof *w->T);
    w->T2 = sturdy_calloc(c->maxt.Csq ? K * c->maxt.Cp : 1, sizeof *w->T2);
    if (c->tail && (!(w->top = sturdy_malloc((M * STURDY_TAIL_KEEP + 1) * sizeof *w->top)) ||
                    !(w->ntop = sturdy_calloc(M + 1, sizeof *w->ntop))))
        return 0;
    if (c->cc && !(w->ccw = sturdy_cellcount_work_alloc(c->cc)))
        return 0;
    if (c->mp && !(w->mpw = sturdy_maxt_pairs_work_alloc(c->mp)))
        return 0;
    return w->lab && w->pool && w->sign && w->tmp && w->S && w->C && w->num && w->den &&
           w->exceed && w->fwer && w->cexceed && w->t2 && w->hist && w->T && w->T2;
}

/* The members: every (response, term) with an F to compare; the others get the note
 * saying why they have no permutation p. */
static sturdy_status choose_members(perm_ctx *c, const sturdy_run *run, sturdy_result *r,
                                    char *err)
{
    const sturdy_design *d = c->d;
    const sturdy_model *m = c->m;
    sturdy_status st;
    c->mem = sturdy_calloc(r->nresp * d->nterms + 1, sizeof *c->mem);
    if (!c->mem)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < d->nterms; t++) {
            sturdy_term_result *tr = &r->resp[ri].terms[t];
            const char *why = NULL;
            if (d->terms[t].kind == STURDY_TERM_BLOCK && !run->opts.flip)
                why = "no permutation p-value for the block term: rearranging within "
                      "blocks leaves it unchanged, so it cannot be tested that way";
            else if (!(tr->f >= 0))
                why = tr->note ? tr->note : "no F statistic to compare";
            if (why) {
                if ((st = sturdy_note_once(&tr->perm_note, why, err)))
                    return st;
                continue;
            }
            assert(m->df_error > 0);    /* a finite F needs residual df; c divides by it */
            member *mb = &c->mem[c->M++];
            mb->resp = ri;
            mb->term = t;
            mb->U = m->terms[t].Uterm;
            mb->df = m->terms[t].df;
            mb->c = tr->f * (double)mb->df / (double)m->df_error * (1.0 - STURDY_TIE_RTOL);
            if (!(tr->f > STURDY_TIE_ZERO))
                mb->c = 0.0;        /* zero up to rounding: every rearrangement counts */
            mb->to_f = (double)m->df_error / (double)mb->df;
            mb->top = sturdy_fhist_top(tr->f, (double)mb->df, (double)m->df_error);
        }
    return STURDY_OK;
}

/* Choose the members and their vectors. */
sturdy_status sturdy_perm_setup(perm_ctx *c, const sturdy_run *run, sturdy_result *r,
                                char *err)
{
    const sturdy_design *d = c->d;
    const sturdy_model *m = c->m;
    size_t n = d->n, K = m->K;
    sturdy_status st = choose_members(c, run, r, err);
    if (st)
        return st;
    if ((st = sturdy_maxt_init(&c->maxt, d, m, run, r, err)))
        return st;
    size_t M = c->M;
    if (M + c->maxt.C == 0)
        return STURDY_OK;
    c->Mp = (M + 3) & ~(size_t)3;
    if ((st = sturdy_rearranger_init(&c->ra, d, c->flip, run->exact, run->opts.seed, err)))
        return st;
    if (c->maxt.C &&
        (st = sturdy_maxt_rows(&c->maxt, d, m, r, run->opts.method, c->ra.blk_rows,
                               c->ra.lab0, c->flip, err)))
        return st;
    c->V = sturdy_calloc(n * c->Mp, sizeof *c->V);
    c->thr = sturdy_malloc(M * M * sizeof *c->thr + 1);
    double *v = sturdy_malloc(n * sizeof *v), *s = sturdy_malloc(K * sizeof *s);
    double *work = sturdy_malloc((m->rank + K) * sizeof *work);
    double *fit = sturdy_malloc(n * sizeof *fit);
    if (!c->V || !c->thr || !v || !s || !work || !fit) {
        sturdy_free(v); sturdy_free(s); sturdy_free(work); sturdy_free(fit);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t j = 0; j < M; j++) {
        member *mb = &c->mem[j];
        const double *y = d->y + mb->resp * n;
        const sturdy_response_result *rr = &r->resp[mb->resp];
        if (run->opts.method == STURDY_METHOD_TER_BRAAK) {
            for (size_t i = 0; i < n; i++)
                v[i] = rr->residual[i];
        } else if (run->opts.method == STURDY_METHOD_RAW) {
            double mean = sturdy_mean(y, n);
            for (size_t i = 0; i < n; i++)
                v[i] = y[i] - mean;
        } else { /* Freedman–Lane: residuals of the reduced model */
            sturdy_model_group_scaled(d, m, y, s);
            sturdy_model_reduced_project(d, m, mb->term, s, work, fit);
            for (size_t i = 0; i < n; i++)
                v[i] = y[i] - fit[i];
        }
        double vv = 0.0;
        for (size_t k = 0; k < n; k++) {
            double x = v[c->ra.blk_rows[k]];
            c->V[k * c->Mp + j] = x;
            vv += x * x;
        }
        mb->vv = vv;
    }
    sturdy_free(v); sturdy_free(s); sturdy_free(work); sturdy_free(fit);
    /* the group sums from cell counts where the cost model prefers it (cellcount.c, which
       reads the split into deviations and per-cell parts off the columns: with
       comparisons, their columns and squares are laid out beside the members' for it, as
       the gather had them before their row form); V is then unused */
    size_t C = c->maxt.C, Csq = c->maxt.Csq, Mf = (M + C + Csq + 3) & ~(size_t)3;
    double *Vf = c->V;
    if (C) {
        if (!(Vf = sturdy_calloc(n * Mf + 1, sizeof *Vf)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        for (size_t k = 0; k < n; k++) {
            for (size_t j = 0; j < M; j++)
                Vf[k * Mf + j] = c->V[k * c->Mp + j];
            for (size_t q = 0; q < C; q++) {
                double x = sturdy_maxt_value(&c->maxt, q, k, c->ra.lab0[k]);
                Vf[k * Mf + M + q] = x;
                if (Csq)
                    Vf[k * Mf + M + C + q] = x * x;
            }
        }
    }
    st = sturdy_cellcount_init(&c->cc, Vf, n, C ? Mf : c->Mp, M + C, Csq, c->ra.lab0, K,
                               c->flip, err);
    if (C)
        sturdy_free(Vf);
    if (st)
        return st;
    if (c->cc) {
        sturdy_free(c->V);
        c->V = NULL;
        c->Mp = C ? Mf : c->Mp;   /* the stride of the sums cellcount.c writes */
    } else if (C && (st = sturdy_maxt_pairs_init(&c->mp, &c->maxt, n, K, m->rank, c->ra.lab0,
                                                 c->flip, err))) {
        return st;
    }
    /* thresholds for the min-p count: p*_t ≤ p_j  ⇔  F*_t ≥ F-quantile_t(p_j); a term
       whose df an earlier term has shares its threshold (the same expression, so the same
       bits), which leaves one quantile per distinct df and term j instead of M − 1 */
    for (size_t t = 0; t < M; t++) {
        /* the first two earlier terms of t's df (t: none): term j's threshold comes from
           the first of them that is not j itself */
        size_t u1 = t, u2 = t;
        for (size_t u = 0; u < t && u2 == t; u++)
            if (c->mem[u].df == c->mem[t].df) {
                if (u1 == t) u1 = u;
                else u2 = u;
            }
        for (size_t j = 0; j < M; j++) {
            const member *mt = &c->mem[t];
            if (t == j) {
                c->thr[t * M + j] = mt->c;
                continue;
            }
            size_t u = u1 != j ? u1 : u2;
            if (u < t) {
                c->thr[t * M + j] = c->thr[u * M + j];
                continue;
            }
            double pj = r->resp[c->mem[j].resp].terms[c->mem[j].term].p;
            double q = sturdy_f_isf(pj, (double)mt->df, (double)m->df_error);
            c->thr[t * M + j] = q * (double)mt->df / (double)m->df_error *
                                (1.0 - STURDY_TIE_RTOL);
        }
    }
    size_t nb = PERM_BLOCK_BYTES / (Mf * K * sizeof(double) + 1);
    c->nb = nb < 1 ? 1 : (nb > PERM_BLOCK_MAX ? PERM_BLOCK_MAX : nb);
    return STURDY_OK;
}

/* Address space kept free for each thread beyond the calling one, besides its
 * workspace: the BLAS library's own buffer (OpenBLAS maps 32–64 MiB for each thread that
 * calls it at the same time; the calling thread's exists from the model's
 * factorisations), the thread's stack and its malloc arena. Under an address-space limit
 * (ulimit -v) a BLAS library that cannot map its buffer may wait forever instead of
 * failing, so it must never be left short. */
#define PERM_THREAD_RESERVE ((double)(64u << 20))

/* One workspace per thread, allocated before the threads start: under an address-space
 * limit the blocks are sized to what it leaves, and without room for them (or when an
 * allocation fails) the block shrinks (down to one rearrangement), then the threads;
 * when even one thread with one rearrangement per block does not fit, "out of memory"
 * at once. Without a limit a failed allocation is out of memory. Smaller blocks and
 * fewer threads give the same counts (rearrangement b depends on b alone). */
sturdy_status sturdy_perm_workspaces(perm_ctx *c, int *nthreads, perm_work **out, char *err)
{
    size_t left = 0;
    int limited = sturdy_address_space_left(&left);
    int nt = *nthreads > 0 ? *nthreads : 1;
    *out = NULL;
    for (;;) {
        double need = work_bytes(c) * nt + PERM_THREAD_RESERVE * (nt - 1);
        if (!limited || need <= (double)left) {
            perm_work *ws = sturdy_calloc((size_t)nt, sizeof *ws);
            int ok = ws != NULL;
            for (int i = 0; ok && i < nt; i++)
                ok = work_alloc(c, &ws[i]);
            if (ok) {
                *nthreads = nt;
                *out = ws;
                return STURDY_OK;
            }
            for (int i = 0; ws && i < nt; i++)
                sturdy_perm_work_free(&ws[i]);
            sturdy_free(ws);
            if (!limited)       /* no limit to size against: the machine is out */
                return sturdy_fail(err, STURDY_EINTERNAL,
                                   "out of memory for permutation workspaces");
        }
        if (c->nb > 1) {
            c->nb /= 2;
        } else if (nt > 1) {
            nt--;
        } else {
            char a[32], b[32];
            return sturdy_fail(err, STURDY_EINTERNAL,
                               "out of memory for the permutation tests: they need "
                               "about %s, and the address-space limit leaves %s",
                               sturdy_format_bytes(need, a),
                               sturdy_format_bytes((double)left, b));
        }
    }
}
