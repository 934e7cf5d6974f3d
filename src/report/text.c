/* text.c — the readable report: a headline, then per response the tests, the
 * effect sizes and the residual checks with plain advice, then the run's notes.
 *
 * Layout rules: tables are at most 99 columns wide (plus the width by which term labels
 * of 19 to W_TERM_MAX characters widen the term column), prose wraps at the report width,
 * absent values print as "—" with the reason in a numbered footnote, and nothing
 * depends on the terminal except the optional colour. Shared drawing helpers live in
 * textfmt.c; the headline's agreement of the tests is in text_headline.c, the checks on
 * the residuals in text_checks.c. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/text.h"

/* The headline's untested cause and the run section are in run.c. */

/* Column widths of the tests table (2 + 18+1+4+1+9+1+9+2+8+2+11+2+13+2+14 = 99); SS and
 * F never take more than 9 characters in tw_fmt_num's format. MS is left to JSON and CSV
 * to make room for the unequal-variance test. */
enum { W_TERM = 18, W_DF = 4, W_SS = 9, W_F = 9, W_P = 8, W_PP = 11, W_UV = 13, W_RS = 11 };
/* A longer term label widens the term column of both tables (and the table beyond 99
 * columns) up to this width, so that its numbers stay on its line; only longer labels
 * get a line of their own. 40 holds a three-way term of 12-character names. */
enum { W_TERM_MAX = 40 };
/* Effect-size table: a narrower term column, then five columns of this width, each after
 * two blanks (2 + 18 + 5·16 = 100); "4.4e-05–0.0015" is 14 characters. */
enum { W_ES_TERM = 18, W_ES = 14 };
/* Indent of the lines under a term row. */
enum { DETAIL_INDENT = 6 };

static void verdict_words(const sturdy_term_result *t, const char **words, int *disagree)
{
    *disagree = 0;
    switch (t->verdict) {
    case STURDY_VERDICT_BOTH: *words = "both tests"; return;
    case STURDY_VERDICT_NEITHER: *words = "neither"; return;
    case STURDY_VERDICT_CLASSICAL_ONLY: *words = "F-test only"; *disagree = 1; return;
    case STURDY_VERDICT_RESAMPLING_ONLY: *words = "resampled only"; *disagree = 1; return;
    case STURDY_VERDICT_NONE: break;
    }
    *words = "n/a";
}

/* Why the resampling numbers of a term are absent. */
static const char *perm_reason(const tw *w, const sturdy_term_result *t)
{
    const sturdy_result *r = w->r;
    if (t->perm_note) return t->perm_note;
    if (r->nperm == 0) return w->no_perm;
    if (!r->finished) return "this is one shard of a split run; 'sturdy merge' completes it";
    return "not computed";
}

/* "test inversion", "noncentral F", "BCa", "percentile" */
static const char *ci_method_words(sturdy_ci_method m)
{
    switch (m) {
    case STURDY_CI_STUDENTIZED: return "studentized test inversion";
    case STURDY_CI_TEST_INVERSION: return "test inversion";
    case STURDY_CI_NONCENTRAL_F: return "noncentral F";
    case STURDY_CI_BCA: return "BCa";
    case STURDY_CI_PERCENTILE: return "percentile";
    case STURDY_CI_NONE: break;
    }
    return "none";
}

static const char *boot_reason(const tw *w, const sturdy_term_result *t)
{
    const sturdy_result *r = w->r;
    if (t->boot_note) return t->boot_note;
    if (r->nboot == 0 && r->opts.bootstrap == 0)
        return w->no_boot;
    if (r->nboot == 0) return "no residual degrees of freedom: there are no residuals to "
                              "resample";
    if (!r->finished) return "this is one shard of a split run; 'sturdy merge' completes it";
    return "not computed";
}

/* Why the verdict of a term is absent. */
static const char *verdict_reason_absent(const tw *w, const sturdy_term_result *t)
{
    if (isnan(t->p)) return t->note ? t->note : "the F-test could not be computed";
    if (isnan(t->p_perm)) return perm_reason(w, t);
    return t->verdict_reason ? t->verdict_reason : "not decided";
}

