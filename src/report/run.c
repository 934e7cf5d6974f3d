/* run.c — the text report's account of the run: the section "The run" (data,
 * design, model, resampling, bootstrap, level and seed) and, when no term could be
 * tested, the one cause that leads the headline. Drawing helpers: textfmt.c. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/text.h"
#include "sturdy/names.h"

/* A factor that reads like a replicate or run number, or NULL. */
static const char *replicate_like(const sturdy_design *d)
{
    static const char *const words[] = { "rep", "run", "id", "replicate", "sample", "unit" };
    for (size_t f = 0; d && f < d->nfactors; f++) {
        const char *n = d->factors[f].name;
        for (size_t k = 0; k < sizeof words / sizeof *words; k++) {
            size_t l = strlen(words[k]), i = 0;
            while (i < l && n[i] && (n[i] | 0x20) == words[k][i]) i++;
            if (i == l && (n[l] == '\0' || n[l] == '_' || n[l] == '.' || n[l] == ' ' ||
                           (n[l] >= '0' && n[l] <= '9') || l > 3))
                return n;
        }
    }
    return NULL;
}

/* When no term has an F-test (no residual degrees of freedom, or every term not
 * testable), that one cause leads the report, once; the footnotes below only repeat its
 * consequences. Returns 1 when it wrote the headline. */
int tw_untested_cause(tw *w)
{
    const sturdy_result *r = w->r;
    if (sturdy_result_tested_terms(r) > 0) return 0;
    const sturdy_design *d = r->design;
    const char *why = sturdy_result_untested_reason(r);
    tw_paraf(w, 2, 2, "Nothing could be tested: %s.", why);
    int no_df = 0;
    for (size_t i = 0; i < r->nresp; i++) no_df |= r->resp[i].df_error == 0;
    if (no_df && d && d->max_cell == 1 && d->ncov == 0) {
        const char *rep = replicate_like(d);
        const char *f = tw_name(w, STURDY_SETTING_FACTORS);
        const char *b = tw_name(w, STURDY_SETTING_BLOCK), *o = tw_name(w, STURDY_SETTING_ORDER);
        if (rep)
            tw_paraf(w, 2, 2, "Every cell holds a single row. If '%s' numbers the replicates "
                     "or runs, it is not a factor of the experiment: leave it out of %s (or "
                     "give it as %s if it groups runs), and the rows it told apart "
                     "become the replicates.", rep, f ? f : "the factors", b ? b : "the block");
        else
            tw_paraf(w, 2, 2, "Every cell holds a single row, so nothing is left to estimate "
                     "the error from. If one of the %s columns numbers replicates or runs, "
                     "leave it out; otherwise lower %s.", f ? f : "factor",
                     o ? o : "the interaction order");
    }
    tw_para(w, 2, 2, "No F-test, resampling test, interval or residual check below can be "
                     "computed for this reason; the footnotes repeat it where it applies.");
    return 1;
}

/* Each line of "The run" is built in `s` (emptied first) and written under its label. */

static void data_lines(tw *w, const sturdy_design *d, sturdy_buf *s)
{
    s->len = 0;
    sturdy_buf_printf(s, "%s: %zu of %zu rows used", d->source ? d->source : "?", d->n,
                      d->rows_read);
    if (d->ndropped)
        sturdy_buf_printf(s, "; %zu left out (see the notes)", d->ndropped);
    tw_labelled(w, "data", s->data);
    s->len = 0;
    for (size_t f = 0; f < d->nfactors; f++)
        sturdy_buf_printf(s, "%s%s (%zu%s)", f ? " × " : "", d->factors[f].name,
                          d->factors[f].nlevels, f ? "" : " levels");
    if (d->has_block)
        sturdy_buf_printf(s, "; block %s (%zu levels)", d->block.name, d->block.nlevels);
    for (size_t k = 0; k < d->ncov; k++)
        sturdy_buf_printf(s, "%s%s", k ? ", " : "; covariates ", d->cov_names[k]);
    sturdy_buf_printf(s, ". %zu of %zu cells filled, ", d->ncells, d->ncells_possible);
    if (d->min_cell == d->max_cell)
        sturdy_buf_printf(s, "%zu row%s each", d->min_cell, d->min_cell == 1 ? "" : "s");
    else
        sturdy_buf_printf(s, "%zu–%zu rows each", d->min_cell, d->max_cell);
    sturdy_buf_printf(s, ", %s.", d->balanced ? "balanced" : "unbalanced");
    tw_labelled(w, "design", s->data);
}

static void model_line(tw *w, const sturdy_design *d, sturdy_buf *s)
{
    const sturdy_result *r = w->r;
    static const char *const ss_words[] = { "", "Type I (sequential)",
                                            "Type II (hierarchical)",
                                            "Type III (each term adjusted for all others)" };
    s->len = 0;
    sturdy_buf_printf(s, "sums of squares of %s",
                      r->opts.ss_type >= 1 && r->opts.ss_type <= 3 ? ss_words[r->opts.ss_type]
                                                                  : "?");
    const char *o = tw_name(w, STURDY_SETTING_ORDER);
    if (r->opts.model.order == 1)
        sturdy_buf_printf(s, "; main effects only (%s 1)", o ? o : "interaction order");
    else if (r->opts.model.order > 1 && d && (size_t)r->opts.model.order < d->nfactors)
        sturdy_buf_printf(s, "; main effects and interactions of up to %d factors "
                          "(%s %d)", r->opts.model.order, o ? o : "interaction order",
                          r->opts.model.order);
    tw_labelled(w, "model", s->data);
}

