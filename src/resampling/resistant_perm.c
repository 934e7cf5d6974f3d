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

/* Observed reduced fit of member j, as a rearrangeable vector (Ured: the basis of its
 * term's reduced model). */
static sturdy_status member_vector(const sturdy_design *d, const sturdy_model *m,
                                   const sturdy_rearranger *ra, rs_member *mb,
                                   const double *Ured, size_t rred, rs_work *w, char *err)
{
    size_t n = d->n;
    for (size_t i = 0; i < n; i++) w->g[i] = (uint32_t)d->group[i];
    mb->mu = sturdy_malloc(m->K * sizeof *mb->mu);
    mb->v = sturdy_malloc((n ? n : 1) * sizeof *mb->v);
    if (!mb->mu || !mb->v) return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    const double *y = d->y + mb->resp * n;
    sturdy_rs_stat s;
    sturdy_rs_statistic(y, w->g, n, m, Ured, rred, &w->h, &s);
    memcpy(mb->mu, w->h.mu_red, m->K * sizeof *mb->mu);
    for (size_t k = 0; k < n; k++) {
        size_t i = ra->blk_rows[k];
        mb->v[k] = y[i] - mb->mu[d->group[i]];
    }
    return STURDY_OK;
}

/* Rearrangement b for the members of one term (sel: their indices, ns of them). */
static void one(const sturdy_rearranger *ra, const sturdy_model *m, const rs_member *mem,
                const size_t *sel, size_t ns, const double *Ured, size_t rred, int flip,
                uint64_t b, rs_work *w)
{
    size_t n = ra->d->n;
    sturdy_rearrange(ra, b, w->lab, w->sign, w->pool);
    const uint32_t *lab = flip ? ra->lab0 : w->lab;
    for (size_t q = 0; q < ns; q++) {
        size_t j = sel[q];
        for (size_t k = 0; k < n; k++)
            w->y[k] = mem[j].mu[lab[k]] + (flip ? (double)w->sign[k] * mem[j].v[k]
                                                : mem[j].v[k]);
        sturdy_rs_stat s;
        if (sturdy_rs_statistic(w->y, lab, n, m, Ured, rred, &w->h, &s) &&
            s.stat >= mem[j].stat * (1.0 - STURDY_TIE_RTOL))
            w->exceed[j]++;
    }
}

/* The rearrangements [b0, b0 + total) for the members sel (all of one term): their
 * counts are added to exceed. 0, or -1 when a thread's work could not be allocated. */
static int run_term(const sturdy_run *run, const sturdy_rearranger *ra,
                    const sturdy_model *m, const rs_member *mem, size_t M, const size_t *sel,
                    size_t ns, const double *Ured, size_t rred, uint64_t b0, int64_t total,
                    uint64_t *exceed)
{
    size_t n = ra->d->n;
    int failed = 0, flip = run->opts.flip;
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
            one(ra, m, mem, sel, ns, Ured, rred, flip, b0 + (uint64_t)q, &w);
        }
        if (ok) {
#pragma omp critical(sturdy_rs_reduce)
            for (size_t q = 0; q < ns; q++) exceed[sel[q]] += w.exceed[sel[q]];
        }
        work_free(&w);
    }
    return failed ? -1 : 0;
}

sturdy_status sturdy_rs_run(const sturdy_run *run, const sturdy_design *d,
                            const sturdy_model *m, sturdy_result *r, char *err)
{
    size_t M = 0, n = d->n;
    rs_member *mem = sturdy_calloc(r->nresp * d->nterms + 1, sizeof *mem);
    size_t *sel = sturdy_malloc((r->nresp * d->nterms + 1) * sizeof *sel);
    if (!mem || !sel) {
        sturdy_free(mem);
        sturdy_free(sel);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    sturdy_rearranger ra;
    memset(&ra, 0, sizeof ra);
    rs_work w0;
    memset(&w0, 0, sizeof w0);
    double *Ured = NULL;
    sturdy_status st = members(run, d, r, mem, &M, err);
    uint64_t b0 = run->perm_begin, b1 = run->perm_end;
    if (st || M == 0 || b1 <= b0) goto done;
    if ((st = sturdy_rearranger_init(&ra, d, run->opts.flip, run->exact, run->opts.seed, err)))
        goto done;
    if (!work_alloc(n, m, M, &w0)) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    uint64_t *exceed = w0.exceed;            /* the totals */
    int64_t total = (int64_t)(b1 - b0);
    /* one term at a time: its reduced model's basis exists only while its members run
     * (the model keeps the smaller form, fit.h); the counts of every (member,
     * rearrangement) are the same in any order */
    for (size_t t = 0; t < d->nterms && !st; t++) {
        size_t ns = 0, rred = 0;
        for (size_t j = 0; j < M; j++)
            if (mem[j].term == t) sel[ns++] = j;
        if (ns == 0) continue;
        if ((st = sturdy_model_reduced_basis(d, m, t, &Ured, &rred, err))) break;
        for (size_t q = 0; q < ns && !st; q++)
            st = member_vector(d, m, &ra, &mem[sel[q]], Ured, rred, &w0, err);
        if (st) break;
        if (run_term(run, &ra, m, mem, M, sel, ns, Ured, rred, b0, total, exceed)) {
            st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory for the resistant test");
        } else if (sturdy_run_cancelled(run)) {
            st = sturdy_fail(err, STURDY_ECANCELLED, "cancelled during the resistant test");
        }
        sturdy_free(Ured);
        Ured = NULL;
    }
    if (!st)
        for (size_t j = 0; j < M; j++) r->resp[mem[j].resp].terms[mem[j].term].rs.exceed +=
                                           exceed[j];
done:
    for (size_t j = 0; j < M; j++) {
        sturdy_free(mem[j].mu);
        sturdy_free(mem[j].v);
    }
    sturdy_free(Ured);
    sturdy_free(mem);
    sturdy_free(sel);
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
