/* text.h — drawing helpers of the text report (private to text.c, its text_*.c parts,
 * textfmt.c and run.c). */
#ifndef STURDY_REPORT_TEXT_H
#define STURDY_REPORT_TEXT_H

#include "core/result.h"
#include "sturdy/report.h"

/* Footnotes one table may carry; beyond that the last one points to the JSON output. */
#define TW_MAX_FOOTNOTES 32
/* Narrowest prose width honoured, whatever the options ask. */
#define TW_MIN_WIDTH 60
/* Label column of tw_labelled, after a 2-blank indent. */
#define TW_LABEL_WIDTH 14
/* Right edge of the section rules (the widest table is 99 columns). */
#define TW_RULE_WIDTH 99

typedef struct {
    sturdy_buf *b;
    const sturdy_result *r;
    int width;                 /* prose wraps at this many columns */
    int color;
    size_t col;                /* display column of the line being written */
    size_t nfn;
    const char *fn[TW_MAX_FOOTNOTES];
    const char *const *names;  /* the caller's names of settings (report.h), entries NULL */
    char no_perm[96], no_boot[96], json_more[96]; /* reasons that name a setting */
    int explained_zero;        /* the "significant, yet the interval reaches 0" line is out */
} tw;

/* A no-break space: tw_para never breaks a line there (it prints as a plain space). */
#define NBSP "\xc2\xa0"
/* How many outliers and dropped rows are listed by row before "and N more". */
#define TW_LIST_MAX 8

/* The unequal-variance p a term is judged by: the approximate-F p (Johansen 1980 for
 * factor-only models), the best calibrated of the unequal-variance tests in the README's
 * table; the resampled versions run liberal in cells of three rows. */
static inline double tw_uv_p(const sturdy_uv_result *u)
{
    return u->p;
}

/* The caller's name of setting k, or NULL (the report then says it in words). */
const char *tw_name(const tw *w, sturdy_setting k);

void tw_init(tw *w, const sturdy_result *r, const sturdy_report_opts *o, sturdy_buf *out);

/* Display columns of a UTF-8 string: code points, not counting ANSI escape sequences. */
size_t tw_width(const char *s);

void tw_put(tw *w, const char *s);
void tw_nl(tw *w);
void tw_indent(tw *w, int n);
/* `s` padded to `width` columns, right-aligned when `right`. */
void tw_cell(tw *w, const char *s, int width, int right);
/* ANSI SGR `code` ("1" bold, "33" yellow, "0" reset) when colour is on; NULL: nothing. */
void tw_style(tw *w, const char *code);
/* A wrapped paragraph: the first line indented by `first`, the others by `rest`. */
void tw_para(tw *w, int first, int rest, const char *text);
/* The same with printf formatting (no length limit). */
void tw_paraf(tw *w, int first, int rest, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
/* "  label         text…" with the text wrapped under itself. */
void tw_labelled(tw *w, const char *label, const char *text);
void tw_labelledf(tw *w, const char *label, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
void tw_heading(tw *w, const char *title);
/* "── title ─────…" across the report. */
void tw_rule(tw *w, const char *title);
/* Number (1-based) of the footnote carrying `reason`, added if new. */
size_t tw_footnote(tw *w, const char *reason);
/* Print the footnotes collected since the last call, then forget them. */
void tw_footnotes(tw *w);

/* run.c: the headline's lead when no term has an F-test (no residual degrees of
 * freedom, or every term confounded): the one cause, once; returns 1 when it wrote it. */
int tw_untested_cause(tw *w);
/* text_compare.c: the means and differences of the reported terms (nothing when none). */
void tw_compare_section(tw *w, const sturdy_response_result *rr);
/* text_sensitivity.c: the headline's lead when at most 2 rows decide a term
 * (sensitivity.decisive), and the "single rows" line of a response's checks. */
void tw_sensitivity_headline(tw *w);
void tw_sensitivity_check(tw *w, const sturdy_response_result *rr);
/* text_resistant.c: the resistant test's cell of the tests table ("—" with a footnote
 * when absent), the line stating its tuning constant and scale, and the headline's lead
 * when it disagrees with both other tests (rs.disagrees). */
void tw_resistant_cell(tw *w, const sturdy_term_result *t, char *out);
void tw_resistant_note(tw *w, const sturdy_response_result *rr);
/* The tail p-values of --tail-fit (text_tail.c): a paragraph under the tests table. */
void tw_tail_note(tw *w, const sturdy_response_result *rr);
void tw_resistant_headline(tw *w);
/* text_resistant.c: the headline's line on multiplicity: which p the verdicts use and how
 * many terms stay significant after the family-wise adjustment (report/family.h). */
void tw_family_line(tw *w, const char *alpha);
/* run.c: the section "The run". */
void tw_run_section(tw *w);
/* text_headline.c: the headline, "In short". */
void tw_headline(tw *w);
/* text_checks.c: a response's checks on the residuals. */
void tw_checks(tw *w, const sturdy_response_result *rr);

/* Number formats; each writes "—" for NaN into `out` (≥ 32 bytes; TW_RANGE_LEN for a
 * range "lo–hi"). */
#define TW_RANGE_LEN 72
void tw_fmt_g(double v, int prec, char *out);
void tw_fmt_num(double v, char *out);    /* SS, MS, F: 4 significant digits, no exponent
                                            below 1e9 */
void tw_fmt_p(double v, char *out);      /* p-values: "<0.0001", "0.00034", "0.0123" */
/* "p = 0.0123" or "p < 0.0001" appended to b. */
void tw_p_words(sturdy_buf *b, double p);
void tw_fmt_pr(double v, char *out);     /* a bound of a p-value range: as p, but 0 as
                                            "0" and tiny values as "2.5e-05" */
void tw_fmt_es(double v, char *out);     /* interval bounds: 2 significant digits */
void tw_fmt_df(double v, char *out);
/* Rounding noise printed as 0: sums of squares come from orthogonal projections whose
 * rounding error is a few n·ε times the total sum of squares (ε = 2.2e-16; n = 1e5 rows
 * give about 2e-11), so a value below TW_ZERO_REL of its scale (the response's total SS
 * for SS and MS, 1 for ratios such as η², skewness and kurtosis) cannot be told from
 * zero and prints as "0"; the fit's rank tolerance, 1e-9, is of the same order. JSON and
 * CSV keep the computed values. */
#define TW_ZERO_REL 1e-10
int tw_is_noise(double v, double scale);
/* tw_fmt_num, or "0" for noise relative to `scale`. */
void tw_fmt_num_scaled(double v, double scale, char *out);
void tw_fmt_range(sturdy_pair p, void (*fmt)(double, char *), char *out);

#endif
