/* text_headline.c — the text report's headline ("In short"): the design's warnings,
 * why nothing was tested, the spread warning, how many terms the tests agree on with each
 * disagreement and its likely reason, and the close calls (text.c draws the rest). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/text.h"

/* A term is named "cache", or "cache (build_min)" when there are several responses:
 * TERM_NAME_FMT with TERM_NAME_ARGS. */
#define TERM_NAME_FMT "%s%s%s%s"
#define TERM_NAME_ARGS(w, rr, t) (t)->label, (w)->r->nresp > 1 ? " (" : "", \
    (w)->r->nresp > 1 && (rr)->name ? (rr)->name : "", (w)->r->nresp > 1 ? ")" : ""

/* When a response's cell spreads differ (diagnostics.spread_differs), the headline leads
 * with it and with the unequal-variance test's conclusions, since the F-test and every
 * rearrangement of F then miss their level (README, calibration table). */
static void spread_headline(tw *w)
{
    const sturdy_result *r = w->r;
    char a[32];
    tw_fmt_g(r->opts.alpha, 3, a);
    for (size_t i = 0; i < r->nresp; i++) {
        const sturdy_response_result *rr = &r->resp[i];
        if (!rr->diag.spread_differs) continue;
        sturdy_buf s;
        sturdy_buf_init(&s);
        size_t tested = 0, sig = 0;
        for (size_t k = 0; k < rr->nterms; k++) {
            double p = tw_uv_p(&rr->terms[k].uv);
            if (isnan(p)) continue;
            tested++;
            if (p <= r->opts.alpha) sig++;
        }
        sturdy_buf_printf(&s, "The cell spreads of %s differ (%s). The F-test and its "
                          "rearrangements can then reject far too often or too rarely, so "
                          "read the unequal-variance test (p unequal var)",
                          rr->name ? rr->name : "?",
                          rr->diag.spread_reason ? rr->diag.spread_reason : "");
        if (tested == 0) {
            sturdy_buf_puts(&s, "; it could not be computed here (see the footnotes).");
        } else {
            sturdy_buf_printf(&s, ": %zu of %zu terms significant at α" NBSP "=" NBSP "%s",
                              sig, tested, a);
            size_t shown = 0;
            for (size_t k = 0; k < rr->nterms; k++) {
                const sturdy_term_result *t = &rr->terms[k];
                double p = tw_uv_p(&t->uv);
                if (isnan(p) || p > r->opts.alpha) continue;
                sturdy_buf_printf(&s, "%s%s (", shown++ ? ", " : " — ", t->label);
                tw_p_words(&s, p);
                sturdy_buf_puts(&s, ")");
            }
            sturdy_buf_puts(&s, ".");
        }
        tw_para(w, 2, 2, s.data ? s.data : "");
        if (s.failed) w->b->failed = 1;
        sturdy_buf_free(&s);
    }
}

/* Which of the three tests find a term at alpha, as "the F-test and resampling"; 0 tests:
 * NULL. `uv` < 0: the unequal-variance test is absent. */
static const char *tests_finding(int f, int r, int uv)
{
    static const char *const names[8] = {
        NULL, "the unequal-variance test", "resampling", "resampling and the unequal-variance test",
        "the F-test", "the F-test and the unequal-variance test", "the F-test and resampling",
        "all three tests"
    };
    return names[(f ? 4 : 0) | (r ? 2 : 0) | (uv > 0 ? 1 : 0)];
}

/* Does the F-test (*f) or the resampled F (*rs) find the term, as its verdict says? */
static void verdict_finds(const sturdy_term_result *t, int *f, int *rs)
{
    *f = t->verdict == STURDY_VERDICT_BOTH || t->verdict == STURDY_VERDICT_CLASSICAL_ONLY;
    *rs = t->verdict == STURDY_VERDICT_BOTH || t->verdict == STURDY_VERDICT_RESAMPLING_ONLY;
}

/* How many terms have a verdict (avail), reach the same conclusion with every test they
 * have (agree), of those are significant (both), and have an unequal-variance p. */
typedef struct {
    size_t avail, agree, both, with_uv;
} agreement;

static agreement count_agreement(const sturdy_result *r)
{
    agreement ag = { 0, 0, 0, 0 };
    double alpha = r->opts.alpha;
    for (size_t i = 0; i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            if (t->verdict == STURDY_VERDICT_NONE) continue;
            ag.avail++;
            double pu = tw_uv_p(&t->uv);
            int f, rs;
            verdict_finds(t, &f, &rs);
            int same = f == rs && (isnan(pu) || (pu <= alpha) == f);
            if (!isnan(pu)) ag.with_uv++;
            ag.agree += same;
            ag.both += same && f;
        }
    return ag;
}