/* One row of the tests table; `label` NULL leaves the term cell blank. */
static void tests_row(tw *w, int wterm, const char *label, const char *df, const char *ss,
                      const char *f, const char *p, const char *pp, const char *puv,
                      const char *prs, const char *verdict, const char *color)
{
    tw_indent(w, 2);
    tw_cell(w, label ? label : "", wterm, 0);
    tw_put(w, " "); tw_cell(w, df, W_DF, 1);
    tw_put(w, " "); tw_cell(w, ss, W_SS, 1);
    tw_put(w, " "); tw_cell(w, f, W_F, 1);
    tw_put(w, "  "); tw_cell(w, p, W_P, 1);
    tw_put(w, "  "); tw_cell(w, pp, W_PP, 1);
    tw_put(w, "  "); tw_cell(w, puv, W_UV, 1);
    if (w->r->opts.resistant) { tw_put(w, "  "); tw_cell(w, prs, W_RS, 1); }
    if (verdict && *verdict) {
        tw_put(w, "  ");
        tw_style(w, color);
        tw_put(w, verdict);
        tw_style(w, color ? "0" : NULL);
    }
    tw_nl(w);
}

/* The term label, on its own line when it is wider than its column. */
static const char *term_cell(tw *w, const char *label, int width)
{
    if (tw_width(label) <= (size_t)width) return label;
    tw_para(w, 2, 4, label);
    return NULL;
}

/* The unequal-variance p of the table (uv_p), or "—" with the reason in a footnote. */
static void uv_p_cell(tw *w, const sturdy_term_result *t, char *out)
{
    const sturdy_uv_result *u = &t->uv;
    if (!isnan(u->p)) {
        tw_fmt_p(u->p, out);
    } else if (u->note && !isnan(t->p)) {
        snprintf(out, 32, "— [%zu]", tw_footnote(w, u->note));
    } else {
        tw_fmt_p(NAN, out);
    }
}

/* One line under a term: the unequal-variance test's statistic and its p-values. */
static void uv_details(tw *w, const sturdy_term_result *t)
{
    const sturdy_uv_result *u = &t->uv;
    if (isnan(u->wald)) return;
    sturdy_buf s;
    sturdy_buf_init(&s);
    char a[32], b[32], c[32], x[TW_RANGE_LEN];
    tw_fmt_g(u->stat, 4, a);
    tw_fmt_df(u->df1, b);
    tw_fmt_g(u->df2, 3, c);
    sturdy_buf_printf(&s, "unequal var: Welch–James F %s on %s and %s df (%s), ", a, b, c,
                      u->johansen ? "Johansen" : "residual df");
    tw_p_words(&s, u->p);
    if (!isnan(u->ats_p)) {
        sturdy_buf_puts(&s, "; ANOVA-type ");
        tw_p_words(&s, u->ats_p);
    }
    if (!isnan(u->p_perm)) {
        sturdy_buf_printf(&s, "; %s ", w->r->opts.spread_scheme == STURDY_SPREAD_PERMUTATION
                                           ? "permuted" : "wild-bootstrap");
        tw_p_words(&s, u->p_perm);
        if (!(w->r->exact && w->r->opts.spread_scheme == STURDY_SPREAD_PERMUTATION)) {
            tw_fmt_range(u->p_perm_ci, tw_fmt_pr, x);
            sturdy_buf_printf(&s, " (99%% range %s)", x);
        }
    }
    tw_para(w, DETAIL_INDENT, DETAIL_INDENT + 2, s.data ? s.data : "");
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
}

/* "partial η² 0.104: 95% test inversion 0.0003–0.29 (recommended); noncentral F 0–0.22,
 * BCa 0.0009–0.38": the recommended interval first with its method, the others after. */
