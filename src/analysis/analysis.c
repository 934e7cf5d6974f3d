/* analysis.c — the options, and the stages of a check run in order; finish.c turns the
 * resampling counts and replicates into p-values, intervals and verdicts. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/stages.h"
#include "analysis/without.h"
#include "model/build.h"
#include "resampling/bootcmp.h"
#include "checks/checks.h"
#include "classical/classical.h"
#include "resampling/resampling.h"
#include "resampling/tail.h"
#include "core/core.h"
#include "input/table_layout.h"
#include "sturdy/dist.h"
#include "sturdy/pcg.h"
#ifdef _OPENMP
#include <omp.h>
#endif

void sturdy_options_init(sturdy_options *o)
{
    memset(o, 0, sizeof *o);
    sturdy_model_spec_init(&o->model);
    o->ss_type = 3;
    o->permutations = 9999;
    o->bootstrap = 2000;
    o->method = STURDY_METHOD_FREEDMAN_LANE;
    o->boot_scheme = STURDY_BOOT_DEFAULT;
    o->conf = 0.95;
    o->alpha = 0.05;
    o->seed = STURDY_DEFAULT_SEED;
    o->resample = 1;
}

void sturdy_context_init(sturdy_context *c)
{
    memset(c, 0, sizeof *c);
}

int sturdy_context_threads(const sturdy_context *c)
{
#ifdef _OPENMP
    return c && c->threads > 0 ? c->threads : omp_get_max_threads();
#else
    (void)c;
    return 1;
#endif
}

sturdy_status sturdy_options_validate(const sturdy_options *o, char *err)
{
    if (o->ss_type < 1 || o->ss_type > 3)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the type of sums of squares must be 1, 2 or 3 (got %d)", o->ss_type);
    if (!(o->conf > 0 && o->conf < 1))
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the confidence level must lie strictly between 0 and 1");
    if (!(o->alpha > 0 && o->alpha < 1))
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the significance level alpha must lie strictly between 0 and 1");
    if (o->method < STURDY_METHOD_FREEDMAN_LANE || o->method > STURDY_METHOD_RAW)
        return sturdy_fail(err, STURDY_EUSAGE, "unknown resampling method");
    if (o->boot_scheme < STURDY_BOOT_DEFAULT || o->boot_scheme > STURDY_BOOT_CELLS)
        return sturdy_fail(err, STURDY_EUSAGE, "unknown bootstrap scheme");
    if (o->spread_scheme < STURDY_SPREAD_NONE || o->spread_scheme > STURDY_SPREAD_PERMUTATION)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "unknown resampling scheme for the unequal-variance test");
    if (o->permutations > (uint64_t)1 << 40)
        return sturdy_fail(err, STURDY_EUSAGE, "the number of rearrangements is larger than 2^40");
    if (o->bootstrap > (uint64_t)1 << 28)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the number of bootstrap replicates is larger than 2^28");
    if (o->bootstrap == 1)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the bootstrap needs at least 2 replicates (or 0 for none)");
    if (o->shard_count == 0 ? o->shard_index != 0
                            : (o->shard_index < 1 || o->shard_index > o->shard_count))
        return sturdy_fail(err, STURDY_EUSAGE, "shard I of N needs 1 ≤ I ≤ N");
    if (o->model.order < 0)
        return sturdy_fail(err, STURDY_EUSAGE, "the interaction order must be 0 (all) or more");
    /* where the whole run stops depends on every earlier rearrangement's counts, which a
       shard (or an MPI rank) does not see: sequential stopping is for whole runs */
    if (o->stop_early && o->shard_count)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "--stop-early needs the whole run in one process: it cannot be "
                           "combined with shards (--shard) or MPI ranks, whose slices do not "
                           "see the counts that decide where the run stops");
    return STURDY_OK;
}

/* [lo, hi) of slice i (1-based) of n over total items: an even split. */
static void slice_range(uint64_t total, uint64_t i, uint64_t n, uint64_t *lo, uint64_t *hi)
{
    assert(n == 0 || (i >= 1 && i <= n));   /* sturdy_options_validate */
    if (n == 0) {
        *lo = 0;
        *hi = total;
        return;
    }
    *lo = (uint64_t)((sturdy_u128)total * (i - 1) / n);
    *hi = (uint64_t)((sturdy_u128)total * i / n);
}