static void resampling_line(tw *w, const sturdy_design *d, sturdy_buf *s)
{
    const sturdy_result *r = w->r;
    int no_df = 0;
    for (size_t i = 0; i < r->nresp; i++) no_df |= r->resp[i].df_error == 0;
    s->len = 0;
    if (r->nperm == 0) {
        const char *perm = tw_name(w, STURDY_SETTING_PERMUTATIONS);
        if (perm) sturdy_buf_printf(s, "none (%s 0)", perm);
        else sturdy_buf_puts(s, "none (no rearrangements were asked for)");
    } else if (no_df && sturdy_result_tested_terms(r) == 0) {
        sturdy_buf_printf(s, "none: with no residual degrees of freedom there is no F to "
                          "rearrange (%llu rearrangements were asked for)",
                          (unsigned long long)r->nperm);
    } else {
        sturdy_buf_printf(s, "%s %s, %llu %s", sturdy_method_description(r->opts.method),
                          r->opts.flip ? "sign-flipping" : "permutation",
                          (unsigned long long)r->nperm,
                          r->exact ? "rearrangements, all there are (exact)"
                                   : "random rearrangements");
        if (r->opts.stop_early && !r->exact)
            sturdy_buf_printf(s, " of the %llu asked for, sequential stopping (--stop-early: "
                              "each term stops at its %dth as extreme as the data, Besag & "
                              "Clifford 1991, or once p <= %g is settled with risk %g)",
                              (unsigned long long)r->nperm_asked, STURDY_STOP_EARLY_H,
                              r->opts.alpha, STURDY_STOP_EARLY_RISK);
        /* rearrange.c: with sign flips there is one block and the flips are row by row */
        if (d && d->has_block && r->opts.flip)
            sturdy_buf_printf(s, ", row by row (the block '%s' does not restrict the flips; "
                              "its term is tested like any other)", d->block.name);
        else if (d && d->has_block)
            sturdy_buf_printf(s, ", within levels of %s", d->block.name);
    }
    tw_labelled(w, "resampling", s->data);
}

static void unequal_line(tw *w, sturdy_buf *s)
{
    const sturdy_result *r = w->r;
    s->len = 0;
    sturdy_buf_printf(s, "Welch–James statistic with %s (Welch 1951; "
                      "Johansen 1980), ", r->uv_hc3 ? "HC3 variances (Long & Ervin 2000)"
                                                    : "each cell's own variance");
    sturdy_buf_printf(s, "p from %s; it holds α when cell variances differ, where F and "
                      "its rearrangements do not", r->uv_hc3 ? "F(df, residual df)"
                                                             : "Johansen's approximate F");
    if (r->nperm > 0 && r->opts.spread_scheme != STURDY_SPREAD_NONE)
        sturdy_buf_printf(s, ". Under each term also its %s p (%s), which runs liberal in "
                          "cells of 3 rows", r->opts.spread_scheme == STURDY_SPREAD_PERMUTATION
                                                 ? "permuted" : "wild-bootstrap",
                          r->opts.spread_scheme == STURDY_SPREAD_PERMUTATION
                              ? "Pauly, Brunner & Konietschke 2015"
                              : "Davidson & Flachaire 2008");
    tw_labelled(w, "unequal var", s->data);
}

static void bootstrap_line(tw *w, sturdy_buf *s)
{
    const sturdy_result *r = w->r;
    char c[32];
    tw_fmt_g(r->opts.conf * 100, 4, c);
    s->len = 0;
    const char *boot = tw_name(w, STURDY_SETTING_BOOTSTRAP);
    if (r->nboot == 0 && r->opts.bootstrap == 0 && boot)
        sturdy_buf_printf(s, "none (%s 0)", boot);
    else if (r->nboot == 0 && r->opts.bootstrap == 0)
        sturdy_buf_puts(s, "none (no replicates were asked for)");
    else if (r->nboot == 0)
        sturdy_buf_printf(s, "none: with no residual degrees of freedom there are no "
                          "residuals to resample (%llu replicates were asked for)",
                          (unsigned long long)r->opts.bootstrap);
    else
        sturdy_buf_printf(s, "%llu replicates, %s scheme; %s%% intervals",
                          (unsigned long long)r->nboot,
                          sturdy_boot_scheme_description(r->opts.boot_scheme), c);
    tw_labelled(w, "bootstrap", s->data);
}

static void level_seed_line(tw *w, sturdy_buf *s)
{
    const sturdy_result *r = w->r;
    char a[32];
    tw_fmt_g(r->opts.alpha, 3, a);
    s->len = 0;
    sturdy_buf_printf(s, "α = %s; seed %llu (the same seed repeats the same random draws)",
                      a, (unsigned long long)r->opts.seed);
    tw_labelled(w, "level, seed", s->data);
}

void tw_run_section(tw *w)
{
    const sturdy_design *d = w->r->design;
    sturdy_buf s;
    sturdy_buf_init(&s);
    tw_heading(w, "The run");
    if (d)
        data_lines(w, d, &s);
    model_line(w, d, &s);
    resampling_line(w, d, &s);
    unequal_line(w, &s);
    bootstrap_line(w, &s);
    level_seed_line(w, &s);
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
    tw_nl(w);
}
