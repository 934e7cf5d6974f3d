/* csv.c — the result as CSV: a header, then one row per response × term, and
 * per response a "residual" and a "total" row (df, ss, ms; the rest empty). */
#include <inttypes.h>
#include <math.h>
#include <string.h>

#include "core/result.h"
#include "resampling/tail.h"
#include "sturdy/report.h"

/* A text field, quoted (RFC 4180: quotes doubled) when it holds the delimiter, a quote,
 * a line break, or leading/trailing blanks that a reader would trim. */
static void csv_text(sturdy_buf *b, const char *s)
{
    if (!s) return;
    size_t n = strlen(s);
    int quote = n && (s[0] == ' ' || s[0] == '\t' || s[n - 1] == ' ' || s[n - 1] == '\t');
    if (strpbrk(s, ",\"\r\n")) quote = 1;
    if (!quote) { sturdy_buf_put(b, s, n); return; }
    sturdy_buf_put(b, "\"", 1);
    for (const char *p = s; *p; p++) {
        if (*p == '"') sturdy_buf_put(b, "\"\"", 2);
        else sturdy_buf_put(b, p, 1);
    }
    sturdy_buf_put(b, "\"", 1);
}

static void csv_num(sturdy_buf *b, double v)
{
    char s[32];
    sturdy_buf_put(b, ",", 1);
    if (!isfinite(v)) return;           /* null → empty field */
    sturdy_format_double(v, s);
    sturdy_buf_puts(b, s);
}

/* Notes of a term joined with "; " into one field. */
static void csv_notes(sturdy_buf *b, const sturdy_term_result *t)
{
    const char *parts[4] = { t->note, t->perm_note, t->boot_note, t->ci_note };
    sturdy_buf joined;
    sturdy_buf_init(&joined);
    for (int i = 0; i < 4; i++) {
        if (!parts[i]) continue;
        if (joined.len) sturdy_buf_puts(&joined, "; ");
        sturdy_buf_puts(&joined, parts[i]);
    }
    sturdy_buf_put(b, ",", 1);
    if (joined.failed) b->failed = 1;
    if (joined.len) csv_text(b, joined.data);
    sturdy_buf_free(&joined);
}

static void write_header(sturdy_buf *b, int tail_fit, int stop_early);

/* Columns of the header after response, term, df, ss, ms: each a comma, never a line
 * break, so counting them from the header keeps the residual rows in step with it.
 * Marks `out` failed when the scratch copy runs out of memory (the count would be short). */
static size_t header_tail(sturdy_buf *out)
{
    sturdy_buf h;
    sturdy_buf_init(&h);
    write_header(&h, 0, 0);
    if (h.failed) out->failed = 1;
    size_t commas = 0;
    for (size_t i = 0; i < h.len; i++) commas += h.data[i] == ',';
    sturdy_buf_free(&h);
    return commas > 4 ? commas - 4 : 0;
}

/* "residual" or "total" row: df, ss, ms (empty when NaN); `note` in the note column. */
static void write_error_row(sturdy_buf *b, const sturdy_response_result *rr,
                            const char *what, double df, double ss, double ms,
                            const char *note, size_t tail, int tail_fit, int stop_early)
{
    csv_text(b, rr->name);
    sturdy_buf_put(b, ",", 1);
    sturdy_buf_puts(b, what);
    csv_num(b, df);
    csv_num(b, ss);
    csv_num(b, ms);
    for (size_t i = 0; i < tail; i++) {
        sturdy_buf_put(b, ",", 1);
        /* 12 unequal-variance and 11 single-row and resistant columns follow the note */
        if (i + 1 == tail - 23 && note) csv_text(b, note);
    }
    if (tail_fit) sturdy_buf_puts(b, ",,,,,,,,");
    if (stop_early) sturdy_buf_puts(b, ",,");
    sturdy_buf_put(b, "\n", 1);
}

/* With --tail-fit only, after the others: the GPD tail's p and its fit (tail.c). */
#define CSV_TAIL_COLUMNS ",p_tail,tail_status,tail_n_exc,tail_threshold,tail_shape," \
                         "tail_scale,tail_ad,tail_ad_p"

/* With --stop-early only, last: the rearrangements behind p_perm, whether it stopped and
 * by which rule. */
#define CSV_STOP_COLUMNS ",perm_used,stopped_early,stop_rule"