/* FNV-1a (Fowler, Noll & Vo) over the used columns' names and text, so that shards of
 * different data are told apart. */
static uint64_t data_checksum(const sturdy_table *t, const sturdy_design *d)
{
    uint64_t h = 1469598103934665603ull;
    const unsigned char sep = 0x1f;
    for (size_t c = 0; c < t->ncols; c++) {
        const char *name = t->cols[c].name;
        int used = 0;
        for (size_t r = 0; r < d->nresp; r++) used |= !strcmp(name, d->resp_names[r]);
        for (size_t f = 0; f < d->nfactors; f++) used |= !strcmp(name, d->factors[f].name);
        for (size_t k = 0; k < d->ncov; k++) used |= !strcmp(name, d->cov_names[k]);
        if (d->has_block) used |= !strcmp(name, d->block.name);
        if (!used)
            continue;
        for (size_t i = 0; i <= t->nrows; i++) {
            const char *s = i == 0 ? name : t->cols[c].text[i - 1];
            for (; *s; s++) {
                h ^= (unsigned char)*s;
                h *= 1099511628211ull;
            }
            h ^= sep;
            h *= 1099511628211ull;
        }
    }
    return h;
}

static sturdy_status add_note(sturdy_result *r, char *text, char *err)
{
    if (!text)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    char **n = sturdy_realloc(r->notes, (r->nnotes + 1) * sizeof *n);
    if (!n) {
        sturdy_free(text);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    r->notes = n;
    r->notes[r->nnotes++] = text;
    return STURDY_OK;
}

static sturdy_status run_notes(sturdy_result *r, char *err)
{
    const sturdy_design *d = r->design;
    sturdy_status st = STURDY_OK;
    if (r->nboot && r->opts.boot_scheme == STURDY_BOOT_CELLS &&
        d->min_cell < STURDY_CELLS_WARN_ROWS)
        st = add_note(r, sturdy_asprintf(
            "the cells bootstrap resamples rows within cells; with only %zu rows in the "
            "smallest cell it shrinks the error variance by (n-1)/n and its intervals are "
            "biased; prefer the residual scheme", d->min_cell), err);
    if (!st && r->exact)
        st = add_note(r, sturdy_asprintf(
            "all %llu distinct rearrangements were enumerated, so the permutation p-values "
            "are exact (no Monte Carlo error)", (unsigned long long)r->nperm), err);
    if (!st && d->ncells < d->ncells_possible)
        st = add_note(r, sturdy_asprintf(
            "%zu of the %zu possible cells %s empty", d->ncells_possible - d->ncells,
            d->ncells_possible, d->ncells_possible - d->ncells == 1 ? "is" : "are"), err);
    if (!st && d->has_block && !r->opts.flip && r->nperm)
        st = add_note(r, sturdy_asprintf(
            "rows are rearranged only within levels of the block '%s'", d->block.name), err);
    /* rearrange.c: sign flips are drawn row by row over one block */
    if (!st && d->has_block && r->opts.flip && r->nperm)
        st = add_note(r, sturdy_asprintf(
            "signs are flipped row by row: the block '%s' does not restrict the flips, so "
            "its term is tested like any other", d->block.name), err);
    return st;
}

size_t sturdy_result_tested_terms(const sturdy_result *r)
{
    size_t n = 0;
    for (size_t i = 0; r && i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++)
            n += isfinite(r->resp[i].terms[k].f) != 0;
    return n;
}

const char *sturdy_result_untested_reason(const sturdy_result *r)
{
    for (size_t i = 0; r && i < r->nresp; i++)
        if (r->resp[i].error_note) return r->resp[i].error_note;
    for (size_t i = 0; r && i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++)
            if (r->resp[i].terms[k].note) return r->resp[i].terms[k].note;
    return "no term has an F-test";
}

void sturdy_result_free(sturdy_result *r)
{
    if (!r)
        return;
    /* counts may be set before their arrays (an allocation failed in between) */
    for (size_t ri = 0; r->resp && ri < r->nresp; ri++) {
        sturdy_response_result *rr = &r->resp[ri];
        for (size_t t = 0; rr->terms && t < rr->nterms; t++) {
            sturdy_term_result *tr = &rr->terms[t];
            sturdy_free(tr->label);
            for (size_t f = 0; tr->factors && f < tr->nfactors; f++)
                sturdy_free(tr->factors[f]);
            sturdy_free(tr->factors);
            sturdy_free(tr->note);
            sturdy_free(tr->perm_note);
            sturdy_free(tr->boot);
            sturdy_free(tr->boot_note);
            sturdy_free(tr->ci_note);
            for (int e = 0; e < STURDY_NES; e++)
                sturdy_free(tr->ci_rec_reason[e]);
            sturdy_free(tr->verdict_reason);
            sturdy_free(tr->uv.note);
            sturdy_free(tr->uv.perm_note);
            sturdy_free(tr->rs.note);
        }
        sturdy_free(rr->terms);
        for (size_t i = 0; rr->means && i < rr->nmeans; i++) {
            sturdy_free(rr->means[i].note);
            sturdy_free(rr->means[i].w);
        }
        sturdy_free(rr->cmp_boot);
        sturdy_free(rr->cmp_boot_note);
        sturdy_free(rr->cmp_wt);
        sturdy_free(rr->cmp_init);
        sturdy_free(rr->cmp_z2t);
        sturdy_free(rr->means);
        for (size_t i = 0; rr->comparisons && i < rr->ncomparisons; i++) {
            sturdy_free(rr->comparisons[i].note);
            sturdy_free(rr->comparisons[i].perm_note);
            sturdy_free(rr->comparisons[i].w);
        }
        sturdy_free(rr->comparisons);
        sturdy_free(rr->compare_shown);
        sturdy_free(rr->rb_means);
        sturdy_free(rr->rb_comparisons);
        sturdy_free(rr->name);
        sturdy_free(rr->error_note);
        sturdy_free(rr->cell_mean);
        sturdy_free(rr->cell_sd);
        sturdy_free(rr->fitted);
        sturdy_free(rr->residual);
        sturdy_free(rr->diag.sw_note);
        sturdy_free(rr->diag.bf_note);
        sturdy_free(rr->diag.bfm_note);
        sturdy_free(rr->diag.vr_note);
        sturdy_free(rr->diag.spread_reason);
        sturdy_free(rr->diag.outliers);
        sturdy_free(rr->diag.large);
        sturdy_free(rr->diag.studentized);
        sturdy_free(rr->diag.leverage);
    }
    sturdy_free(r->resp);
    for (size_t i = 0; i < r->nnotes; i++)
        sturdy_free(r->notes[i]);
    sturdy_free(r->notes);
    sturdy_design_free(r->design);
    sturdy_free(r->input);
    for (size_t i = 0; i < r->nowned; i++)
        sturdy_free(r->owned[i]);
    sturdy_free(r->owned);
    sturdy_free(r);
}

/* Design, model and classical table of every response, with the design's and the
 * model's notes; *m owned by the caller on success. */
static sturdy_status classical_stage(const sturdy_table *t, const sturdy_run *run,
                                     sturdy_result *r, sturdy_model **m, char *err)
{
    sturdy_status st;
    const sturdy_options *o = &run->opts;
    if ((st = sturdy_design_build(t, &o->model, &r->design, err)))
        return st;
    const sturdy_design *d = r->design;
    /* the warnings about levels lead the notes (the text report also shows them under
       its headline) */
    for (size_t i = 0; i < d->nwarnings && !st; i++)
        st = add_note(r, sturdy_strdup(d->warnings[i]), err);
    if (st)
        return st;
    if (o->boot_scheme == STURDY_BOOT_CELLS && d->ncov > 0)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the cells bootstrap needs a model without covariates (rows are "
                           "resampled within cells); use the residual or wild scheme");
    if ((st = sturdy_model_build_on(d, o->ss_type, run->threads, m, err)))
        return st;
    r->nresp = d->nresp;
    r->resp = sturdy_calloc(d->nresp, sizeof *r->resp);
    if (!r->resp)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    r->uv_hc3 = sturdy_uv_uses_hc3(d);
    for (size_t ri = 0; ri < d->nresp && !st; ri++)
        if (!(st = sturdy_anova_response(d, *m, ri, o->conf, run->threads, &r->resp[ri], err)) &&
            !(st = sturdy_uv_response(d, *m, ri, &r->resp[ri], err)) && o->resistant)
            st = sturdy_rs_response(d, *m, ri, &r->resp[ri], err);
    for (size_t k = 0; k < d->nterms && !st; k++) {
        const sturdy_term_basis *tb = &(*m)->terms[k];
        if (tb->deficient && tb->testable && tb->why_short)
            st = add_note(r, sturdy_strdup(tb->why_short), err);
    }
    return st;
}

/* The run's counts and this run's slice of them, resolved once from the options and the
 * design; copied into the result for its readers. */
static sturdy_status plan_resampling(const sturdy_table *t, const sturdy_model *m,
                                     sturdy_run *run, sturdy_result *r, char *err)
{
    const sturdy_options *o = &run->opts;
    const sturdy_design *d = r->design;
    uint64_t count;
    sturdy_status st = sturdy_permute_count(d, o->flip, &count, err);
    if (st)
        return st;
    run->exact = o->permutations > 0 && count <= o->permutations;
    run->nperm = run->exact ? count : o->permutations;
    run->nboot = m->df_error > 0 ? o->bootstrap : 0;
    if (o->resample) {
        slice_range(run->nperm, o->shard_index, o->shard_count, &run->perm_begin,
                    &run->perm_end);
        slice_range(run->nboot, o->shard_index, o->shard_count, &run->boot_begin,
                    &run->boot_end);
    }
    r->exact = run->exact;
    r->nperm = run->nperm;
    r->nperm_asked = run->nperm;
    r->nboot = run->nboot;
    r->perm_begin = run->perm_begin;
    r->perm_end = run->perm_end;
    r->boot_begin = run->boot_begin;
    r->boot_end = run->boot_end;
    r->data_checksum = data_checksum(t, d);
    assert(run->perm_begin <= run->perm_end && run->perm_end <= run->nperm);
    assert(run->boot_begin <= run->boot_end && run->boot_end <= run->nboot);
    return STURDY_OK;
}

/* --stop-early: the stages after the permutation tests (unequal-variance, resistant and
 * without-rows counts, and the max-T and family-wise counts already made) use the
 * rearrangements the permutation stage made, [0, perm_stop): the run's B becomes that. */
static sturdy_status stop_early_apply(sturdy_run *run, sturdy_result *r, char *err)
{
    if (run->opts.stop_early && run->exact)
        return add_note(r, sturdy_asprintf("--stop-early has no effect: every rearrangement "
                                           "was enumerated, so nothing is left to chance"),
                        err);
    if (!run->opts.stop_early || run->nperm == 0)
        return STURDY_OK;
    assert(run->perm_begin == 0 && run->perm_end == run->nperm);
    if (r->perm_stop > 0 && r->perm_stop < run->nperm)
        run->nperm = run->perm_end = r->nperm = r->perm_end = r->perm_stop;
    size_t stopped = 0, decided = 0, tested = 0;
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < r->resp[ri].nterms; t++) {
            const sturdy_term_result *tr = &r->resp[ri].terms[t];
            tested += tr->perm_used > 0;
            stopped += tr->stopped_early == STURDY_SEQ_EXCEEDANCES;
            decided += tr->stopped_early == STURDY_SEQ_DECIDED;
        }
    return add_note(r, sturdy_asprintf(
        "sequential stopping: of %zu tested terms, %zu stopped at their %dth rearrangement "
        "at least as extreme as the data (Besag & Clifford 1991; p = %d/L) and %zu once "
        "p <= %g was settled (a Clopper-Pearson bound below %g at a checkpoint, with a "
        "risk of at most %g that a term whose p is %g or more is stopped so; p = (1 + e)/"
        "(1 + L)); the run made %llu of the %llu rearrangements asked for, which the "
        "family-wise and max-T adjustments, the F* distribution and the other resampled "
        "tests use",
        tested, stopped, STURDY_STOP_EARLY_H, STURDY_STOP_EARLY_H, decided, run->opts.alpha,
        run->opts.alpha, STURDY_STOP_EARLY_RISK, run->opts.alpha,
        (unsigned long long)r->nperm, (unsigned long long)r->nperm_asked), err);
}

