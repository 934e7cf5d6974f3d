/* json.c — the result as JSON, contract "version": 1 (see report.h for the layout).
 *
 * Output is deterministic: fixed key order, fixed indentation, numbers through
 * sturdy_format_double, and nothing that depends on the thread count or the clock. */
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/without.h"
#include "core/result.h"
#include "report/family.h"
#include "resampling/tail.h"
#include "sturdy/names.h"
#include "sturdy/report.h"

#include "report/jwrite.h"

static void write_input(jw *w, const sturdy_result *r)
{
    const sturdy_design *d = r->design;
    jw_open(w, "input", '{');
    jw_str(w, "file", d ? d->source : NULL);
    jw_u64(w, "rows_read", d ? d->rows_read : 0);
    jw_u64(w, "rows_used", d ? d->n : 0);
    jw_open(w, "rows_dropped", '[');
    for (size_t i = 0; d && i < d->ndropped; i++) {
        jw_open(w, NULL, '{');
        jw_u64(w, "row", d->dropped[i].row + 1);
        jw_u64(w, "line", d->dropped[i].line);
        jw_str(w, "reason", d->dropped[i].reason);
        jw_close(w, '}');
    }
    jw_close(w, ']');
    jw_close(w, '}');
}

static void write_factor(jw *w, const char *key, const sturdy_factor *f)
{
    jw_open(w, key, '{');
    jw_str(w, "name", f->name);
    jw_strs_inline(w, "levels", f->levels, f->nlevels);
    jw_close(w, '}');
}

static void write_design(jw *w, const sturdy_design *d)
{
    if (!d) { jw_null(w, "design"); return; }
    jw_open(w, "design", '{');
    jw_open(w, "factors", '[');
    for (size_t f = 0; f < d->nfactors; f++) write_factor(w, NULL, &d->factors[f]);
    jw_close(w, ']');
    if (d->has_block) write_factor(w, "block", &d->block);
    else jw_null(w, "block");
    jw_strs_inline(w, "covariates", d->cov_names, d->ncov);
    jw_open(w, "cells", '[');
    for (size_t c = 0; c < d->ncells; c++) {
        jw_open(w, NULL, '{');
        jw_item(w, "levels");
        sturdy_buf_put(w->b, "[", 1);
        for (size_t f = 0; f < d->nfactors; f++) {
            const sturdy_factor *fa = &d->factors[f];
            size_t lv = d->cell_levels[c * d->nfactors + f];
            if (f) sturdy_buf_puts(w->b, ", ");
            jw_string_raw(w->b, lv < fa->nlevels ? fa->levels[lv] : "?");
        }
        sturdy_buf_put(w->b, "]", 1);
        jw_u64(w, "count", d->cell_count[c]);
        jw_close(w, '}');
    }
    jw_close(w, ']');
    jw_u64(w, "cells_possible", d->ncells_possible);
    jw_u64(w, "cells_empty", d->ncells_possible - d->ncells);
    jw_bool(w, "balanced", d->balanced);
    jw_u64(w, "min_cell", d->min_cell);
    jw_u64(w, "max_cell", d->max_cell);
    jw_close(w, '}');
}

static void write_settings(jw *w, const sturdy_result *r)
{
    jw_open(w, "settings", '{');
    jw_u64(w, "ss_type", (uint64_t)r->opts.ss_type);
    jw_str(w, "method", sturdy_method_name(r->opts.method));
    jw_bool(w, "flip", r->opts.flip);
    jw_u64(w, "permutations", r->nperm);
    jw_bool(w, "exact", r->exact);
    jw_u64(w, "bootstrap", r->nboot);
    jw_str(w, "bootstrap_scheme", sturdy_boot_scheme_name(r->opts.boot_scheme));
    jw_str(w, "spread_scheme", sturdy_spread_scheme_name(r->opts.spread_scheme));
    jw_u64(w, "seed", r->opts.seed);
    jw_num(w, "conf", r->opts.conf);
    jw_num(w, "alpha", r->opts.alpha);
    jw_bool(w, "resistant", r->opts.resistant);
    if (r->opts.tail_fit)               /* absent without it: older files unchanged */
        jw_bool(w, "tail_fit", 1);
    if (r->opts.stop_early) {    /* only when asked: other runs' files stay as they were */
        jw_bool(w, "stop_early", 1);
        jw_u64(w, "stop_early_h", STURDY_STOP_EARLY_H);
        jw_u64(w, "permutations_asked", r->nperm_asked);
    }
    jw_close(w, '}');
}