static void write_header(sturdy_buf *b, int tail_fit, int stop_early)
{
    sturdy_buf_puts(b, "response,term,df,ss,ms,f,p,p_perm,p_perm_lo,p_perm_hi,"
                       "p_perm_fwer,p_perm_holm");
    for (int e = 0; e < STURDY_NES; e++) sturdy_buf_printf(b, ",%s", sturdy_es_names[e]);
    for (int e = 0; e < STURDY_NES; e++) {
        const char *n = sturdy_es_names[e];
        sturdy_buf_printf(b, ",%s_pct_lo,%s_pct_hi,%s_bca_lo,%s_bca_hi", n, n, n, n);
        if (e == STURDY_ES_PARTIAL_ETA2)
            sturdy_buf_printf(b, ",%s_ncf_lo,%s_ncf_hi", n, n);
        sturdy_buf_printf(b, ",%s_ti_lo,%s_ti_hi,%s_sti_lo,%s_sti_hi,%s_rec_method,%s_rec_lo,"
                          "%s_rec_hi", n, n, n, n, n, n, n);
    }
    sturdy_buf_puts(b, ",exceed,verdict,p_perm_straddles_alpha,verdict_reason,note");
    sturdy_buf_puts(b, ",uv_wald,uv_statistic,uv_df1,uv_df2,uv_p,uv_p_perm,uv_p_perm_lo,"
                       "uv_p_perm_hi,ats_statistic,ats_df1,ats_df2,ats_p");
    sturdy_buf_puts(b, ",rows_to_change,sens_direction,sens_rows,sens_lines,p_without,"
                       "p_perm_without,rs_statistic,rs_p_perm,rs_p_perm_lo,rs_p_perm_hi,"
                       "rs_scale");
    if (tail_fit) sturdy_buf_puts(b, CSV_TAIL_COLUMNS);
    sturdy_buf_puts(b, stop_early ? CSV_STOP_COLUMNS "\n" : "\n");
}

static void write_tail(sturdy_buf *b, const sturdy_term_result *t)
{
    const sturdy_tail_fit *f = &t->tail;
    csv_num(b, t->p_tail);
    sturdy_buf_put(b, ",", 1);
    if (f->status != STURDY_TAIL_OFF) sturdy_buf_puts(b, sturdy_tail_status_name(f->status));
    csv_num(b, f->n_tried ? (double)f->n_exc : NAN);
    csv_num(b, f->threshold);
    csv_num(b, f->xi);
    csv_num(b, f->sigma);
    csv_num(b, f->ad);
    csv_num(b, f->ad_p);
}

/* Single rows and the resistant test: rows_to_change, its direction, the rows and their
 * file lines (joined by ';'), the p without them (F-test, resampled), then the resistant
 * statistic, its p, interval and scale (empty without --resistant). */
static void write_sens_rs(sturdy_buf *b, const sturdy_result *r, const sturdy_term_result *t)
{
    const sturdy_sensitivity *sv = &t->sens;
    sturdy_buf_put(b, ",", 1);
    if (sv->nrows) sturdy_buf_printf(b, "%zu", sv->nrows);
    sturdy_buf_put(b, ",", 1);
    if (sv->nrows)
        sturdy_buf_puts(b, sv->direction == STURDY_SENS_CREATES ? "creates" : "hides");
    for (int pass = 0; pass < 2; pass++) {
        sturdy_buf_put(b, ",", 1);
        for (size_t j = 0; j < sv->nrows; j++)
            sturdy_buf_printf(b, "%s%zu", j ? ";" : "", pass ? sv->rows[j].line : sv->rows[j].row);
    }
    csv_num(b, sv->nrows ? sv->p_without : NAN);
    csv_num(b, sv->nrows ? sv->p_perm_without : NAN);
    const sturdy_rs_result *rs = &t->rs;
    int on = r->opts.resistant;
    const double v[] = { on ? rs->stat : NAN, on ? rs->p_perm : NAN,
                         on ? rs->p_perm_ci.lo : NAN, on ? rs->p_perm_ci.hi : NAN,
                         on ? rs->scale : NAN };
    for (size_t i = 0; i < sizeof v / sizeof *v; i++) csv_num(b, v[i]);
}

/* The ASCII joiner of factor names in term names. Not '×' (outside ASCII), and not ':',
 * '*', '/' or '|', which are model-formula operators in other programs, where "A:B" or
 * "A*B" would read as a formula rather than a name; "_by_" is a plain word that most
 * spreadsheets and languages also accept inside an identifier. */
#define ASCII_JOINER "_by_"

static void term_name(sturdy_buf *b, const sturdy_term_result *t, int ascii)
{
    if (!ascii || t->kind != STURDY_TERM_FACTORS || t->nfactors < 2) {
        csv_text(b, t->label);
        return;
    }
    sturdy_buf joined;
    sturdy_buf_init(&joined);
    for (size_t f = 0; f < t->nfactors; f++)
        sturdy_buf_printf(&joined, "%s%s", f ? ASCII_JOINER : "", t->factors[f]);
    if (joined.failed) b->failed = 1;
    else csv_text(b, joined.data);
    sturdy_buf_free(&joined);
}

