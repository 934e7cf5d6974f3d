/* textfmt.c — drawing helpers of the text report: display width, padding,
 * wrapping, footnotes and number formats. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "report/text.h"

void tw_init(tw *w, const sturdy_result *r, const sturdy_report_opts *o, sturdy_buf *out)
{
    memset(w, 0, sizeof *w);
    w->b = out;
    w->r = r;
    w->width = o->width < TW_MIN_WIDTH ? TW_MIN_WIDTH : o->width;
    w->color = o->color;
    w->names = o->setting_names;
    const char *perm = tw_name(w, STURDY_SETTING_PERMUTATIONS);
    const char *boot = tw_name(w, STURDY_SETTING_BOOTSTRAP);
    const char *json = tw_name(w, STURDY_SETTING_JSON);
    snprintf(w->no_perm, sizeof w->no_perm, "no rearrangements were asked for%s%s%s",
             perm ? " (" : "", perm ? perm : "", perm ? " 0)" : "");
    snprintf(w->no_boot, sizeof w->no_boot, "no bootstrap was asked for%s%s%s",
             boot ? " (" : "", boot ? boot : "", boot ? " 0)" : "");
    snprintf(w->json_more, sizeof w->json_more, "further reasons are in the JSON output%s%s%s",
             json ? " (" : "", json ? json : "", json ? ")" : "");
}

const char *tw_name(const tw *w, sturdy_setting k)
{
    return w->names && k >= 0 && k < STURDY_NSETTINGS ? w->names[k] : NULL;
}

/* One display unit of text at s: writes its output bytes into out (≤ 4) and returns how
 * many input bytes it takes. Control characters (ESC included, so data cannot inject
 * terminal codes) print as '?', bytes that are not UTF-8 as U+FFFD, and a no-break space
 * (which the writers use to keep "-B 99999" on one line) as a plain space. */
static size_t unit(const char *s, char out[4], size_t *outlen)
{
    unsigned char c = (unsigned char)*s;
    if (c < 0x20 || c == 0x7f) { out[0] = '?'; *outlen = 1; return 1; }
    size_t len = sturdy_utf8_len(s);
    if (len == 0) { memcpy(out, "\xef\xbf\xbd", 3); *outlen = 3; return 1; }
    if (len == 2 && c == 0xc2 && (unsigned char)s[1] == 0xa0) { out[0] = ' '; *outlen = 1; }
    else { memcpy(out, s, len); *outlen = len; }
    return len;
}

size_t tw_width(const char *s)
{
    size_t n = 0, olen;
    char o[4];
    while (*s) { s += unit(s, o, &olen); n++; }
    return n;
}

void tw_put(tw *w, const char *s)
{
    size_t olen;
    char o[4];
    while (*s) {
        s += unit(s, o, &olen);
        sturdy_buf_put(w->b, o, olen);
        w->col++;
    }
}

/* Ends the line, dropping trailing blanks left by padded empty cells. */
void tw_nl(tw *w)
{
    while (w->b->len > 0 && w->b->data[w->b->len - 1] == ' ') w->b->data[--w->b->len] = '\0';
    sturdy_buf_put(w->b, "\n", 1);
    w->col = 0;
}

void tw_indent(tw *w, int n)
{
    for (int i = 0; i < n; i++) sturdy_buf_put(w->b, " ", 1);
    w->col += (size_t)(n > 0 ? n : 0);
}

void tw_cell(tw *w, const char *s, int width, int right)
{
    size_t len = tw_width(s);
    int pad = (size_t)width > len ? width - (int)len : 0;
    if (right) tw_indent(w, pad);
    tw_put(w, s);
    if (!right) tw_indent(w, pad);
}

void tw_style(tw *w, const char *code)
{
    if (!w->color || !code) return;
    sturdy_buf_printf(w->b, "\033[%sm", code);
}

