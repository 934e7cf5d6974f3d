/* without.c — the sensitivity stage: the single-row search of every term on the run's
 * threads, then the resampling test of each term on the data without its deciding rows
 * (sensitivity.p_perm_without): the greedy search of checks/influence.c finds the fewest
 * rows whose removal changes a term's F-test conclusion; this file confirms that set with
 * the run's own resampling test.
 *
 * "The same rearrangements" means the same generators: rearrangement b of the data without
 * the rows is drawn from sturdy_pcg_for(seed, PERMUTE, b) (rearrange.h) for b in the run's
 * slice, over the n − |S| rows left (within their blocks; sign flips likewise), with the
 * run's method. So every split of the run — threads, shards, MPI ranks — counts the same
 * exceedances and adds them like the main counts (sturdy_slice.exceed_without); merge and
 * a single run give the same bits. When the run enumerated every rearrangement of all n
 * rows, the data without the rows have other rearrangements and the test is not run.
 *
 * The data without the rows are built the plain way: the rows are marked missing in the
 * response columns of a shallow copy of the table and the design, the model and the
 * classical table are rebuilt (the refitted F must equal the deletion formula's, which the
 * tests check). Terms whose sets are the same rows share one pass. Cost: one rearrangement
 * pass per distinct set over the run's slice, each about the cost of the main pass for one
 * term (README states it measured). */
#include <math.h>
#include <string.h>

#include "analysis/without.h"
#include "checks/checks.h"
#include "classical/classical.h"
#include "core/core.h"
#include "input/table_layout.h"
#include "model/build.h"
#include "resampling/resampling.h"

/* Each term's search reads the fit and writes its own result only, so the threads change
 * nothing but the time (f5_20k: 31 terms, 0.72 G instructions). The first failure in
 * (response, term) order is the one reported. */