static void partial_eta2_line(tw *w, const sturdy_term_result *t)
{
    const int e = STURDY_ES_PARTIAL_ETA2;
    static const sturdy_ci_method order[4] = { STURDY_CI_STUDENTIZED, STURDY_CI_TEST_INVERSION,
                                               STURDY_CI_NONCENTRAL_F, STURDY_CI_BCA };
    char x[32], c[32], range[TW_RANGE_LEN + 16];
    sturdy_buf s;
    sturdy_buf_init(&s);
    tw_fmt_g(w->r->opts.conf * 100, 4, c);
    tw_fmt_g(t->es[e], 3, x);
    sturdy_buf_printf(&s, "partial η² %s: %s%%", x, c);
    int rec = t->ci_rec_method[e];
    if (rec != STURDY_CI_NONE) {
        tw_fmt_range(t->ci_rec[e], tw_fmt_es, range);
        sturdy_buf_printf(&s, " %s %s (recommended)",
                          ci_method_words((sturdy_ci_method)rec), range);
    }
    int first = 1;
    for (int k = 0; k < 4; k++) {
        sturdy_pair p = order[k] == STURDY_CI_STUDENTIZED ? t->ci_sti[e]
                        : order[k] == STURDY_CI_TEST_INVERSION ? t->ci_ti[e]
                        : order[k] == STURDY_CI_NONCENTRAL_F ? t->ncf : t->ci_bca[e];
        if ((int)order[k] == rec)
            continue;
        /* the test inversions are absent without replicates: nothing to say then */
        if ((order[k] == STURDY_CI_TEST_INVERSION || order[k] == STURDY_CI_STUDENTIZED) &&
            isnan(p.lo))
            continue;
        tw_fmt_range(p, tw_fmt_es, range);
        if (order[k] == STURDY_CI_BCA && isnan(p.lo))
            snprintf(range + strlen(range), sizeof range - strlen(range), " [%zu]",
                     tw_footnote(w, boot_reason(w, t)));
        sturdy_buf_printf(&s, "%s %s %s", first ? (rec != STURDY_CI_NONE ? ";" : "") : ",",
                          ci_method_words(order[k]), range);
        first = 0;
    }
    if (s.failed) w->b->failed = 1;
    else tw_para(w, DETAIL_INDENT, DETAIL_INDENT + 2, s.data);
    sturdy_buf_free(&s);
}

static void term_details(tw *w, const sturdy_term_result *t)
{
    const sturdy_result *r = w->r;
    char s[600], x[TW_RANGE_LEN], y[32], z[32], c[32];
    tw_fmt_g(r->opts.conf * 100, 4, c);
    if (!isnan(t->p_perm)) {
        int n = 0;
        if (r->exact)
            n = snprintf(s, sizeof s, "resampled p is exact (all %llu rearrangements)",
                         (unsigned long long)r->nperm);
        else {
            tw_fmt_range(t->p_perm_ci, tw_fmt_pr, x);
            n = snprintf(s, sizeof s, "resampled p: 99%% range %s", x);
            /* --stop-early: which rule gave p, from how many rearrangements */
            unsigned long long L = (unsigned long long)t->perm_used;
            if (r->opts.stop_early && t->stopped_early == STURDY_SEQ_DECIDED && n > 0 &&
                (size_t)n < sizeof s)
                n += snprintf(s + n, sizeof s - (size_t)n, "; stopped early at rearrangement "
                              "%llu, p <= %g settled: %llu as extreme, p = (1 + %llu)/(1 + %llu)",
                              L, r->opts.alpha, (unsigned long long)t->exceed,
                              (unsigned long long)t->exceed, L);
            else if (r->opts.stop_early && t->stopped_early && n > 0 && (size_t)n < sizeof s)
                n += snprintf(s + n, sizeof s - (size_t)n, "; stopped early: %d as extreme "
                              "by rearrangement %llu, p = %d/%llu", STURDY_STOP_EARLY_H, L,
                              STURDY_STOP_EARLY_H, L);
            else if (r->opts.stop_early && n > 0 && (size_t)n < sizeof s)
                n += snprintf(s + n, sizeof s - (size_t)n, "; ran to the end: fewer than %d "
                              "as extreme in %llu", STURDY_STOP_EARLY_H, L);
        }
        if (!isnan(t->p_perm_fwer) && n > 0 && (size_t)n < sizeof s) {
            tw_fmt_p(t->p_perm_fwer, y);
            tw_fmt_p(t->p_perm_holm, z);
            snprintf(s + n, sizeof s - (size_t)n, "; family-wise %s (Westfall–Young), %s (Holm)",
                     y, z);
        }
        tw_para(w, DETAIL_INDENT, DETAIL_INDENT + 2, s);
    }
    uv_details(w, t);
    if (!isnan(t->es[STURDY_ES_PARTIAL_ETA2]))
        partial_eta2_line(w, t);
}