static void write_shard(jw *w, const sturdy_result *r, const sturdy_report_opts *o)
{
    jw_open(w, "shard", '{');
    jw_strs_inline(w, "args", (char *const *)o->args, o->args ? o->nargs : 0);
    if (o->cwd)
        jw_str(w, "cwd", o->cwd);
    else
        jw_null(w, "cwd");
    jw_u64(w, "index", r->opts.shard_index);
    jw_u64(w, "count", r->opts.shard_count);
    jw_item(w, "perm_range");
    sturdy_buf_printf(w->b, "[%" PRIu64 ", %" PRIu64 "]", r->perm_begin, r->perm_end);
    jw_item(w, "boot_range");
    sturdy_buf_printf(w->b, "[%" PRIu64 ", %" PRIu64 "]", r->boot_begin, r->boot_end);
    /* the digest of the raw material below, which the reader recomputes */
    sturdy_part *p = NULL;
    char err[STURDY_ERR_LEN];
    if (sturdy_result_part(r, &p, err) != STURDY_OK) {
        w->b->failed = 1;
    } else {
        jw_item(w, "raw_digest");
        sturdy_buf_printf(w->b, "\"%016" PRIx64 "\"", sturdy_part_digest(p));
        sturdy_part_free(p);
    }
    jw_close(w, '}');
    jw_item(w, "data_checksum");
    sturdy_buf_printf(w->b, "\"%016" PRIx64 "\"", r->data_checksum);
}

/* The unequal-variance test of a term (unequal.c). */
static void write_uv(jw *w, const sturdy_result *r, const sturdy_uv_result *u)
{
    jw_open(w, "unequal_variance", '{');
    jw_num(w, "wald", u->wald);
    jw_num(w, "statistic", u->stat);
    jw_num(w, "df1", u->df1);
    jw_num(w, "df2", u->df2);
    jw_num(w, "p", u->p);
    jw_str(w, "reference", isnan(u->wald) ? NULL : u->johansen ? "johansen" : "residual-df");
    jw_str(w, "covariance", r->uv_hc3 ? "HC3" : "cell-variances");
    jw_str(w, "scheme", sturdy_spread_scheme_name(r->opts.spread_scheme));
    int has = !isnan(u->p_perm);
    jw_num(w, "p_perm", u->p_perm);
    jw_pair(w, "p_perm_ci", u->p_perm_ci);
    if (has)
        jw_u64(w, "exceed", r->opts.spread_scheme == STURDY_SPREAD_PERMUTATION ? u->exceed_perm
                                                                          : u->exceed_wild);
    else
        jw_null(w, "exceed");
    jw_u64(w, "replicates", r->nperm);
    jw_num(w, "p_wild", u->p_wild);
    jw_num(w, "p_permuted", u->p_permuted);
    if (isnan(u->ats)) {
        jw_null(w, "ats");
    } else {
        jw_open(w, "ats", '{');
        jw_num(w, "statistic", u->ats);
        jw_num(w, "df1", u->ats_df1);
        jw_num(w, "df2", u->ats_df2);
        jw_num(w, "p", u->ats_p);
        jw_close(w, '}');
    }
    jw_str(w, "note", u->note);
    jw_str(w, "perm_note", u->perm_note);
    jw_close(w, '}');
}

/* Rows of the single-row sensitivity, each with its cell and its own leave-one-out p. */
static void sens_rows(jw *w, const sturdy_design *d, const char *key, const sturdy_sens_row *rows,
                      size_t n)
{
    sturdy_buf cell;
    sturdy_buf_init(&cell);
    jw_open(w, key, '[');
    for (size_t i = 0; i < n; i++) {
        cell.len = 0;
        if (d) sturdy_report_cell_label(d, rows[i].cell, &cell);
        if (cell.failed) w->b->failed = 1;
        jw_open(w, NULL, '{');
        jw_u64(w, "row", rows[i].row);
        jw_u64(w, "line", rows[i].line);
        jw_str(w, "cell", cell.data ? cell.data : "?");
        jw_num(w, "f_without_row", rows[i].f_without);
        jw_num(w, "p_without_row", rows[i].p_without);
        jw_close(w, '}');
    }
    jw_close(w, ']');
    sturdy_buf_free(&cell);
}