/* Bytes of the first `cols` display units of s (at most len bytes). */
static size_t prefix_bytes(const char *s, size_t len, size_t cols)
{
    size_t i = 0, olen;
    char o[4];
    for (size_t n = 0; n < cols && i < len; n++) i += unit(s + i, o, &olen);
    return i < len ? i : len;
}

void tw_para(tw *w, int first, int rest, const char *text)
{
    if (!text) text = "";
    size_t width = (size_t)w->width;
    tw_indent(w, first - (int)w->col);
    size_t line_start_col = w->col;
    const char *p = text;
    char word[1024];
    while (*p) {
        while (*p == ' ' || *p == '\n') p++;
        if (!*p) break;
        size_t len = strcspn(p, " \n");
        const char *wp = p;
        p += len;
        while (len > 0) {
            size_t take = len < sizeof word - 1 ? len : sizeof word - 1;
            memcpy(word, wp, take);
            word[take] = '\0';
            size_t ww = tw_width(word);
            size_t room = width > (size_t)rest ? width - (size_t)rest : 1;
            int at_start = w->col == line_start_col;
            if (!at_start && w->col + 1 + ww > width) {
                tw_nl(w);
                tw_indent(w, rest);
                line_start_col = w->col;
                at_start = 1;
            }
            if (ww > room || (at_start && w->col + ww > width)) {
                /* a word wider than a whole line: cut it at a code point */
                size_t fit = width > w->col ? width - w->col : 1;
                take = prefix_bytes(word, take, fit);
                word[take] = '\0';
            }
            if (!at_start) tw_put(w, " ");
            tw_put(w, word);
            wp += take;
            len -= take;
            if (len) {
                tw_nl(w);
                tw_indent(w, rest);
                line_start_col = w->col;
            }
        }
    }
    tw_nl(w);
}

void tw_labelled(tw *w, const char *label, const char *text)
{
    tw_indent(w, 2);
    tw_cell(w, label, TW_LABEL_WIDTH, 0);
    tw_para(w, 2 + TW_LABEL_WIDTH, 2 + TW_LABEL_WIDTH, text);
}

/* vprintf into a fresh buffer; NULL (and the report marked failed) when memory ran out. */
static char *vformat(tw *w, const char *fmt, va_list ap)
{
    va_list ap2;
    va_copy(ap2, ap);
    int n = vsnprintf(NULL, 0, fmt, ap2);
    va_end(ap2);
    char *s = n < 0 ? NULL : sturdy_malloc((size_t)n + 1);
    if (!s) { w->b->failed = 1; return NULL; }
    vsnprintf(s, (size_t)n + 1, fmt, ap);
    return s;
}

void tw_paraf(tw *w, int first, int rest, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char *s = vformat(w, fmt, ap);
    va_end(ap);
    tw_para(w, first, rest, s);
    sturdy_free(s);
}

void tw_labelledf(tw *w, const char *label, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char *s = vformat(w, fmt, ap);
    va_end(ap);
    tw_labelled(w, label, s);
    sturdy_free(s);
}

void tw_heading(tw *w, const char *title)
{
    tw_style(w, "1");
    tw_put(w, title);
    tw_style(w, "0");
    tw_nl(w);
}

void tw_rule(tw *w, const char *title)
{
    size_t edge = (size_t)w->width < TW_RULE_WIDTH ? (size_t)w->width : TW_RULE_WIDTH;
    tw_style(w, "1");
    if (tw_width(title) + 8 > edge) {
        /* too long for one line: the title wrapped, then the rule under it */
        tw_para(w, 0, 2, title);
    } else {
        tw_put(w, "── ");
        tw_put(w, title);
        tw_put(w, " ");
    }
    do tw_put(w, "─"); while (w->col < edge);
    tw_style(w, "0");
    tw_nl(w);
}

