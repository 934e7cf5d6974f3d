/* finish.c — the last steps of a check: a shard's or rank's counts and replicates added
 * into the result (sturdy_result_add_slice), then p-values, Monte Carlo intervals, the
 * family-wise adjustment (Holm), tail fits, intervals and verdicts from them
 * (sturdy_result_finish). */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/stages.h"
#include "analysis/without.h"
#include "resampling/bootcmp.h"
#include "checks/checks.h"
#include "classical/classical.h"
#include "resampling/resampling.h"
#include "resampling/tail.h"
#include "core/core.h"
#include "sturdy/dist.h"

/* Level of the Monte Carlo interval around p_perm (DESIGN.md: 99% Clopper–Pearson). */
#define PERM_CI_LEVEL 0.99

sturdy_status sturdy_result_add_slice(sturdy_result *r, const sturdy_slice *s, char *err)
{
    if (s->nresp != r->nresp || (r->nresp && s->nterms != r->resp[0].nterms))
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the part has %zu responses × %zu terms; the analysis has %zu × %zu",
                           s->nresp, s->nterms, r->nresp, r->nresp ? r->resp[0].nterms : 0);
    if (s->perm_begin > s->perm_end || s->perm_end > r->nperm ||
        s->boot_begin > s->boot_end || s->boot_end > r->nboot)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the part's ranges do not fit the analysis (%llu rearrangements, "
                           "%llu replicates)", (unsigned long long)r->nperm,
                           (unsigned long long)r->nboot);
    uint64_t nb = s->boot_end - s->boot_begin, np = s->perm_end - s->perm_begin;
    for (size_t k = 0; k < s->nresp * s->nterms; k++)
        if (s->exceed[k] > np || s->exceed_fwer[k] > np ||
            (s->uv_exceed_wild && s->uv_exceed_wild[k] > np) ||
            (s->uv_exceed_perm && s->uv_exceed_perm[k] > np) ||
            (s->exceed_without && s->exceed_without[k] > np) ||
            (s->exceed_resistant && s->exceed_resistant[k] > np))
            return sturdy_fail(err, STURDY_EUSAGE,
                               "the part counts more exceedances than its %llu rearrangements",
                               (unsigned long long)np);
    for (size_t k = 0; s->f_hist && k < s->nresp * s->nterms; k++) {
        uint64_t sum = 0;
        for (size_t q = 0; q < STURDY_FHIST_BINS; q++) {
            uint64_t v = s->f_hist[k * STURDY_FHIST_BINS + q];
            if (v > np - sum)
                return sturdy_fail(err, STURDY_EUSAGE, "the part's F* histogram counts more "
                                   "than its %llu rearrangements", (unsigned long long)np);
            sum += v;
        }
    }
    if (r->opts.tail_fit && np && !s->f_top)
        return sturdy_fail(err, STURDY_EUSAGE, "the part carries no largest F* values for "
                           "--tail-fit (written without it?)");
    for (size_t k = 0; s->f_top && k < s->nresp * s->nterms; k++) {
        if (s->n_top[k] > STURDY_TAIL_KEEP || s->n_top[k] > np)
            return sturdy_fail(err, STURDY_EUSAGE, "the part keeps more largest F* values "
                               "than its %llu rearrangements", (unsigned long long)np);
        for (size_t q = 0; q < s->n_top[k]; q++)
            if (!(s->f_top[k * STURDY_TAIL_KEEP + q] >= 0))
                return sturdy_fail(err, STURDY_EUSAGE, "the part's largest F* values hold "
                                   "something other than non-negative numbers");
    }
    if (s->cmp_exceed) {
        size_t total = 0;
        for (size_t ri = 0; ri < r->nresp; ri++)
            total += r->resp[ri].ncomparisons;
        if (s->ncomparisons != total)
            return sturdy_fail(err, STURDY_EUSAGE, "the part has %zu comparisons; the analysis "
                               "has %zu", s->ncomparisons, total);
        for (size_t q = 0; q < total; q++)
            if (s->cmp_exceed[q] > np)
                return sturdy_fail(err, STURDY_EUSAGE, "the part counts more exceedances than "
                                   "its %llu rearrangements", (unsigned long long)np);
        for (size_t ri = 0, q = 0; ri < r->nresp; ri++)
            for (size_t i = 0; i < r->resp[ri].ncomparisons; i++)
                r->resp[ri].comparisons[i].exceed_maxt += s->cmp_exceed[q++];
    }
    if (s->cmp_boot && nb) {
        size_t cols = r->nresp ? r->resp[0].nfamilies + r->resp[0].nmeans : 0;
        if (s->cmp_boot_cols != cols)
            return sturdy_fail(err, STURDY_EUSAGE, "the part has %zu values per replicate for "
                               "the comparisons; the analysis has %zu", s->cmp_boot_cols, cols);
        for (size_t ri = 0; ri < r->nresp; ri++)
            if (r->resp[ri].cmp_boot)
                memcpy(r->resp[ri].cmp_boot + s->boot_begin * cols,
                       s->cmp_boot + ri * nb * cols, nb * cols * sizeof(double));
    }
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < s->nterms; t++) {
            sturdy_term_result *tr = &r->resp[ri].terms[t];
            size_t k = ri * s->nterms + t;
            tr->exceed += s->exceed[k];
            tr->exceed_fwer += s->exceed_fwer[k];
            if (s->uv_exceed_wild) tr->uv.exceed_wild += s->uv_exceed_wild[k];
            if (s->uv_exceed_perm) tr->uv.exceed_perm += s->uv_exceed_perm[k];
            if (s->exceed_without) tr->sens.exceed_without += s->exceed_without[k];
            if (s->exceed_resistant) tr->rs.exceed += s->exceed_resistant[k];
            for (size_t q = 0; s->f_hist && q < STURDY_FHIST_BINS; q++)
                tr->f_hist[q] += s->f_hist[k * STURDY_FHIST_BINS + q];
            if (s->f_top && r->opts.tail_fit)
                sturdy_tail_merge(tr->f_top, &tr->n_top, s->f_top + k * STURDY_TAIL_KEEP,
                                  s->n_top[k]);
            if (tr->boot && nb)
                memcpy(tr->boot + s->boot_begin * STURDY_BOOT_COLS,
                       s->boot + k * nb * STURDY_BOOT_COLS,
                       nb * STURDY_BOOT_COLS * sizeof(double));
        }
    r->perm_done += s->perm_end - s->perm_begin;
    r->boot_done += nb;
    return STURDY_OK;
}