static void write_row(sturdy_buf *b, const sturdy_result *r, const sturdy_response_result *rr,
                      const sturdy_term_result *t, int ascii)
{
    csv_text(b, rr->name);
    sturdy_buf_put(b, ",", 1);
    term_name(b, t, ascii);
    csv_num(b, t->df);
    csv_num(b, t->ss);
    csv_num(b, t->ms);
    csv_num(b, t->f);
    csv_num(b, t->p);
    csv_num(b, t->p_perm);
    csv_num(b, t->p_perm_ci.lo);
    csv_num(b, t->p_perm_ci.hi);
    csv_num(b, t->p_perm_fwer);
    csv_num(b, t->p_perm_holm);
    for (int e = 0; e < STURDY_NES; e++) csv_num(b, t->es[e]);
    for (int e = 0; e < STURDY_NES; e++) {
        csv_num(b, t->ci_pct[e].lo);
        csv_num(b, t->ci_pct[e].hi);
        csv_num(b, t->ci_bca[e].lo);
        csv_num(b, t->ci_bca[e].hi);
        if (e == STURDY_ES_PARTIAL_ETA2) {
            csv_num(b, t->ncf.lo);
            csv_num(b, t->ncf.hi);
        }
        csv_num(b, t->ci_ti[e].lo);
        csv_num(b, t->ci_ti[e].hi);
        csv_num(b, t->ci_sti[e].lo);
        csv_num(b, t->ci_sti[e].hi);
        sturdy_buf_put(b, ",", 1);
        if (t->ci_rec_method[e] != STURDY_CI_NONE)
            sturdy_buf_puts(b, sturdy_ci_method_name((sturdy_ci_method)t->ci_rec_method[e]));
        csv_num(b, t->ci_rec[e].lo);
        csv_num(b, t->ci_rec[e].hi);
    }
    int has_perm = !isnan(t->p_perm);
    sturdy_buf_put(b, ",", 1);
    if (has_perm) sturdy_buf_printf(b, "%" PRIu64, t->exceed);
    sturdy_buf_put(b, ",", 1);
    const char *v = sturdy_verdict_name(t->verdict);
    if (v) sturdy_buf_puts(b, v);
    sturdy_buf_put(b, ",", 1);
    if (has_perm) sturdy_buf_puts(b, t->straddles ? "true" : "false");
    sturdy_buf_put(b, ",", 1);
    csv_text(b, t->verdict_reason);
    csv_notes(b, t);
    const sturdy_uv_result *u = &t->uv;
    const double uv[] = { u->wald, u->stat, u->df1, u->df2, u->p, u->p_perm, u->p_perm_ci.lo,
                          u->p_perm_ci.hi, u->ats, u->ats_df1, u->ats_df2, u->ats_p };
    for (size_t i = 0; i < sizeof uv / sizeof *uv; i++)
        csv_num(b, uv[i]);
    write_sens_rs(b, r, t);
    if (r->opts.tail_fit) write_tail(b, t);
    if (r->opts.stop_early) {   /* with --stop-early only, last */
        int seq = !r->exact && !isnan(t->p_perm);
        sturdy_buf_put(b, ",", 1);
        if (seq) sturdy_buf_printf(b, "%" PRIu64, t->perm_used);
        sturdy_buf_put(b, ",", 1);
        if (seq) sturdy_buf_puts(b, t->stopped_early ? "yes" : "no");
        sturdy_buf_put(b, ",", 1);
        if (seq) sturdy_buf_puts(b, sturdy_stop_rule_name(t->stopped_early));
    }
    sturdy_buf_put(b, "\n", 1);
}

sturdy_status sturdy_report_csv(const sturdy_result *r, const sturdy_report_opts *o,
                                sturdy_buf *out)
{
    sturdy_report_opts defaults;
    if (r->read_back)
        return STURDY_EUSAGE;   /* no design to describe: the file read is the report */
    if (!o) { sturdy_report_opts_init(&defaults); o = &defaults; }
    if (o->bom) sturdy_buf_puts(out, "\xEF\xBB\xBF");
    write_header(out, r->opts.tail_fit, r->opts.stop_early);
    size_t tail = header_tail(out);
    for (size_t i = 0; i < r->nresp; i++) {
        const sturdy_response_result *rr = &r->resp[i];
        for (size_t k = 0; k < rr->nterms; k++)
            write_row(out, r, rr, &rr->terms[k], o->ascii_terms);
        write_error_row(out, rr, "residual", rr->df_error, rr->ss_error, rr->ms_error,
                        rr->error_note, tail, r->opts.tail_fit, r->opts.stop_early);
        write_error_row(out, rr, "total", rr->df_total, rr->ss_total, NAN, NULL, tail,
                        r->opts.tail_fit, r->opts.stop_early);
    }
    return out->failed ? STURDY_EINTERNAL : STURDY_OK;
}