/* Width of the term column: the longest label up to W_TERM_MAX, at least `base`; a
 * longer label takes a line of its own and does not widen the column. */
static int term_width(const sturdy_response_result *rr, int base)
{
    int wt = base;
    for (size_t k = 0; k < rr->nterms; k++) {
        size_t l = rr->terms[k].label ? tw_width(rr->terms[k].label) : 0;
        if (l > (size_t)wt && l <= W_TERM_MAX) wt = (int)l;
    }
    return wt;
}

static void tests_table(tw *w, const sturdy_response_result *rr)
{
    char df[32], ss[32], ms[32], f[32], p[32], pp[32], puv[32], prs[32], v[64];
    int wt = term_width(rr, W_TERM);
    tw_indent(w, 2);
    tw_style(w, "1");
    tw_cell(w, "term", wt, 0);
    tw_put(w, " "); tw_cell(w, "df", W_DF, 1);
    tw_put(w, " "); tw_cell(w, "SS", W_SS, 1);
    tw_put(w, " "); tw_cell(w, "F", W_F, 1);
    tw_put(w, "  "); tw_cell(w, "p F-test", W_P, 1);
    tw_put(w, "  "); tw_cell(w, "p resampled", W_PP, 1);
    tw_put(w, "  "); tw_cell(w, "p unequal var", W_UV, 1);
    if (w->r->opts.resistant) { tw_put(w, "  "); tw_cell(w, "p resistant", W_RS, 1); }
    tw_put(w, "  F vs resampled");
    tw_style(w, "0");
    tw_nl(w);
    for (size_t k = 0; k < rr->nterms; k++) {
        const sturdy_term_result *t = &rr->terms[k];
        const char *words;
        int dis;
        verdict_words(t, &words, &dis);
        if (t->verdict == STURDY_VERDICT_NONE)
            snprintf(v, sizeof v, "n/a [%zu]", tw_footnote(w, verdict_reason_absent(w, t)));
        else
            snprintf(v, sizeof v, "%s", words);
        tw_fmt_df(t->df, df);
        tw_fmt_num_scaled(t->ss, rr->ss_total, ss);
        if (tw_is_noise(t->ss, rr->ss_total) && isfinite(t->f)) strcpy(f, "0");
        else tw_fmt_num(t->f, f);
        tw_fmt_p(t->p, p);
        tw_fmt_p(t->p_perm, pp);
        uv_p_cell(w, t, puv);
        tw_resistant_cell(w, t, prs);
        tests_row(w, wt, term_cell(w, t->label, wt), df, ss, f, p, pp, puv, prs, v,
                  dis ? "33" : NULL);
        term_details(w, t);
    }
    tw_fmt_df(rr->df_error, df);
    tw_fmt_num_scaled(rr->ss_error, rr->ss_total, ss);
    tw_fmt_num_scaled(rr->ms_error, rr->ss_total, ms);
    v[0] = '\0';
    if (rr->error_note) snprintf(v, sizeof v, "[%zu]", tw_footnote(w, rr->error_note));
    tests_row(w, wt, "residual", df, ss, "", "", "", "", "", v, NULL);
    tw_fmt_df(rr->df_total, df);
    tw_fmt_num(rr->ss_total, ss);
    tests_row(w, wt, "total", df, ss, "", "", "", "", "", NULL, NULL);
    if (!isnan(rr->ms_error))
        tw_paraf(w, 2, 4, "residual mean square %s (SS/df); the mean squares of the terms "
                 "are in the JSON and CSV output", ms);
    tw_resistant_note(w, rr);
    tw_tail_note(w, rr);
    tw_footnotes(w);
}

