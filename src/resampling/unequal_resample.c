/* unequal_resample.c — the resampled p-values of the unequal-variance statistic: the
 * wild bootstrap (Davidson & Flachaire 2008; Rademacher signs from sturdy_pcg_for(seed,
 * STURDY_STREAM_WILD_TEST, b), the same signs for every term) and the permutation of the
 * studentised statistic with the run's rearrangements (Janssen 1997; Pauly, Brunner &
 * Konietschke 2015). Each replicate is one pass over the rows into group sums, then W*
 * per term (unequal.c); counts are integers summed per thread, so any split of the work
 * gives the same counts. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "resampling/pcg_inline.h"
#include "resampling/rearrange.h"
#include "classical/unequal.h"
#include "resampling/resampling.h"

typedef struct {
    size_t resp, term;
    const double *Ut;
    size_t df;
    double thr;          /* count W* ≥ thr */
    int perm_ok;         /* the permutation scheme can test it (not the block term) */
} uv_member;

typedef struct {
    uv_ctx c;
    size_t M;
    uv_member *mem;
    double *E;           /* n × M row-major, rows in position order: wild: ẽ/√(1 − h);
                            permutation: ẽ */
    double *Qw;          /* K × M: Σ (ẽ/√(1−h))² per group (the wild scheme's Q) */
    size_t maxdf;
} uv_run;

static void uv_run_free(uv_run *u)
{
    uv_ctx_free(&u->c);
    sturdy_free(u->mem);
    sturdy_free(u->E);
    sturdy_free(u->Qw);
}

/* One pass of replicates [b0, b1) of one scheme; counts into cnt (M). */
static int run_range(const uv_run *u, const sturdy_rearranger *ra, int wild, uint64_t seed,
                     uint64_t b0, uint64_t b1, uint64_t *cnt, int nthreads)
{
    const sturdy_design *d = u->c.d;
    size_t n = d->n, K = u->c.K, M = u->M;
    assert(b0 < b1 && (wild || ra));
    int failed = 0;
    int64_t nrep = (int64_t)(b1 - b0);
#pragma omp parallel num_threads(nthreads)
    {
        double *A = sturdy_malloc(K * M * sizeof *A), *Q = sturdy_malloc(K * M * sizeof *Q);
        double *Ak = sturdy_malloc(K * sizeof *Ak), *Qk = sturdy_malloc(K * sizeof *Qk);
        double *work = sturdy_malloc(uv_wald_work(&u->c, u->maxdf) * sizeof *work);
        uint32_t *lab = sturdy_malloc(n * sizeof *lab), *pool = sturdy_malloc(n * sizeof *pool);
        signed char *sign = sturdy_malloc(n ? n : 1);
        uint64_t *mine = sturdy_calloc(M, sizeof *mine);
        int ok = A && Q && Ak && Qk && work && lab && pool && sign && mine;
        if (!ok) {
#pragma omp atomic write
            failed = 1;
        }
#pragma omp for schedule(dynamic, 16)
        for (int64_t k = 0; k < nrep; k++) {
            if (!ok)
                continue;
            uint64_t b = b0 + (uint64_t)k;
            memset(A, 0, K * M * sizeof *A);
            if (wild) {
                sturdy_pcg64 g;
                sturdy_pcg_for(&g, seed, STURDY_STREAM_WILD_TEST, b);
                sturdy_pcg_signs(&g, sign, n);
                for (size_t i = 0; i < n; i++) {
                    double *dst = A + d->group[i] * M;
                    const double *e = u->E + i * M;
                    double sg = (double)sign[i];
                    for (size_t j = 0; j < M; j++)
                        dst[j] += sg * e[j];
                }
                memcpy(Q, u->Qw, K * M * sizeof *Q);
            } else {
                memset(Q, 0, K * M * sizeof *Q);
                sturdy_rearrange(ra, b, lab, sign, pool);
                for (size_t p = 0; p < n; p++) {
                    size_t g = ra->flip ? ra->lab0[p] : lab[p];
                    double sg = ra->flip ? (double)sign[p] : 1.0;
                    const double *e = u->E + p * M;
                    double *da = A + g * M, *dq = Q + g * M;
                    for (size_t j = 0; j < M; j++) {
                        da[j] += sg * e[j];
                        dq[j] += e[j] * e[j];
                    }
                }
            }
            for (size_t j = 0; j < M; j++) {
                const uv_member *mb = &u->mem[j];
                if (!wild && !mb->perm_ok)
                    continue;
                for (size_t g = 0; g < K; g++) {
                    Ak[g] = A[g * M + j];
                    Qk[g] = Q[g * M + j];
                }
                double W = uv_wald(&u->c, mb->Ut, mb->df, Ak, Qk, work);
                if (W >= mb->thr)
                    mine[j]++;
            }
        }
        if (ok) {
#pragma omp critical(sturdy_uv_reduce)
            for (size_t j = 0; j < M; j++)
                cnt[j] += mine[j];
        }
        sturdy_free(A); sturdy_free(Q); sturdy_free(Ak); sturdy_free(Qk); sturdy_free(work);
        sturdy_free(lab); sturdy_free(pool); sturdy_free(sign);
        sturdy_free(mine);
    }
    return !failed;
}

/* The members and their perturbation bases, for one scheme (wild: scaled, in row order;
 * permutation: unscaled, in the rearranger's position order). */