/* The term's single-row sensitivity (checks/influence.c). */
static void write_sensitivity(jw *w, const sturdy_design *d, const sturdy_sensitivity *sv)
{
    jw_open(w, "sensitivity", '{');
    if (sv->searched && sv->nrows) jw_u64(w, "rows_to_change", sv->nrows);
    else jw_null(w, "rows_to_change");
    jw_str(w, "direction", sv->direction == STURDY_SENS_CREATES ? "creates"
                           : sv->direction == STURDY_SENS_HIDES ? "hides" : NULL);
    sens_rows(w, d, "rows", sv->rows, sv->nrows);
    jw_num(w, "f_without", sv->f_without);
    jw_num(w, "p_without", sv->p_without);
    jw_num(w, "p_perm_without", sv->p_perm_without);
    if (sv->perm_state == STURDY_SENS_PERM_DONE) jw_u64(w, "exceed_without", sv->exceed_without);
    else jw_null(w, "exceed_without");
    jw_num(w, "f_refit", sv->nrows ? sv->f_refit : NAN);
    jw_str(w, "perm_note", sturdy_without_note(sv->perm_state));
    if (sv->searched) {
        jw_bool(w, "decisive", sv->decisive);
        jw_bool(w, "empties_cell", sv->empties_cell);
        jw_u64(w, "rows_not_removable", sv->not_removable);
        sens_rows(w, d, "most_influential", sv->top, sv->ntop);
        jw_str(w, "note", "exact deletion of rows from the F-test's models; greedy search "
                          "of at most 3 rows (the first step tries every row, later steps "
                          "keep the rows chosen), so a set found only jointly may be "
                          "missed; rows whose removal alone empties a cell or block level "
                          "are not tried; f_refit is the F refitted on the data without "
                          "the rows");
    } else {
        jw_null(w, "decisive");
        jw_null(w, "empties_cell");
        jw_null(w, "rows_not_removable");
        jw_open(w, "most_influential", '[');
        jw_close(w, ']');
        jw_str(w, "note", "not searched: the term has no F-test here");
    }
    jw_close(w, '}');
}

/* Which p the verdicts use and how many terms stay significant family-wise (family.c);
 * null for a shard, whose p-values are not finished. */
static void write_family(jw *w, const sturdy_result *r)
{
    if (!r->finished) {
        jw_null(w, "family");
        return;
    }
    sturdy_family f;
    sturdy_family_count(r, &f);
    jw_open(w, "family", '{');
    jw_str(w, "verdict_uses", "per-term");
    jw_str(w, "adjustment", "westfall-young");
    jw_u64(w, "terms", f.terms);
    jw_u64(w, "significant_f", f.significant_f);
    jw_u64(w, "significant_perm", f.significant);
    jw_u64(w, "significant_fwer", f.significant_fwer);
    jw_u64(w, "significant_holm", f.significant_holm);
    jw_str(w, "note", sturdy_family_rule);
    jw_close(w, '}');
}

/* The outlier-resistant test (classical/huber.c, resampling/resistant_perm.c); null when
 * the run did not ask for it. */
static void write_resistant(jw *w, const sturdy_result *r, const sturdy_rs_result *rs)
{
    if (!r->opts.resistant) {
        jw_null(w, "resistant");
        return;
    }
    jw_open(w, "resistant", '{');
    jw_num(w, "statistic", rs->stat);
    jw_num(w, "p_perm", rs->p_perm);
    jw_pair(w, "p_perm_ci", rs->p_perm_ci);
    if (!isnan(rs->p_perm)) jw_u64(w, "exceed", rs->exceed);
    else jw_null(w, "exceed");
    jw_num(w, "drop", rs->drop);
    jw_num(w, "lambda", rs->lambda);
    jw_num(w, "scale", rs->scale);
    jw_num(w, "tuning", STURDY_RS_TUNING);
    if (!isnan(rs->p_perm)) jw_bool(w, "disagrees", rs->disagrees);
    else jw_null(w, "disagrees");
    jw_str(w, "scheme", r->opts.flip ? "sign flips of the robust reduced fit's residuals"
                                     : "rearrangements of the robust reduced fit's residuals");
    jw_str(w, "note", rs->note);
    jw_close(w, '}');
}