/* The marginal means and comparisons (report.h): one row each, per response. */
sturdy_status sturdy_report_csv_comparisons(const sturdy_result *r,
                                            const sturdy_report_opts *o, sturdy_buf *out)
{
    sturdy_report_opts defaults;
    if (r->read_back)
        return STURDY_EUSAGE;
    if (!o) { sturdy_report_opts_init(&defaults); o = &defaults; }
    if (o->bom) sturdy_buf_puts(out, "\xEF\xBB\xBF");
    sturdy_buf_puts(out, "kind,response,term,levels,factor,level,versus,within,estimate,se,df,"
                         "t,p,hedges_g,ci_lo,ci_hi,adjustment,ci_simultaneous_lo,"
                         "ci_simultaneous_hi,p_adjusted,p_perm_adjusted,p_boot_adjusted,"
                         "ci_bootstrap_lo,ci_bootstrap_hi,reported,note\n");
    sturdy_buf s;
    sturdy_buf_init(&s);
    for (size_t i = 0; i < r->nresp; i++) {
        const sturdy_response_result *rr = &r->resp[i];
        sturdy_mean_info m;
        for (size_t k = 0; sturdy_result_mean(r, i, k, &m); k++) {
            sturdy_buf_puts(out, "mean,");
            csv_text(out, rr->name);
            sturdy_buf_put(out, ",", 1);
            term_name(out, &rr->terms[rr->means[k].term], o->ascii_terms);
            s.len = 0;
            for (size_t f = 0; f < m.nfactors; f++)
                sturdy_buf_printf(&s, "%s%s=%s", f ? ";" : "", m.factors[f], m.levels[f]);
            sturdy_buf_put(out, ",", 1);
            csv_text(out, s.len ? s.data : "");
            sturdy_buf_puts(out, ",,,,");
            csv_num(out, m.estimate);
            csv_num(out, m.se);
            csv_num(out, m.df);
            sturdy_buf_puts(out, ",,,");
            csv_num(out, m.ci_lo);
            csv_num(out, m.ci_hi);
            sturdy_buf_puts(out, ",,,,,,");
            csv_num(out, r->resp[i].means[k].ci_boot.lo);
            csv_num(out, r->resp[i].means[k].ci_boot.hi);
            sturdy_buf_puts(out, ",,");
            csv_text(out, m.note);
            sturdy_buf_put(out, "\n", 1);
        }
        sturdy_comparison_info c;
        for (size_t k = 0; sturdy_result_comparison(r, i, k, &c); k++) {
            sturdy_buf_puts(out, "comparison,");
            csv_text(out, rr->name);
            sturdy_buf_put(out, ",", 1);
            term_name(out, &rr->terms[rr->comparisons[k].term], o->ascii_terms);
            sturdy_buf_puts(out, ",,");
            csv_text(out, c.factor);
            sturdy_buf_put(out, ",", 1);
            csv_text(out, c.level);
            sturdy_buf_put(out, ",", 1);
            csv_text(out, c.versus);
            s.len = 0;
            if (c.by_factor) sturdy_buf_printf(&s, "%s=%s", c.by_factor, c.by_level);
            sturdy_buf_put(out, ",", 1);
            csv_text(out, s.len ? s.data : "");
            csv_num(out, c.estimate);
            csv_num(out, c.se);
            csv_num(out, c.df);
            csv_num(out, c.t);
            csv_num(out, c.p);
            csv_num(out, c.hedges_g);
            csv_num(out, c.ci_lo);
            csv_num(out, c.ci_hi);
            sturdy_buf_put(out, ",", 1);
            csv_text(out, c.adjustment);
            csv_num(out, c.sim_lo);
            csv_num(out, c.sim_hi);
            csv_num(out, c.p_adjusted);
            csv_num(out, c.p_perm_adjusted);
            csv_num(out, c.p_boot_adjusted);
            csv_num(out, c.boot_sim_lo);
            csv_num(out, c.boot_sim_hi);
            sturdy_buf_puts(out, c.reported ? ",true," : ",false,");
            csv_text(out, c.note ? c.note : c.perm_note);
            sturdy_buf_put(out, "\n", 1);
        }
    }
    if (s.failed) out->failed = 1;
    sturdy_buf_free(&s);
    return out->failed ? STURDY_EINTERNAL : STURDY_OK;
}