/* The method most terms' recommended interval of effect size e takes (the column's), or
 * STURDY_CI_NONE. */
/* interval methods other than STURDY_CI_NONE: 0 … CI_METHODS − 1 */
#define CI_METHODS (STURDY_CI_STUDENTIZED + 1)

static int column_method(const sturdy_response_result *rr, int e)
{
    int count[CI_METHODS] = { 0 }, best = STURDY_CI_NONE;
    for (size_t k = 0; k < rr->nterms; k++) {
        int m = rr->terms[k].ci_rec_method[e];
        if (m >= 0 && m < CI_METHODS) count[m]++;
    }
    for (int m = 0; m < CI_METHODS; m++)
        if (count[m] > 0 && (best == STURDY_CI_NONE || count[m] > count[best])) best = m;
    return best;
}

/* "test inversion for partial η², partial ω² and Cohen's f; BCa for η² and ω²" */
static void methods_summary(sturdy_buf *s, const int col[STURDY_NES],
                            const char *const heads[STURDY_NES])
{
    int any = 0;
    for (int m = CI_METHODS - 1; m >= 0; m--) {
        int n = 0, total = 0;
        for (int e = 0; e < STURDY_NES; e++) total += col[e] == m;
        for (int e = 0; e < STURDY_NES; e++) {
            if (col[e] != m) continue;
            if (n == 0) sturdy_buf_printf(s, "%s%s for ", any ? "; " : "",
                                          ci_method_words((sturdy_ci_method)m));
            sturdy_buf_printf(s, "%s%s", n == 0 ? "" : n == total - 1 ? " and " : ", ",
                              heads[e]);
            n++;
            any = 1;
        }
    }
    if (!any) sturdy_buf_puts(s, "none");
}

/* One line, once per report, where a term is significant at α while its recommended
 * interval of partial η² starts at 0. */
static void zero_explained(tw *w, const sturdy_response_result *rr)
{
    const sturdy_result *r = w->r;
    const int e = STURDY_ES_PARTIAL_ETA2;
    if (w->explained_zero) return;
    int seen = 0, studentized = 0;
    for (size_t k = 0; k < rr->nterms && !seen; k++) {
        const sturdy_term_result *t = &rr->terms[k];
        seen = (t->p < r->opts.alpha || t->p_perm < r->opts.alpha) &&
               t->ci_rec_method[e] != STURDY_CI_NONE && t->ci_rec[e].lo == 0;
        studentized = seen && t->ci_rec_method[e] == STURDY_CI_STUDENTIZED;
    }
    if (!seen) return;
    w->explained_zero = 1;
    char c[32], half[32], a[32], c2[32], how[64] = "";
    tw_fmt_g(r->opts.conf * 100, 4, c);
    tw_fmt_g((1 - r->opts.conf) / 2, 4, half);
    tw_fmt_g(r->opts.alpha, 4, a);
    tw_fmt_g((1 - 2 * r->opts.alpha) * 100, 4, c2);
    const char *conf = tw_name(w, STURDY_SETTING_CONF);
    if (conf) snprintf(how, sizeof how, " (%s %g)", conf, 1 - 2 * r->opts.alpha);
    if (studentized) {
        char lo[32], lopct[32];
        tw_fmt_g((1 - r->opts.conf) / 10, 4, lo);
        tw_fmt_g(100 - (1 - r->opts.conf) * 10, 4, lopct);
        tw_paraf(w, 2, 2, "A term can be significant at α = %s while its recommended %s%% "
                 "interval of partial η² starts at 0: that interval's lower end is a "
                 "one-sided %s%% bound, which leaves 0 only when a null effect is rejected at "
                 "about %s; the noncentral-F interval at %s%%%s, in the JSON and CSV, is the "
                 "one that matches the F-test at α = %s.", a, c, lopct, lo, c2, how, a);
    } else {
        tw_paraf(w, 2, 2, "A term can be significant at α = %s while its %s%% interval of "
                 "partial η² starts at 0: a two-sided %s%% interval matches a one-sided test "
                 "at %s; the %s%% interval%s is the one that matches the F-test at α = %s.",
                 a, c, c, half, c2, how, a);
    }
    tw_nl(w);
}