/* --tail-fit: the GPD tail's p and how its fit went (tail.c); null before finishing. */
static void write_tail(jw *w, const sturdy_term_result *t)
{
    jw_num(w, "p_tail", t->p_tail);
    const sturdy_tail_fit *f = &t->tail;
    if (f->status == STURDY_TAIL_OFF) {
        jw_null(w, "tail_fit");
        return;
    }
    jw_open(w, "tail_fit", '{');
    jw_str(w, "status", sturdy_tail_status_name(f->status));
    jw_str(w, "reason", sturdy_tail_status_reason(f->status));
    if (f->n_tried)
        jw_str(w, "method", "generalised Pareto, maximum likelihood, on the exceedances of the "
                        "largest F* over a threshold (Knijnenburg et al. 2009); "
                        "Anderson-Darling p by parametric bootstrap");
    if (f->n_tried) {
        jw_u64(w, "n_exc", f->n_exc);
        jw_u64(w, "n_exc_tried", f->n_tried);
    } else {
        jw_null(w, "n_exc");
        jw_u64(w, "n_exc_tried", 0);
    }
    jw_num(w, "threshold", f->threshold);
    jw_num(w, "shape", f->xi);
    jw_num(w, "scale", f->sigma);
    jw_num(w, "ad_statistic", f->ad);
    jw_num(w, "ad_p", f->ad_p);
    if (isnan(f->ad_p)) jw_null(w, "ad_decision");
    else jw_str(w, "ad_decision", f->ad_p > STURDY_TAIL_GOF_ALPHA ? "accepted" : "rejected");
    jw_close(w, '}');
}

