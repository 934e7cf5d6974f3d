/* resistant_perm.c — the p of the outlier-resistant statistic (classical/huber.c) by the
 * run's rearrangements: Freedman & Lane (1983) with the reduced model fitted robustly.
 *
 * For a term, the reduced model's Huber fit on the data (scale σ of the data) gives group
 * values μ_R and residuals r = y − μ_R. Rearrangement b of the run (rearrange.h: the same
 * generator sturdy_pcg_for(seed, PERMUTE, b) or the b-th in enumeration order, within
 * blocks; sign flips under --flip) gives y* = μ_R + P_b r (or μ_R + s_b ∘ r), and the
 * statistic is computed on y* exactly as on the data — its own scale, both fits — so the
 * comparison holds the statistic fixed as a function of the data. Using the robust
 * reduced fit keeps a gross error out of μ_R: it travels with its residual instead.
 * Whatever --method says, this test rearranges the robust reduced model's residuals.
 * Counts are integers summed per thread: every split of the run gives the same bits. */
#include <math.h>
#include <string.h>

#include "core/core.h"
#include "resampling/rearrange.h"
#include "resampling/resampling.h"

typedef struct {
    size_t resp, term;
    double stat;         /* observed statistic (counted when stat* ≥ stat·(1 − tol)) */
    double *mu;          /* K: the robust reduced fit's group values */
    double *v;           /* n: its residuals, in the rearranger's position order */
} rs_member;

typedef struct {
    sturdy_huber_work h;
    uint32_t *lab, *pool, *g;
    signed char *sign;
    double *y;
    uint64_t *exceed;
} rs_work;

static void work_free(rs_work *w)
{
    sturdy_huber_work_free(&w->h);
    sturdy_free(w->lab); sturdy_free(w->pool); sturdy_free(w->g); sturdy_free(w->sign);
    sturdy_free(w->y); sturdy_free(w->exceed);
}

static size_t max_rank(const sturdy_model *m)
{
    size_t r = m->rank;
    for (size_t k = 0; k < m->nterms; k++)
        if (m->terms[k].rank_red > r) r = m->terms[k].rank_red;
    return r;
}

static int work_alloc(size_t n, const sturdy_model *m, size_t M, rs_work *w)
{
    char err[STURDY_ERR_LEN];
    memset(w, 0, sizeof *w);
    if (sturdy_huber_work_alloc(n, m->K, max_rank(m), &w->h, err)) return 0;
    w->lab = sturdy_malloc((n ? n : 1) * sizeof *w->lab);
    w->pool = sturdy_malloc((n ? n : 1) * sizeof *w->pool);
    w->g = sturdy_malloc((n ? n : 1) * sizeof *w->g);
    w->sign = sturdy_malloc(n ? n : 1);
    w->y = sturdy_malloc((n ? n : 1) * sizeof *w->y);
    w->exceed = sturdy_calloc(M ? M : 1, sizeof *w->exceed);
    return w->lab && w->pool && w->g && w->sign && w->y && w->exceed;
}

/* The members (terms with a statistic to resample) and the notes of the others. */
static sturdy_status members(const sturdy_run *run, const sturdy_design *d, sturdy_result *r,
                             rs_member *mem, size_t *M, char *err)
{
    sturdy_status st = STURDY_OK;
    *M = 0;
    for (size_t ri = 0; ri < r->nresp && !st; ri++)
        for (size_t k = 0; k < d->nterms && !st; k++) {
            sturdy_rs_result *rs = &r->resp[ri].terms[k].rs;
            if (isnan(rs->stat)) continue;       /* its note says why (huber.c) */
            if (d->terms[k].kind == STURDY_TERM_BLOCK && !run->opts.flip)
                st = sturdy_note_once(&rs->note, "no resampled p for the block term: "
                                      "rearranging within blocks leaves it unchanged", err);
            else if (run->nperm == 0)
                st = sturdy_note_once(&rs->note, "no rearrangements were asked for", err);
            else
                mem[(*M)++] = (rs_member){ .resp = ri, .term = k, .stat = rs->stat };
        }
    return st;
}

/* Observed reduced fits of the members, as rearrangeable vectors. */
static sturdy_status member_vectors(const sturdy_design *d, const sturdy_model *m,
                                    const sturdy_rearranger *ra, rs_member *mem, size_t M,
                                    rs_work *w, char *err)
{
    size_t n = d->n;
    for (size_t i = 0; i < n; i++) w->g[i] = (uint32_t)d->group[i];
    for (size_t j = 0; j < M; j++) {
        mem[j].mu = sturdy_malloc(m->K * sizeof *mem[j].mu);
        mem[j].v = sturdy_malloc((n ? n : 1) * sizeof *mem[j].v);
        if (!mem[j].mu || !mem[j].v) return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        const double *y = d->y + mem[j].resp * n;
        sturdy_rs_stat s;
        sturdy_rs_statistic(y, w->g, n, m, mem[j].term, &w->h, &s);
        memcpy(mem[j].mu, w->h.mu_red, m->K * sizeof *mem[j].mu);
        for (size_t k = 0; k < n; k++) {
            size_t i = ra->blk_rows[k];
            mem[j].v[k] = y[i] - mem[j].mu[d->group[i]];
        }
    }
    return STURDY_OK;
}