static sturdy_status fill_bases(uv_run *u, const sturdy_rearranger *ra, int wild, char *err)
{
    const sturdy_design *d = u->c.d;
    const sturdy_model *m = u->c.m;
    size_t n = d->n, K = u->c.K, M = u->M;
    double *v = sturdy_malloc(n * sizeof *v);
    double *A = sturdy_malloc(K * sizeof *A);
    double *Q = sturdy_malloc(K * sizeof *Q);
    double *s = sturdy_malloc(K * sizeof *s), *pw = sturdy_malloc((m->rank + K) * sizeof *pw);
    double *ft = sturdy_malloc(n * sizeof *ft);
    if (!v || !A || !Q || !s || !pw || !ft) {
        sturdy_free(v); sturdy_free(A); sturdy_free(Q); sturdy_free(s); sturdy_free(pw);
        sturdy_free(ft);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    if (wild)
        memset(u->Qw, 0, K * M * sizeof *u->Qw);
    for (size_t j = 0; j < M; j++) {
        const uv_member *mb = &u->mem[j];
        uv_restricted_residuals(&u->c, d->y + mb->resp * n, mb->Ut, mb->df, v, ft, A, Q, s, pw);
        for (size_t p = 0; p < n; p++) {
            if (wild) {
                double e = v[p] * u->c.scale[d->group[p]];
                u->E[p * M + j] = e;
                u->Qw[d->group[p] * M + j] += e * e;
            } else {
                u->E[p * M + j] = v[ra->blk_rows[p]];
            }
        }
    }
    sturdy_free(v); sturdy_free(A); sturdy_free(Q); sturdy_free(s); sturdy_free(pw);
    sturdy_free(ft);
    return STURDY_OK;
}

sturdy_status sturdy_uv_run(const sturdy_run *run, const sturdy_design *d,
                            const sturdy_model *m, sturdy_result *r, char *err)
{
    uint64_t b0 = run->perm_begin, b1 = run->perm_end;
    sturdy_spread_scheme scheme = run->opts.spread_scheme;
    /* the default scheme resamples nothing: no set-up either */
    if (scheme == STURDY_SPREAD_NONE)
        return STURDY_OK;
    uv_run u;
    memset(&u, 0, sizeof u);
    const char *why;
    sturdy_status st = uv_ctx_init(&u.c, d, m, sturdy_uv_uses_hc3(d), &why, err);
    if (st)
        return st;
    sturdy_rearranger ra;
    memset(&ra, 0, sizeof ra);
    size_t n = d->n, K = u.c.K;
    u.mem = sturdy_calloc(r->nresp * d->nterms + 1, sizeof *u.mem);
    if (!u.mem) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < d->nterms; t++) {
            sturdy_uv_result *uv = &r->resp[ri].terms[t].uv;
            if (isnan(uv->wald))
                continue;
            if (scheme == STURDY_SPREAD_PERMUTATION &&
                d->terms[t].kind == STURDY_TERM_BLOCK && !run->opts.flip &&
                (st = sturdy_note_once(&uv->perm_note, "no permutation p-value for the block term: "
                               "rearranging within blocks leaves it unchanged", err)))
                goto done;
            assert(u.M < r->nresp * d->nterms + 1);
            uv_member *mb = &u.mem[u.M++];
            mb->resp = ri;
            mb->term = t;
            mb->Ut = m->terms[t].Uterm;
            mb->df = m->terms[t].df;
            mb->thr = uv->wald * (1.0 - STURDY_TIE_RTOL);
            mb->perm_ok = !uv->perm_note;
            if (mb->df > u.maxdf)
                u.maxdf = mb->df;
        }
    /* an empty slice (a merge sets up without resampling) still leaves the block term's
     * note above */
    if (u.M == 0 || b1 <= b0)
        goto done;
    u.E = sturdy_malloc(n * u.M * sizeof *u.E);
    u.Qw = sturdy_malloc(K * u.M * sizeof *u.Qw);
    uint64_t *cnt = sturdy_calloc(u.M, sizeof *cnt);
    if (!u.E || !u.Qw || !cnt) {
        sturdy_free(cnt);
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    int nthreads = run->threads;
    /* wild bootstrap: always */
    if (!(st = fill_bases(&u, NULL, 1, err))) {
        if (!run_range(&u, NULL, 1, run->opts.seed, b0, b1, cnt, nthreads))
            st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory for the wild bootstrap");
        for (size_t j = 0; j < u.M && !st; j++)
            r->resp[u.mem[j].resp].terms[u.mem[j].term].uv.exceed_wild += cnt[j];
    }
    /* permutation of the studentised statistic: when it is the run's scheme */
    if (!st && scheme == STURDY_SPREAD_PERMUTATION &&
        !(st = sturdy_rearranger_init(&ra, d, run->opts.flip, run->exact, run->opts.seed,
                                      err)) &&
        !(st = fill_bases(&u, &ra, 0, err))) {
        memset(cnt, 0, u.M * sizeof *cnt);
        if (!run_range(&u, &ra, 0, run->opts.seed, b0, b1, cnt, nthreads))
            st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory for the permutations");
        for (size_t j = 0; j < u.M && !st; j++)
            r->resp[u.mem[j].resp].terms[u.mem[j].term].uv.exceed_perm += cnt[j];
    }
    sturdy_free(cnt);
done:
    sturdy_rearranger_free(&ra);
    uv_run_free(&u);
    return st;
}