sturdy_status sturdy_sensitivity_all(const sturdy_design *d, const sturdy_model *m,
                                     const sturdy_run *run, sturdy_result *r, char *err)
{
    size_t nt = d->nterms, total = d->nresp * nt;
    sturdy_status *sts = sturdy_calloc(total + 1, sizeof *sts);
    char *msgs = sturdy_malloc((total + 1) * STURDY_ERR_LEN);
    if (!sts || !msgs) {
        sturdy_free(sts);
        sturdy_free(msgs);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    int threads = run->threads > 1 ? run->threads : 1;
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
    for (size_t j = 0; j < total; j++) {
        size_t ri = j / nt, k = j % nt;
        msgs[j * STURDY_ERR_LEN] = '\0';
        sts[j] = k < r->resp[ri].nterms
                     ? sturdy_sensitivity_term(d, m, ri, k, run->opts.alpha, &r->resp[ri],
                                               &r->resp[ri].terms[k], msgs + j * STURDY_ERR_LEN)
                     : STURDY_OK;
    }
    sturdy_status st = STURDY_OK;
    for (size_t j = 0; j < total && !st; j++)
        if ((st = sts[j]))
            sturdy_fail(err, st, "%s", msgs + j * STURDY_ERR_LEN);
    sturdy_free(sts);
    sturdy_free(msgs);
    return st;
}

/* Are the sets of terms a and b the same rows (in any order)? */
static int same_set(const sturdy_sensitivity *a, const sturdy_sensitivity *b)
{
    if (a->nrows != b->nrows) return 0;
    for (size_t i = 0; i < a->nrows; i++) {
        int found = 0;
        for (size_t j = 0; j < b->nrows; j++) found |= a->rows[i].row == b->rows[j].row;
        if (!found) return 0;
    }
    return 1;
}

/* A shallow copy of t whose response columns mark the set's rows missing; *masks holds
 * the new flag arrays (nresp, owned by the caller with the copy's cols). */
static sturdy_status masked_table(const sturdy_table *t, const sturdy_design *d,
                                  const sturdy_sensitivity *sv, sturdy_table *out,
                                  unsigned char **masks, char *err)
{
    *out = *t;
    out->cols = sturdy_malloc(t->ncols * sizeof *out->cols);
    if (!out->cols) return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    memcpy(out->cols, t->cols, t->ncols * sizeof *out->cols);
    for (size_t ri = 0; ri < d->nresp; ri++) {
        size_t c = 0;
        while (c < t->ncols && strcmp(t->cols[c].name, d->resp_names[ri])) c++;
        if (c == t->ncols)
            return sturdy_fail(err, STURDY_EINTERNAL, "response column '%s' not in the table",
                               d->resp_names[ri]);
        if (!(masks[ri] = sturdy_malloc(t->nrows ? t->nrows : 1)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        memcpy(masks[ri], out->cols[c].missing, t->nrows);
        for (size_t j = 0; j < sv->nrows; j++) masks[ri][sv->rows[j].row - 1] = 1;
        out->cols[c].missing = masks[ri];
    }
    return STURDY_OK;
}

/* One distinct set and its re-test: the terms in `members` (flags over nresp × nterms)
 * share it. */
typedef struct {
    const sturdy_sensitivity *sv;
    unsigned char *members;
    sturdy_table tc;             /* the table with the set's rows marked missing */
    unsigned char **masks;       /* its response columns' missing flags (nresp) */
    sturdy_result *w;            /* the data without the rows: design, classical table */
    sturdy_model *m;
    int usable;                  /* a design of the same shape: the test is run */
    sturdy_status st;
    char err[STURDY_ERR_LEN];
} retest;

static void retest_release(const sturdy_design *d, retest *rt)
{
    sturdy_model_free(rt->m);
    sturdy_result_free(rt->w);
    for (size_t ri = 0; rt->masks && ri < d->nresp; ri++) sturdy_free(rt->masks[ri]);
    sturdy_free(rt->masks);
    sturdy_free(rt->tc.cols);
    sturdy_free(rt->members);
    rt->m = NULL;
    rt->w = NULL;
    rt->masks = NULL;
    rt->tc.cols = NULL;
    rt->members = NULL;
}

/* The data without the set's rows, built the plain way, and its classical table; notes
 * on the members' sensitivity whether they are tested. Writes only the members' results,
 * so the sets of a wave are prepared side by side; the model's terms are built on
 * `threads` threads (those the wave leaves to each set). Sets rt->st (and rt->err). */
static void retest_prepare(const sturdy_table *t, const sturdy_run *run, sturdy_result *r,
                           retest *rt, int threads)
{
    const sturdy_design *d = r->design;
    size_t nt = d->nterms;
    const unsigned char *members = rt->members;
    char *err = rt->err;
    rt->masks = sturdy_calloc(d->nresp, sizeof *rt->masks);
    rt->w = sturdy_calloc(1, sizeof *rt->w);
    if (!rt->masks || !rt->w) {
        rt->st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        return;
    }
    sturdy_result *w = rt->w;
    w->opts = run->opts;
    if ((rt->st = masked_table(t, d, rt->sv, &rt->tc, rt->masks, err))) return;
    /* a design that fails or differs in shape is "no test"; out of memory is a failure */
    char msg[STURDY_ERR_LEN];
    sturdy_status bst = sturdy_design_build(&rt->tc, &run->opts.model, &w->design, msg);
    if (!bst) bst = sturdy_model_build_on(w->design, run->opts.ss_type, threads, &rt->m, msg);
    if (bst == STURDY_EINTERNAL) {
        rt->st = sturdy_fail(err, bst, "%s", msg);
        return;
    }
    rt->usable = !bst && w->design->n + rt->sv->nrows == d->n && w->design->nterms == nt;
    if (!rt->usable) {
        for (size_t j = 0; j < d->nresp * nt; j++)
            if (members[j]) r->resp[j / nt].terms[j % nt].sens.perm_state =
                                STURDY_SENS_PERM_NO_TEST;
        return;
    }
    w->nresp = d->nresp;
    if (!(w->resp = sturdy_calloc(d->nresp, sizeof *w->resp))) {
        rt->st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        return;
    }
    for (size_t ri = 0; ri < d->nresp && !rt->st; ri++)
        rt->st = sturdy_anova_response(w->design, rt->m, ri, run->opts.conf, run->threads,
                                       &w->resp[ri], err);
    if (rt->st) return;
    /* only the set's terms are members of the pass (permute.c skips a term without F) */
    for (size_t ri = 0; ri < d->nresp; ri++)
        for (size_t k = 0; k < nt; k++) {
            sturdy_term_result *wt = &w->resp[ri].terms[k];
            sturdy_sensitivity *tsv = &r->resp[ri].terms[k].sens;
            if (!members[ri * nt + k]) {
                wt->f = NAN;
                continue;
            }
            tsv->f_refit = wt->f;
            /* a term the run does not resample (the block term, rearranged within
               blocks; permute.c notes why) has no resampled p without the rows either */
            int tested = wt->f >= 0 && !r->resp[ri].terms[k].perm_note;
            tsv->perm_state = tested ? STURDY_SENS_PERM_DONE : STURDY_SENS_PERM_NO_TEST;
            if (!tested) wt->f = NAN;
        }
}

/* The re-test's resampling pass over the run's slice (on the run's threads), its counts
 * added to the members' exceed_without. */
static sturdy_status retest_pass(const sturdy_run *run, sturdy_result *r, retest *rt,
                                 char *err)
{
    const sturdy_design *d = r->design;
    size_t nt = d->nterms;
    if (!rt->usable)
        return STURDY_OK;
    sturdy_run sub = *run;
    sub.exact = 0;               /* drawn from the run's streams, never enumerated */
    sub.progress = NULL;
    sub.opts.tail_fit = 0;       /* only the counts are used here */
    /* every rearrangement the run made: p_perm_without = (1 + count) / (1 + B) is over
       all of them (under --stop-early B is the rearrangements the main pass made); a
       re-test stopped at its h-th exceedance would count h of far fewer */
    sub.opts.stop_early = 0;
    sturdy_status st;
    if (run->perm_end > run->perm_begin &&
        (st = sturdy_permute_run(&sub, rt->w->design, rt->m, rt->w, err)))
        return st;
    for (size_t ri = 0; ri < d->nresp; ri++)
        for (size_t k = 0; k < nt; k++)
            if (rt->members[ri * nt + k] &&
                r->resp[ri].terms[k].sens.perm_state == STURDY_SENS_PERM_DONE)
                r->resp[ri].terms[k].sens.exceed_without += rt->w->resp[ri].terms[k].exceed;
    return STURDY_OK;
}

sturdy_status sturdy_without_run(const sturdy_table *t, const sturdy_run *run,
                                 sturdy_result *r, char *err)
{
    const sturdy_design *d = r->design;
    size_t nt = d->nterms, total = d->nresp * nt, nsets = 0;
    unsigned char *done = sturdy_calloc(total + 1, 1);
    retest *sets = sturdy_calloc(total + 1, sizeof *sets);
    sturdy_status st = STURDY_OK;
    if (!done || !sets) st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    /* the distinct sets, in (response, term) order of their first member */
    for (size_t j = 0; j < total && !st; j++) {
        sturdy_sensitivity *sv = &r->resp[j / nt].terms[j % nt].sens;
        if (done[j] || !sv->searched || sv->nrows == 0) continue;
        if (run->nperm == 0 || run->exact) {
            sv->perm_state = run->nperm == 0 ? STURDY_SENS_PERM_NO_REARRANGEMENTS
                                             : STURDY_SENS_PERM_EXACT;
            continue;
        }
        retest *rt = &sets[nsets++];
        rt->sv = sv;
        if (!(rt->members = sturdy_calloc(total + 1, 1))) {
            st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
            break;
        }
        for (size_t q = j; q < total; q++) {
            const sturdy_sensitivity *o = &r->resp[q / nt].terms[q % nt].sens;
            if (!done[q] && o->searched && o->nrows && same_set(sv, o))
                rt->members[q] = done[q] = 1;
        }
    }
    /* in waves of one set per thread: the sets of a wave are prepared side by side (the
       refit of a large design is serial work: f5_20k's, 0.43 G instructions each), then
       their passes run one after the other, each on all the threads; at most one wave's
       models are held at once */
    size_t wave = run->threads > 1 ? (size_t)run->threads : 1;
    for (size_t w0 = 0; w0 < nsets && !st; w0 += wave) {
        size_t w1 = w0 + wave < nsets ? w0 + wave : nsets;
        int inner = (int)(wave / (w1 - w0));   /* a short last wave: threads per set */
#pragma omp parallel for schedule(dynamic, 1) num_threads((int)(w1 - w0))
        for (size_t i = w0; i < w1; i++)
            retest_prepare(t, run, r, &sets[i], inner);
        for (size_t i = w0; i < w1 && !st; i++)
            if ((st = sets[i].st))
                sturdy_fail(err, st, "%s", sets[i].err);
        for (size_t i = w0; i < w1 && !st; i++)
            st = retest_pass(run, r, &sets[i], err);
        for (size_t i = w0; i < w1; i++)
            retest_release(d, &sets[i]);
    }
    for (size_t i = 0; i < nsets; i++)
        retest_release(d, &sets[i]);
    sturdy_free(done);
    sturdy_free(sets);
    return st;
}

void sturdy_without_finish(sturdy_result *r)
{
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t k = 0; k < r->resp[ri].nterms; k++) {
            sturdy_sensitivity *sv = &r->resp[ri].terms[k].sens;
            sv->p_perm_without = sv->perm_state == STURDY_SENS_PERM_DONE
                                     ? (1.0 + (double)sv->exceed_without) /
                                           (1.0 + (double)r->nperm)
                                     : NAN;
        }
}

const char *sturdy_without_note(int state)
{
    switch (state) {
    case STURDY_SENS_PERM_DONE:
        return "p_perm_without: the run's resampling test (the same generators for "
               "rearrangement b) on the data without the rows";
    case STURDY_SENS_PERM_NO_REARRANGEMENTS:
        return "p_perm_without is null: the run has no rearrangements";
    case STURDY_SENS_PERM_EXACT:
        return "p_perm_without is null: the run enumerated every rearrangement of all rows, "
               "and the data without the rows have other rearrangements";
    case STURDY_SENS_PERM_NO_TEST:
        return "p_perm_without is null: the term has no resampling test (the block term "
               "under rearrangements within blocks), or none without the rows";
    default:
        return NULL;
    }
}