/* One line per term on which the tests disagree: which find it, and the likely reason. */
static void disagreement_lines(tw *w)
{
    const sturdy_result *r = w->r;
    double alpha = r->opts.alpha;
    for (size_t i = 0; i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            if (t->verdict == STURDY_VERDICT_NONE) continue;
            double pu = tw_uv_p(&t->uv);
            int f, rs;
            verdict_finds(t, &f, &rs);
            int u = isnan(pu) ? -1 : pu <= alpha;
            if (f == rs && (u < 0 || u == f)) continue;
            const char *why = f != rs && t->verdict_reason ? t->verdict_reason
                              : r->resp[i].diag.spread_differs
                                  ? "the cell spreads differ, and only the "
                                    "unequal-variance test holds α then"
                                  : "only the unequal-variance test allows for unequal "
                                    "cell variances; the spread check does not flag "
                                    "them here, though it misses many in small cells";
            size_t wl = strlen(why);
            const char *by = tests_finding(f, rs, u);
            char pw[40] = "";
            if (u >= 0) {
                tw_fmt_p(pu, pw + 2);
                memcpy(pw, "p ", 2);
            }
            tw_paraf(w, 2, 4, "• " TERM_NAME_FMT ": significant by %s%s%s%s%s%s%s%s",
                     TERM_NAME_ARGS(w, &r->resp[i], t), by ? by : "none of the tests",
                     by ? " only" : "", u >= 0 ? " (unequal-variance " : "", pw,
                     u >= 0 ? ")" : "", wl ? " — " : "", why,
                     wl && why[wl - 1] == '.' ? "" : ".");
        }
}

/* The headline's main paragraph: how many terms the tests agree on (a: alpha as
 * printed), then each disagreement; or why there is nothing to compare. */
static void agreement_lines(tw *w, const agreement *ag, const char *a)
{
    const sturdy_result *r = w->r;
    char s[512];
    const char *which = ag->with_uv ? "the F-test, resampling and the unequal-variance test"
                                    : "the F-test and with resampling";
    if (!r->finished) {
        tw_para(w, 2, 2, "This file holds one shard of a split run. The p-values, intervals "
                         "and verdicts appear once 'sturdy merge' has combined all shards.");
    } else if (r->nperm == 0) {
        const char *perm = tw_name(w, STURDY_SETTING_PERMUTATIONS);
        if (perm)
            tw_paraf(w, 2, 2, "No resampling test was run (%s 0), so only the F-tests are "
                     "shown. Rerun with %s 9999 to check them.", perm, perm);
        else
            tw_para(w, 2, 2, "No resampling test was run (no rearrangements were asked "
                    "for), so only the F-tests are shown. Rerun with 9999 rearrangements to "
                    "check them.");
    } else if (ag->avail == 0) {
        tw_para(w, 2, 2, "No term could be compared between the F-test and resampling; the "
                         "footnotes below say why.");
    } else if (ag->agree == ag->avail) {
        snprintf(s, sizeof s, "All %zu tested terms reach the same conclusion with %s at "
                 "α = %s (%zu significant by %s, %zu by none).", ag->avail, which, a,
                 ag->both, ag->with_uv ? "all" : "both", ag->avail - ag->both);
        tw_para(w, 2, 2, s);
    } else {
        snprintf(s, sizeof s, "%zu of %zu tested terms reach the same conclusion with %s at "
                 "α = %s; %zu %s not:", ag->agree, ag->avail, which, a,
                 ag->avail - ag->agree, ag->avail - ag->agree == 1 ? "does" : "do");
        tw_para(w, 2, 2, s);
        disagreement_lines(w);
    }
}

/* One line per term whose resampled p is too close to alpha (a, as printed) to call,
 * unless it is listed among the disagreements already. */
static void close_call_lines(tw *w, const char *a)
{
    const sturdy_result *r = w->r;
    for (size_t i = 0; r->finished && !r->exact && i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            /* a disagreeing term is listed above, and its reason covers the interval */
            if (!t->straddles || isnan(t->p_perm) || t->verdict == STURDY_VERDICT_CLASSICAL_ONLY ||
                t->verdict == STURDY_VERDICT_RESAMPLING_ONLY)
                continue;
            char p[32], lo[32], hi[32];
            tw_fmt_p(t->p_perm, p);
            tw_fmt_pr(t->p_perm_ci.lo, lo);
            tw_fmt_pr(t->p_perm_ci.hi, hi);
            const char *perm = tw_name(w, STURDY_SETTING_PERMUTATIONS);
            unsigned long long more = r->nperm >= UINT64_MAX / 10 - 10
                                          ? r->nperm : (r->nperm + 1) * 10 - 1;
            if (perm)
                tw_paraf(w, 2, 4, "• " TERM_NAME_FMT ": the resampled p, %s (99%% range "
                         "%s–%s), is too close to α" NBSP "=" NBSP "%s to call; run more "
                         "rearrangements (%s" NBSP "%llu).", TERM_NAME_ARGS(w, &r->resp[i], t),
                         p, lo, hi, a, perm, more);
            else
                tw_paraf(w, 2, 4, "• " TERM_NAME_FMT ": the resampled p, %s (99%% range "
                         "%s–%s), is too close to α" NBSP "=" NBSP "%s to call; run more "
                         "rearrangements (%llu).", TERM_NAME_ARGS(w, &r->resp[i], t), p, lo,
                         hi, a, more);
        }
}

/* "In short": the design's warnings, then why nothing was tested, or the spread
 * warning, the agreement of the tests and the close calls. */
void tw_headline(tw *w)
{
    const sturdy_result *r = w->r;
    agreement ag = count_agreement(r);
    char a[32];
    tw_fmt_g(r->opts.alpha, 3, a);
    tw_heading(w, "In short");
    for (size_t i = 0; r->design && i < r->design->nwarnings; i++)
        tw_paraf(w, 2, 4, "! %s.", r->design->warnings[i]);
    if (tw_untested_cause(w)) {
        tw_nl(w);
        return;
    }
    tw_sensitivity_headline(w);
    tw_resistant_headline(w);
    if (r->finished) spread_headline(w);
    agreement_lines(w, &ag, a);
    tw_family_line(w, a);
    close_call_lines(w, a);
    tw_nl(w);
}