static void effects_table(tw *w, const sturdy_response_result *rr)
{
    static const char *const heads[STURDY_NES] = { "η²", "partial η²", "ω²", "partial ω²",
                                                   "Cohen's f" };
    char c[32], x[TW_RANGE_LEN + 16];
    int col[STURDY_NES];
    for (int e = 0; e < STURDY_NES; e++) col[e] = column_method(rr, e);
    tw_fmt_g(w->r->opts.conf * 100, 4, c);
    sturdy_buf s;
    sturdy_buf_init(&s);
    sturdy_buf_printf(&s, "Effect sizes, with the recommended %s%% interval under each: ", c);
    methods_summary(&s, col, heads);
    sturdy_buf_puts(&s, " (the others: JSON/CSV)");
    if (s.failed) w->b->failed = 1;
    else tw_para(w, 2, 2, s.data);
    sturdy_buf_free(&s);
    tw_indent(w, 2);
    tw_style(w, "1");
    int wt = term_width(rr, W_ES_TERM);
    tw_cell(w, "term", wt, 0);
    for (int e = 0; e < STURDY_NES; e++) { tw_put(w, "  "); tw_cell(w, heads[e], W_ES, 1); }
    tw_style(w, "0");
    tw_nl(w);
    for (size_t k = 0; k < rr->nterms; k++) {
        const sturdy_term_result *t = &rr->terms[k];
        const char *label = term_cell(w, t->label, wt);
        tw_indent(w, 2);
        tw_cell(w, label ? label : "", wt, 0);
        for (int e = 0; e < STURDY_NES; e++) {
            tw_fmt_g(tw_is_noise(t->es[e], 1.0) ? 0.0 : t->es[e], 3, x);
            tw_put(w, "  ");
            tw_cell(w, x, W_ES, 1);
        }
        tw_nl(w);
        if (isnan(t->es[STURDY_ES_PARTIAL_ETA2])) continue;
        tw_indent(w, 2);
        /* what the interval note says (clamped, or an estimate outside) as a footnote */
        if (t->ci_note) snprintf(x, sizeof x, "  [%zu]", tw_footnote(w, t->ci_note));
        else x[0] = '\0';
        tw_cell(w, x, wt, 0);
        for (int e = 0; e < STURDY_NES; e++) {
            tw_fmt_range(t->ci_rec[e], tw_fmt_es, x);
            /* a missing interval, or one of another method than the column's, says why */
            if ((t->ci_rec_method[e] == STURDY_CI_NONE || t->ci_rec_method[e] != col[e]) &&
                !isnan(t->es[e]))
                snprintf(x + strlen(x), sizeof x - strlen(x), " [%zu]",
                         tw_footnote(w, t->ci_rec_reason[e] ? t->ci_rec_reason[e]
                                                            : boot_reason(w, t)));
            tw_put(w, "  ");
            tw_cell(w, x, W_ES, 1);
        }
        tw_nl(w);
    }
    tw_footnotes(w);
    zero_explained(w, rr);
}

/* Cells listed in the text report; the JSON output has them all. */
#define CELLS_SHOWN 24