static sturdy_status analyze(const sturdy_table *t, sturdy_run *run, sturdy_result *r,
                             char *err)
{
    sturdy_model *m = NULL;
    sturdy_status st = classical_stage(t, run, r, &m, err);
    if (!st && !(st = plan_resampling(t, m, run, r, err))) {
        const sturdy_design *d = r->design;
        /* the diagnostics (whose spread rule picks the comparisons' adjustment) and the
           comparisons (whose contrasts the permutation engine rearranges for max-T) need
           only the classical fit, so they come before the resampling */
        for (size_t ri = 0; ri < d->nresp && !st; ri++)
            st = sturdy_diagnose_response(d, m, &r->resp[ri], err);
        if (!st && !(st = sturdy_compare_stage(d, m, &run->opts, r, err)) &&
            !(st = run_notes(r, err)) && !(st = sturdy_permute_run(run, d, m, r, err)) &&
            !(st = stop_early_apply(run, r, err)) &&
            !(st = sturdy_uv_run(run, d, m, r, err)) &&
            !(st = run->opts.resistant ? sturdy_rs_run(run, d, m, r, err) : STURDY_OK) &&
            !(st = sturdy_bootcmp_alloc(run, m, r, err)) &&
            !(st = sturdy_bootstrap_run(run, d, m, r, err))) {
            r->perm_done = run->perm_end - run->perm_begin;
            r->boot_done = run->boot_end - run->boot_begin;
            st = sturdy_sensitivity_all(d, m, run, r, err);
            if (!st)
                st = sturdy_without_run(t, run, r, err);
        }
    }
    sturdy_model_free(m);
    return st;
}