static void write_term(jw *w, const sturdy_result *r, const sturdy_term_result *t,
                       const sturdy_report_opts *o)
{
    jw_open(w, NULL, '{');
    jw_str(w, "term", t->label);
    jw_strs_inline(w, "factors", t->factors, t->nfactors);
    jw_num(w, "df", t->df);
    jw_num(w, "ss", t->ss);
    jw_num(w, "ms", t->ms);
    jw_num(w, "f", t->f);
    jw_num(w, "p", t->p);
    jw_str(w, "note", t->note);
    int has_perm = !isnan(t->p_perm);
    jw_num(w, "p_perm", t->p_perm);
    jw_pair(w, "p_perm_ci", t->p_perm_ci);
    jw_num(w, "p_perm_fwer", t->p_perm_fwer);
    jw_num(w, "p_perm_holm", t->p_perm_holm);
    if (has_perm) jw_u64(w, "exceed", t->exceed); else jw_null(w, "exceed");
    if (has_perm && !isnan(t->p_perm_fwer)) jw_u64(w, "exceed_fwer", t->exceed_fwer);
    else jw_null(w, "exceed_fwer");
    jw_str(w, "perm_note", t->perm_note);
    if (r->opts.tail_fit)
        write_tail(w, t);
    if (r->opts.stop_early && !r->exact) {
        if (has_perm) {
            jw_u64(w, "perm_used", t->perm_used);
            jw_bool(w, "stopped_early", t->stopped_early);
            jw_str(w, "stop_rule", sturdy_stop_rule_name(t->stopped_early));
        } else {
            jw_null(w, "perm_used");
            jw_null(w, "stopped_early");
            jw_null(w, "stop_rule");
        }
    }
    for (int e = 0; e < STURDY_NES; e++) jw_num(w, sturdy_es_names[e], t->es[e]);
    jw_open(w, "ci", '{');
    for (int e = 0; e < STURDY_NES; e++) {
        jw_open(w, sturdy_es_names[e], '{');
        jw_pair(w, "percentile", t->ci_pct[e]);
        jw_pair(w, "bca", t->ci_bca[e]);
        if (e == STURDY_ES_PARTIAL_ETA2) jw_pair(w, "noncentral_f", t->ncf);
        if (e != STURDY_ES_ETA2 && e != STURDY_ES_OMEGA2) {
            jw_pair(w, "test_inversion", t->ci_ti[e]);
            jw_pair(w, "studentized_inversion", t->ci_sti[e]);
        }
        /* the recommended interval: method and interval null when there is none; the
           reason says why either way */
        jw_open(w, "recommended", '{');
        if (t->ci_rec_method[e] == STURDY_CI_NONE) {
            jw_null(w, "method");
            jw_null(w, "interval");
        } else {
            jw_str(w, "method", sturdy_ci_method_name((sturdy_ci_method)t->ci_rec_method[e]));
            jw_pair(w, "interval", t->ci_rec[e]);
        }
        jw_str(w, "reason", t->ci_rec_reason[e]);
        jw_close(w, '}');
        jw_close(w, '}');
    }
    jw_close(w, '}');
    jw_str(w, "boot_note", t->boot_note);
    jw_str(w, "ci_note", t->ci_note);
    jw_str(w, "verdict", sturdy_verdict_name(t->verdict));
    jw_str(w, "verdict_reason", t->verdict_reason);
    if (has_perm) jw_bool(w, "p_perm_straddles_alpha", t->straddles);
    else jw_null(w, "p_perm_straddles_alpha");
    write_uv(w, r, &t->uv);
    write_sensitivity(w, r->design, &t->sens);
    write_resistant(w, r, &t->rs);
    if (o->partial) {
        /* The slice's raw material, which sturdy merge adds up across shards. */
        jw_open(w, "raw", '{');
        jw_u64(w, "exceed", t->exceed);
        jw_u64(w, "exceed_fwer", t->exceed_fwer);
        jw_u64(w, "uv_exceed_wild", t->uv.exceed_wild);
        jw_u64(w, "uv_exceed_perm", t->uv.exceed_perm);
        jw_u64(w, "exceed_without", t->sens.exceed_without);
        jw_u64(w, "exceed_resistant", t->rs.exceed);
        jw_u64s_inline(w, "f_hist", t->f_hist, STURDY_FHIST_BINS);
        if (r->opts.tail_fit)   /* descending; +∞ as null */
            jw_nums_inline(w, "f_top", t->f_top, t->n_top);
        if (!t->boot) {
            jw_null(w, "boot");
        } else {
            jw_open(w, "boot", '[');
            /* t->boot is indexed over the whole run; this slice's rows only */
            for (uint64_t i = r->boot_begin; i < r->boot_end; i++)
                jw_nums_inline(w, NULL, t->boot + i * STURDY_BOOT_COLS, STURDY_BOOT_COLS);
            jw_close(w, ']');
        }
        jw_close(w, '}');
    }
    jw_close(w, '}');
}

/* Rows of the outlier check with their cells (name: "outliers" or "large_residuals"). */
static void outlier_list(jw *w, const sturdy_design *d, const char *name,
                         const sturdy_outlier *o, size_t n)
{
    jw_open(w, name, '[');
    sturdy_buf cell;
    sturdy_buf_init(&cell);
    for (size_t i = 0; i < n; i++) {
        const sturdy_outlier *ot = &o[i];
        cell.len = 0;
        sturdy_report_cell_label(d, ot->cell, &cell);
        if (cell.failed) w->b->failed = 1;
        jw_open(w, NULL, '{');
        jw_u64(w, "row", ot->row);
        jw_u64(w, "line", ot->line);
        jw_str(w, "cell", cell.data ? cell.data : "?");
        jw_num(w, "studentized", ot->studentized);
        jw_num(w, "studentized_internal", ot->internal);
        jw_num(w, "leverage", ot->leverage);
        jw_num(w, "p_bonferroni", ot->p_bonferroni);
        jw_close(w, '}');
    }
    sturdy_buf_free(&cell);
    jw_close(w, ']');
}