static void cells_table(tw *w, const sturdy_response_result *rr)
{
    const sturdy_design *d = w->r->design;
    size_t shown = d->ncells < CELLS_SHOWN ? d->ncells : CELLS_SHOWN;
    tw_para(w, 2, 2, "Cells: rows, mean and standard deviation of the response");
    tw_indent(w, 2);
    tw_style(w, "1");
    tw_cell(w, "cell", 60, 0);
    tw_cell(w, "rows", 6, 1);
    tw_cell(w, "mean", 12, 1);
    tw_cell(w, "SD", 12, 1);
    tw_style(w, "0");
    tw_nl(w);
    sturdy_buf label;
    sturdy_buf_init(&label);
    for (size_t c = 0; c < shown; c++) {
        char n[32], m[32], sd[32];
        label.len = 0;
        if (label.data) label.data[0] = '\0';
        sturdy_report_cell_label(d, c, &label);
        const char *text = label.data ? label.data : "";
        snprintf(n, sizeof n, "%zu", d->cell_count[c]);
        tw_fmt_g(rr->cell_mean[c], 4, m);
        tw_fmt_g(rr->cell_sd[c], 4, sd);
        const char *shown_label = term_cell(w, text, 60);
        tw_indent(w, 2);
        tw_cell(w, shown_label ? shown_label : "", 60, 0);
        tw_cell(w, n, 6, 1);
        tw_cell(w, m, 12, 1);
        tw_cell(w, sd, 12, 1);
        tw_nl(w);
    }
    if (label.failed) w->b->failed = 1;
    sturdy_buf_free(&label);
    if (d->ncells > shown)
        tw_paraf(w, 4, 4, "and %zu more cells (see the JSON output)", d->ncells - shown);
    if (d->ncells < d->ncells_possible)
        tw_paraf(w, 4, 4, "%zu of the %zu possible cells %s empty",
                 d->ncells_possible - d->ncells, d->ncells_possible,
                 d->ncells_possible - d->ncells == 1 ? "is" : "are");
    tw_nl(w);
}

/* Is the note one of the warnings about levels shown under the headline? */
static int is_level_warning(const sturdy_design *d, const char *note)
{
    for (size_t i = 0; d && note && i < d->nwarnings; i++)
        if (!strcmp(d->warnings[i], note)) return 1;
    return 0;
}

static void notes(tw *w)
{
    const sturdy_result *r = w->r;
    const sturdy_design *d = r->design;
    size_t shown = 0;
    for (size_t i = 0; i < r->nnotes; i++) shown += !is_level_warning(d, r->notes[i]);
    if (shown == 0 && (!d || d->ndropped == 0)) return;
    tw_heading(w, "Notes");
    if (d && d->ndropped) {
        tw_paraf(w, 2, 4, "• %zu row%s left out of the analysis:", d->ndropped,
                 d->ndropped == 1 ? " was" : "s were");
        for (size_t i = 0; i < d->ndropped && i < TW_LIST_MAX; i++)
            tw_paraf(w, 4, 6, "row %zu (line %zu): %s", d->dropped[i].row + 1,
                     d->dropped[i].line, d->dropped[i].reason ? d->dropped[i].reason : "?");
        if (d->ndropped > TW_LIST_MAX)
            tw_paraf(w, 4, 6, "and %zu more (see the JSON output)", d->ndropped - TW_LIST_MAX);
    }
    for (size_t i = 0; i < r->nnotes; i++)
        if (!is_level_warning(d, r->notes[i]))
            tw_paraf(w, 2, 4, "• %s", r->notes[i] ? r->notes[i] : "");
}

sturdy_status sturdy_report_text(const sturdy_result *r, const sturdy_report_opts *o,
                                 sturdy_buf *out)
{
    sturdy_report_opts defaults;
    if (r->read_back)
        return STURDY_EUSAGE;   /* no design to describe: the file read is the report */
    if (!o) { sturdy_report_opts_init(&defaults); o = &defaults; }
    tw w;
    tw_init(&w, r, o, out);
    tw_style(&w, "1");
    tw_put(&w, "sturdy " STURDY_VERSION " · factorial ANOVA, checked by resampling");
    tw_style(&w, "0");
    tw_nl(&w);
    tw_nl(&w);
    tw_headline(&w);
    tw_run_section(&w);
    for (size_t i = 0; i < r->nresp; i++) {
        const sturdy_response_result *rr = &r->resp[i];
        sturdy_buf title;
        sturdy_buf_init(&title);
        sturdy_buf_printf(&title, "Response %s", rr->name ? rr->name : "?");
        tw_rule(&w, title.data ? title.data : "Response");
        if (title.failed) out->failed = 1;
        sturdy_buf_free(&title);
        tests_table(&w, rr);
        effects_table(&w, rr);
        tw_compare_section(&w, rr);
        cells_table(&w, rr);
        tw_checks(&w, rr);
    }
    notes(&w);
    return out->failed ? STURDY_EINTERNAL : STURDY_OK;
}