size_t tw_footnote(tw *w, const char *reason)
{
    if (!reason) reason = "not computed";
    for (size_t i = 0; i < w->nfn; i++)
        if (strcmp(w->fn[i], reason) == 0) return i + 1;
    if (w->nfn == TW_MAX_FOOTNOTES - 1) {
        w->fn[w->nfn++] = w->json_more;
    }
    if (w->nfn == TW_MAX_FOOTNOTES) return TW_MAX_FOOTNOTES;
    w->fn[w->nfn++] = reason;
    return w->nfn;
}

void tw_footnotes(tw *w)
{
    for (size_t i = 0; i < w->nfn; i++) tw_paraf(w, 2, 6, "[%zu] %s", i + 1, w->fn[i]);
    w->nfn = 0;
    tw_nl(w);
}

void tw_fmt_g(double v, int prec, char *out)
{
    if (!isfinite(v)) { strcpy(out, isnan(v) ? "—" : v > 0 ? "∞" : "-∞"); return; }
    snprintf(out, 32, "%.*g", prec, v);
    if (strcmp(out, "-0") == 0) strcpy(out, "0");
}

/* From this magnitude up to PLAIN_MAX, SS, MS and F print as whole numbers ("10288")
 * rather than with an exponent ("1.029e+04"): easier to read, and at most 9 digits.
 * Other values take 9 characters too ("1.235e-05"; SS, MS and F are never negative),
 * which the table widths rely on; only 3-digit exponents (below 1e-99) stick out by one. */
#define PLAIN_MIN 1e4
#define PLAIN_MAX 1e9

void tw_fmt_num(double v, char *out)
{
    if (isfinite(v) && fabs(v) >= PLAIN_MIN && fabs(v) < PLAIN_MAX) snprintf(out, 32, "%.0f", v);
    else tw_fmt_g(v, 4, out);
}

/* Smallest p-value printed as a number; below it "<0.0001". */
#define P_FLOOR 1e-4
/* Below this, p-values get 2 significant digits (0.00034) instead of 3 (0.0123). */
#define P_SMALL 1e-3

void tw_fmt_p(double v, char *out)
{
    if (isnan(v)) strcpy(out, "—");
    else if (v < P_FLOOR) strcpy(out, "<0.0001");
    else snprintf(out, 32, v < P_SMALL ? "%.2g" : "%.3g", v);
}

/* "p = 0.0123" or "p < 0.0001". */
void tw_p_words(sturdy_buf *b, double p)
{
    char q[32];
    tw_fmt_p(p, q);
    if (q[0] == '<') sturdy_buf_printf(b, "p < %s", q + 1);
    else sturdy_buf_printf(b, "p = %s", q);
}

void tw_fmt_pr(double v, char *out)
{
    if (v == 0) strcpy(out, "0");
    else if (v > 0 && v < P_FLOOR) snprintf(out, 32, "%.1e", v);   /* "2.5e-05" */
    else tw_fmt_p(v, out);
}

void tw_fmt_es(double v, char *out)
{
    tw_fmt_g(v, 2, out);
}

void tw_fmt_df(double v, char *out)
{
    if (isfinite(v) && v == trunc(v) && fabs(v) < 1e15) snprintf(out, 32, "%.0f", v);
    else tw_fmt_g(v, 3, out);
}

int tw_is_noise(double v, double scale)
{
    return isfinite(v) && isfinite(scale) && v != 0 && fabs(v) < TW_ZERO_REL * fabs(scale);
}

void tw_fmt_num_scaled(double v, double scale, char *out)
{
    if (tw_is_noise(v, scale)) strcpy(out, "0");
    else tw_fmt_num(v, out);
}

void tw_fmt_range(sturdy_pair p, void (*fmt)(double, char *), char *out)
{
    char lo[32], hi[32];
    if (isnan(p.lo) || isnan(p.hi)) { strcpy(out, "—"); return; }
    fmt(p.lo, lo);
    fmt(p.hi, hi);
    snprintf(out, TW_RANGE_LEN, "%s–%s", lo, hi);
}