static void write_diagnostics(jw *w, const sturdy_design *d, const sturdy_diagnostics *g)
{
    jw_open(w, "diagnostics", '{');
    jw_open(w, "shapiro_wilk", '{');
    jw_num(w, "w", g->sw_w);
    jw_num(w, "p", g->sw_p);
    jw_str(w, "note", g->sw_note);
    jw_close(w, '}');
    /* the same without the flagged rows (checks/bulk.c) */
    jw_open(w, "shapiro_wilk_without_flagged", '{');
    jw_num(w, "w", g->sw_w_rest);
    jw_num(w, "p", g->sw_p_rest);
    jw_close(w, '}');
    jw_num(w, "skewness", g->skewness);
    jw_num(w, "excess_kurtosis", g->excess_kurtosis);
    jw_open(w, "brown_forsythe", '{');
    jw_num(w, "f", g->bf_f);
    jw_num(w, "df1", g->bf_df1);
    jw_num(w, "df2", g->bf_df2);
    jw_num(w, "p", g->bf_p);
    jw_str(w, "note", g->bf_note);
    jw_close(w, '}');
    jw_open(w, "brown_forsythe_modified", '{');
    jw_num(w, "f", g->bfm_f);
    jw_num(w, "df1", g->bfm_df1);
    jw_num(w, "df2", g->bfm_df2);
    jw_num(w, "p", g->bfm_p);
    jw_str(w, "note", g->bfm_note);
    jw_close(w, '}');
    jw_bool(w, "spread_differs", g->spread_differs);
    jw_str(w, "spread_reason", g->spread_reason);
    jw_num(w, "variance_ratio", g->variance_ratio);
    jw_str(w, "variance_ratio_note", g->vr_note);
    jw_str(w, "outlier_rule", "externally studentized residual on t with n - p - 1 df; "
                              "flagged when n x two-sided p <= 0.05 (Bonferroni; Cook & "
                              "Weisberg 1982)");
    outlier_list(w, d, "outliers", g->outliers, g->noutliers);
    outlier_list(w, d, "large_residuals", g->large, g->nlarge);
    if (d) {
        jw_u64(w, "min_cell", d->min_cell);
        jw_bool(w, "balanced", d->balanced);
    } else {
        jw_null(w, "min_cell");
        jw_null(w, "balanced");
    }
    jw_close(w, '}');
}

/* The levels of `mask` as {"factor": "level", ...}. */
static void write_levels(jw *w, const char *key, const sturdy_design *d, uint32_t mask,
                         const size_t *level)
{
    jw_open(w, key, '{');
    for (size_t f = 0; f < d->nfactors; f++)
        if (mask & (1u << f)) jw_str(w, d->factors[f].name, d->factors[f].levels[level[f]]);
    jw_close(w, '}');
}

/* responses[].means[] and responses[].comparisons[] (compare.c). */
static void write_compare(jw *w, const sturdy_result *r, const sturdy_response_result *rr,
                          const sturdy_report_opts *o)
{
    const sturdy_design *d = r->design;
    jw_open(w, "means", '[');
    for (size_t i = 0; d && i < rr->nmeans; i++) {
        const sturdy_mean_result *m = &rr->means[i];
        jw_open(w, NULL, '{');
        jw_str(w, "term", rr->terms[m->term].label);
        write_levels(w, "levels", d, m->mask, m->level);
        jw_num(w, "estimate", m->estimate);
        jw_num(w, "se", m->se);
        jw_num(w, "df", m->df);
        jw_pair(w, "ci", m->ci);
        jw_pair(w, "ci_bootstrap", m->ci_boot);
        jw_str(w, "note", m->note);
        jw_close(w, '}');
    }
    jw_close(w, ']');
    jw_open(w, "comparisons", '[');
    for (size_t i = 0; d && i < rr->ncomparisons; i++) {
        const sturdy_comparison *c = &rr->comparisons[i];
        const sturdy_factor *f = &d->factors[c->factor];
        jw_open(w, NULL, '{');
        jw_str(w, "term", rr->terms[c->term].label);
        jw_bool(w, "reported", rr->compare_shown && rr->compare_shown[c->term]);
        jw_str(w, "factor", f->name);
        jw_str(w, "level", f->levels[c->level]);
        jw_str(w, "versus", f->levels[c->versus]);
        if (c->within) {
            size_t lv[STURDY_MAX_FACTORS] = {0};
            lv[c->by_factor] = c->by_level;
            write_levels(w, "within", d, 1u << c->by_factor, lv);
        } else {
            jw_null(w, "within");
        }
        jw_num(w, "estimate", c->estimate);
        jw_num(w, "se", c->se);
        jw_num(w, "df", c->df);
        jw_num(w, "t", c->t);
        jw_num(w, "p", c->p);
        jw_num(w, "hedges_g", c->g);
        jw_pair(w, "ci", c->ci);
        jw_str(w, "adjustment", c->method == STURDY_ADJ_GAMES_HOWELL ? "games-howell"
                                : c->method == STURDY_ADJ_DUNNETT ? "dunnett"
                                                                    : "tukey-kramer");
        jw_pair(w, "ci_simultaneous", c->ci_simultaneous);
        jw_num(w, "p_adjusted", c->p_adjusted);
        jw_num(w, "p_perm_adjusted", c->p_perm_adjusted);
        jw_num(w, "p_boot_adjusted", c->p_boot_adjusted);
        jw_pair(w, "ci_bootstrap_simultaneous", c->ci_boot_simultaneous);
        jw_str(w, "note", c->note);
        jw_str(w, "perm_note", c->perm_note);
        jw_str(w, "boot_note", rr->cmp_boot_note);
        if (o->partial) {
            /* the slice's max-T count, which sturdy merge adds up across shards */
            jw_open(w, "raw", '{');
            jw_u64(w, "exceed_maxt", c->exceed_maxt);
            jw_close(w, '}');
        }
        jw_close(w, '}');
    }
    jw_close(w, ']');
    if (o->partial) {
        /* this slice's replicate rows: each family's largest |t*|, then each mean */
        size_t cols = rr->nfamilies + rr->nmeans;
        if (!rr->cmp_boot || !cols) {
            jw_null(w, "raw_comparisons_boot");
        } else {
            jw_open(w, "raw_comparisons_boot", '[');
            for (uint64_t i = r->boot_begin; i < r->boot_end; i++)
                jw_nums_inline(w, NULL, rr->cmp_boot + i * cols, cols);
            jw_close(w, ']');
        }
    }
}