/* Rearrangement b for every member. */
static void one(const sturdy_rearranger *ra, const sturdy_model *m, const rs_member *mem,
                size_t M, int flip, uint64_t b, rs_work *w)
{
    size_t n = ra->d->n;
    sturdy_rearrange(ra, b, w->lab, w->sign, w->pool);
    const uint32_t *lab = flip ? ra->lab0 : w->lab;
    for (size_t j = 0; j < M; j++) {
        for (size_t k = 0; k < n; k++)
            w->y[k] = mem[j].mu[lab[k]] + (flip ? (double)w->sign[k] * mem[j].v[k]
                                                : mem[j].v[k]);
        sturdy_rs_stat s;
        if (sturdy_rs_statistic(w->y, lab, n, m, mem[j].term, &w->h, &s) &&
            s.stat >= mem[j].stat * (1.0 - STURDY_TIE_RTOL))
            w->exceed[j]++;
    }
}

sturdy_status sturdy_rs_run(const sturdy_run *run, const sturdy_design *d,
                            const sturdy_model *m, sturdy_result *r, char *err)
{
    size_t M = 0, n = d->n;
    rs_member *mem = sturdy_calloc(r->nresp * d->nterms + 1, sizeof *mem);
    if (!mem) return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    sturdy_rearranger ra;
    memset(&ra, 0, sizeof ra);
    rs_work w0;
    memset(&w0, 0, sizeof w0);
    sturdy_status st = members(run, d, r, mem, &M, err);
    uint64_t b0 = run->perm_begin, b1 = run->perm_end;
    if (st || M == 0 || b1 <= b0) goto done;
    if ((st = sturdy_rearranger_init(&ra, d, run->opts.flip, run->exact, run->opts.seed, err)))
        goto done;
    if (!work_alloc(n, m, M, &w0)) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    if ((st = member_vectors(d, m, &ra, mem, M, &w0, err))) goto done;
    uint64_t *exceed = w0.exceed;            /* the totals */
    int failed = 0, flip = run->opts.flip;
    int64_t total = (int64_t)(b1 - b0);
#pragma omp parallel num_threads(run->threads)
    {
        rs_work w;
        int ok = work_alloc(n, m, M, &w);
        if (!ok) {
#pragma omp atomic write
            failed = 1;
        }
#pragma omp for schedule(dynamic, 16)
        for (int64_t q = 0; q < total; q++) {
            if (!ok || sturdy_run_cancelled(run)) continue;
            one(&ra, m, mem, M, flip, b0 + (uint64_t)q, &w);
        }
        if (ok) {
#pragma omp critical(sturdy_rs_reduce)
            for (size_t j = 0; j < M; j++) exceed[j] += w.exceed[j];
        }
        work_free(&w);
    }
    if (failed) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory for the resistant test");
    } else if (sturdy_run_cancelled(run)) {
        st = sturdy_fail(err, STURDY_ECANCELLED, "cancelled during the resistant test");
    } else {
        for (size_t j = 0; j < M; j++) r->resp[mem[j].resp].terms[mem[j].term].rs.exceed +=
                                           exceed[j];
    }
done:
    for (size_t j = 0; j < M; j++) {
        sturdy_free(mem[j].mu);
        sturdy_free(mem[j].v);
    }
    sturdy_free(mem);
    work_free(&w0);
    sturdy_rearranger_free(&ra);
    return st;
}

/* How far apart two p-values are, in factors of ten. */
static double decades(double a, double b)
{
    return fabs(log10(fmax(a, 1e-300)) - log10(fmax(b, 1e-300)));
}

void sturdy_rs_finish(const sturdy_result *r, const sturdy_response_result *resp,
                      sturdy_term_result *t)
{
    sturdy_rs_result *rs = &t->rs;
    rs->disagrees = 0;
    if (isnan(rs->stat) || rs->note || r->nperm == 0) return;
    double B = (double)r->nperm;
    if (r->exact) {
        rs->p_perm = (double)rs->exceed / B;
        rs->p_perm_ci.lo = rs->p_perm_ci.hi = rs->p_perm;
    } else {
        rs->p_perm = (1.0 + (double)rs->exceed) / (1.0 + B);
        sturdy_clopper_pearson(rs->exceed, r->nperm, 0.99, &rs->p_perm_ci.lo,
                               &rs->p_perm_ci.hi);
    }
    double a = r->opts.alpha;
    if (isnan(t->p) || isnan(t->p_perm)) return;
    int sig = rs->p_perm <= a, sig_f = t->p <= a, sig_p = t->p_perm <= a;
    rs->disagrees = sig_f == sig_p && sig != sig_f && resp->diag.noutliers > 0 &&
                    decades(rs->p_perm, t->p) >= 1.0 && decades(rs->p_perm, t->p_perm) >= 1.0;
}