sturdy_status sturdy_analyze(const sturdy_table *t, const sturdy_options *o,
                             const sturdy_context *ctx, sturdy_result **out, char *err)
{
    *out = NULL;
    sturdy_status st = sturdy_options_validate(o, err);
    if (st)
        return st;
    if (ctx && ctx->threads < 0)
        return sturdy_fail(err, STURDY_EUSAGE, "the thread count must be 0 (all) or more");
    sturdy_run run;
    memset(&run, 0, sizeof run);
    run.opts = *o;
    run.opts.boot_scheme = o->boot_scheme != STURDY_BOOT_DEFAULT
                               ? o->boot_scheme
                               : (o->flip ? STURDY_BOOT_WILD : STURDY_BOOT_RESIDUAL);
    run.threads = sturdy_context_threads(ctx);
    if (ctx) {
        run.progress = ctx->progress;
        run.progress_arg = ctx->progress_arg;
        run.cancel = ctx->cancel;
    }
    sturdy_result *r = sturdy_calloc(1, sizeof *r);
    if (!r)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    r->opts = run.opts;
    r->threads = run.threads;
    /* without the caller's cache the run keeps its own (several responses share k) */
    sturdy_cache *own = ctx && ctx->cache ? NULL : sturdy_cache_new();
    if (!own && !(ctx && ctx->cache)) {
        sturdy_result_free(r);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    r->cache = own ? own : ctx->cache;
    st = analyze(t, &run, r, err);
    if (!st && o->shard_count == 0 && o->resample)
        st = sturdy_result_finish(r, err);
    r->cache = NULL;
    sturdy_cache_free(own);
    if (st) {
        sturdy_result_free(r);
        return st;
    }
    *out = r;
    return STURDY_OK;
}