/* Holm (1979) step-down adjustment of the permutation p-values over the family. */
static sturdy_status holm(sturdy_result *r, char *err)
{
    size_t cap = 0, k = 0;
    for (size_t ri = 0; ri < r->nresp; ri++)
        cap += r->resp[ri].nterms;
    sturdy_term_result **fam = sturdy_malloc((cap ? cap : 1) * sizeof *fam);
    if (!fam)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < r->resp[ri].nterms; t++)
            if (!isnan(r->resp[ri].terms[t].p_perm))
                fam[k++] = &r->resp[ri].terms[t];
    assert(k <= cap);
    /* insertion sort, stable: the family is small */
    for (size_t i = 1; i < k; i++) {
        sturdy_term_result *x = fam[i];
        size_t j = i;
        while (j > 0 && fam[j - 1]->p_perm > x->p_perm) {
            fam[j] = fam[j - 1];
            j--;
        }
        fam[j] = x;
    }
    double run = 0.0;
    for (size_t i = 0; i < k; i++) {
        double adj = fmin(1.0, (double)(k - i) * fam[i]->p_perm);
        run = fmax(run, adj);
        fam[i]->p_perm_holm = run;
    }
    sturdy_free(fam);
    return STURDY_OK;
}

sturdy_status sturdy_result_finish(sturdy_result *r, char *err)
{
    sturdy_status st;
    if (r->perm_done != r->nperm || r->boot_done != r->nboot)
        return sturdy_fail(err, STURDY_EUSAGE,
                           "incomplete: %llu of %llu rearrangements and %llu of %llu "
                           "replicates are present",
                           (unsigned long long)r->perm_done, (unsigned long long)r->nperm,
                           (unsigned long long)r->boot_done, (unsigned long long)r->nboot);
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < r->resp[ri].nterms; t++) {
            sturdy_term_result *tr = &r->resp[ri].terms[t];
            if (!tr->perm_note && r->nperm == 0 &&
                !(tr->perm_note = sturdy_strdup("no rearrangements were asked for")))
                return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
            if (!tr->perm_note) {
                double B = (double)r->nperm;
                if (tr->stopped_early) {
                    /* Besag & Clifford (1991): h exceedances by the L-th rearrangement;
                       the decision rule: e exceedances among the first L */
                    tr->p_perm = tr->stopped_early == STURDY_SEQ_DECIDED
                                     ? (1.0 + (double)tr->exceed) / (1.0 + (double)tr->perm_used)
                                     : (double)tr->exceed / (double)tr->perm_used;
                    tr->p_perm_fwer = (1.0 + (double)tr->exceed_fwer) / (1.0 + B);
                    sturdy_clopper_pearson(tr->exceed, tr->perm_used, PERM_CI_LEVEL,
                                           &tr->p_perm_ci.lo, &tr->p_perm_ci.hi);
                } else if (r->exact) {
                    tr->p_perm = (double)tr->exceed / B;
                    tr->p_perm_fwer = (double)tr->exceed_fwer / B;
                    tr->p_perm_ci.lo = tr->p_perm_ci.hi = tr->p_perm;
                } else {
                    /* Phipson & Smyth (2010): the observed arrangement counts once */
                    tr->p_perm = (1.0 + (double)tr->exceed) / (1.0 + B);
                    tr->p_perm_fwer = (1.0 + (double)tr->exceed_fwer) / (1.0 + B);
                    sturdy_clopper_pearson(tr->exceed, r->nperm, PERM_CI_LEVEL,
                                           &tr->p_perm_ci.lo, &tr->p_perm_ci.hi);
                }
                tr->p_perm_fwer = fmax(tr->p_perm_fwer, tr->p_perm);
                if (r->opts.tail_fit)   /* beside p_perm, never replacing it */
                    sturdy_tail_estimate(tr->f_top, tr->n_top, tr->f, r->nperm, tr->exceed,
                                         r->exact, &tr->p_tail, &tr->tail);
            }
            const char *why_no_boot =
                !(tr->f >= 0) ? (tr->note ? tr->note : "no effect size to resample")
                : r->nboot == 0 ? "no bootstrap replicates were asked for"
                                : NULL;
            if (!tr->boot_note && why_no_boot && !(tr->boot_note = sturdy_strdup(why_no_boot)))
                return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
            if ((st = sturdy_term_intervals(r, &r->resp[ri], tr, err)) ||
                (st = sturdy_uv_finish(r, tr, err)))
                return st;

        }
    if ((st = holm(r, err)) || (st = sturdy_bootcmp_finish(r, err)))
        return st;
    if ((st = sturdy_compare_select(r, err)))
        return st;
    for (size_t ri = 0; r->opts.resistant && ri < r->nresp; ri++)
        for (size_t t = 0; t < r->resp[ri].nterms; t++)
            sturdy_rs_finish(r, &r->resp[ri], &r->resp[ri].terms[t]);
    sturdy_without_finish(r);
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < r->resp[ri].nterms; t++)
            if ((st = sturdy_verdict_term(&r->resp[ri], &r->resp[ri].terms[t], r->opts.alpha,
                                          err)))
                return st;
    r->finished = 1;
    return STURDY_OK;
}