static void write_response(jw *w, const sturdy_result *r, const sturdy_response_result *rr,
                           const sturdy_report_opts *o)
{
    const sturdy_design *d = r->design;
    jw_open(w, NULL, '{');
    jw_str(w, "response", rr->name);
    jw_open(w, "terms", '[');
    for (size_t k = 0; k < rr->nterms; k++) write_term(w, r, &rr->terms[k], o);
    jw_close(w, ']');
    jw_open(w, "error", '{');
    jw_num(w, "df", rr->df_error);
    jw_num(w, "ss", rr->ss_error);
    jw_num(w, "ms", rr->ms_error);
    jw_str(w, "note", rr->error_note);
    jw_close(w, '}');
    jw_open(w, "total", '{');
    jw_num(w, "df", rr->df_total);
    jw_num(w, "ss", rr->ss_total);
    jw_close(w, '}');
    jw_open(w, "cells", '[');
    for (size_t c = 0; d && c < d->ncells && rr->cell_mean; c++) {
        jw_open(w, NULL, '{');
        jw_num(w, "mean", rr->cell_mean[c]);
        jw_num(w, "sd", rr->cell_sd ? rr->cell_sd[c] : NAN);
        jw_close(w, '}');
    }
    jw_close(w, ']');
    write_diagnostics(w, d, &rr->diag);
    write_compare(w, r, rr, o);
    jw_close(w, '}');
}

sturdy_status sturdy_report_json(const sturdy_result *r, const sturdy_report_opts *o,
                                 sturdy_buf *out)
{
    sturdy_report_opts defaults;
    if (r->read_back)
        return STURDY_EUSAGE;   /* no design to describe: the file read is the report */
    if (!o) { sturdy_report_opts_init(&defaults); o = &defaults; }
    jw w = { .b = out, .depth = 0 };
    memset(w.items, 0, sizeof w.items);
    sturdy_buf_put(out, "{", 1);
    w.depth = 1;
    jw_u64(&w, "version", 1);
    write_input(&w, r);
    write_design(&w, r->design);
    write_settings(&w, r);
    if (o->partial) write_shard(&w, r, o);
    jw_open(&w, "notes", '[');
    for (size_t i = 0; i < r->nnotes; i++) jw_str(&w, NULL, r->notes[i]);
    jw_close(&w, ']');
    write_family(&w, r);
    jw_open(&w, "responses", '[');
    for (size_t i = 0; i < r->nresp; i++) write_response(&w, r, &r->resp[i], o);
    jw_close(&w, ']');
    sturdy_buf_puts(out, "\n}\n");
    return out->failed ? STURDY_EINTERNAL : STURDY_OK;
}
