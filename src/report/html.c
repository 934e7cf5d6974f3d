/* html.c — the report as one self-contained HTML page: the text report's sections, a
 * table of the tests per response, and the figures (figures.c) inline as SVG, each with
 * its numbers behind a <details> toggle. No script, no external resource, no time stamp:
 * the same result gives the same bytes. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/figures.h"
#include "sturdy/report.h"
#include "sturdy/names.h"
#include "core/core.h"

/* The page's stylesheet: readable on a phone (figures and tables shrink or scroll
 * sideways), and printed on A4 (monospace text sized so that its 100 columns fit the
 * width, figures kept whole on a page). */
static const char *const page_style =
    "<style>\n"
    ":root{--ink:#1b2430;--muted:#4a5563;--line:#d4dae1;--band:#f2f5f8;--accent:#1f5fa8}\n"
    "body{font-family:system-ui,sans-serif;color:var(--ink);background:#fff;margin:0 auto;"
    "max-width:62rem;padding:1rem;line-height:1.45}\n"
    "h1{font-size:1.5rem;margin:0 0 .25rem}h2{font-size:1.25rem;margin:2rem 0 .5rem;"
    "border-bottom:2px solid var(--accent);padding-bottom:.2rem}h3{font-size:1.05rem;"
    "margin:1.5rem 0 .5rem}\n"
    ".sub{color:var(--muted);margin:0 0 1rem}\n"
    "pre{font-size:.8rem;line-height:1.35;overflow-x:auto;background:var(--band);"
    "padding:.6rem;border-radius:4px}\n"
    "nav ul{display:flex;flex-wrap:wrap;gap:.3rem 1rem;padding:0;list-style:none}\n"
    "a{color:var(--accent)}\n"
    "figure{margin:1.2rem 0;padding:.5rem 0;border-top:1px solid var(--line)}\n"
    "figure svg{max-width:100%;height:auto;display:block}\n"
    "figcaption{font-weight:600;margin:.3rem 0}\n"
    "details{margin:.3rem 0}summary{cursor:pointer;color:var(--accent)}\n"
    ".scroll{overflow-x:auto}\n"
    "table{border-collapse:collapse;font-size:.85rem;margin:.4rem 0}\n"
    "th,td{border-bottom:1px solid var(--line);padding:.2rem .4rem;text-align:right;"
    "white-space:nowrap}\n"
    "thead th{white-space:normal;vertical-align:bottom}\n"
    "th:first-child,td:first-child,caption{text-align:left}\n"
    "caption{font-weight:600;padding:.3rem 0}\n"
    ".verdict-mixed{font-weight:600}\n"
    "@media (max-width:40rem){body{padding:.5rem}pre{font-size:.62rem}"
    "pre.prose{white-space:pre-wrap;font-size:.72rem}}\n"
    "@media print{@page{size:A4;margin:14mm}body{max-width:none;padding:0}"
    "pre{font-size:7pt;background:none;overflow:visible;white-space:pre-wrap}"
    "figure{break-inside:avoid}summary{display:none}nav{display:none}"
    ".scroll{overflow:visible}table{font-size:7pt}th,td{padding:.05rem .2rem}"
    "h2,h3{break-after:avoid}}\n"
    "</style>\n";

/* Text escaped for HTML character data, keeping line breaks. */
static void esc_lines(sturdy_buf *b, const char *s, size_t n)
{
    size_t i = 0;
    char line[4096];
    while (i < n) {
        size_t j = i;
        while (j < n && s[j] != '\n')
            j++;
        size_t len = j - i < sizeof line - 1 ? j - i : sizeof line - 1;
        memcpy(line, s + i, len);
        line[len] = 0;
        sturdy_svg_escape(b, line);
        if (j < n)
            sturdy_buf_puts(b, "\n");
        i = j + 1;
    }
}

/* The text report cut at its headings (lines that do not start with a blank). */
typedef struct {
    const char *head; size_t head_len;
    const char *body; size_t body_len;
} text_part;

#define MAX_PARTS 256

static size_t split_text(const char *s, size_t n, text_part *parts)
{
    size_t np = 0, i = 0;
    while (i < n) {
        size_t j = i;
        while (j < n && s[j] != '\n')
            j++;
        if (j > i && s[i] != ' ' && np < MAX_PARTS) {
            parts[np].head = s + i;
            parts[np].head_len = j - i;
            parts[np].body = j < n ? s + j + 1 : s + j;
            parts[np].body_len = 0;
            np++;
        } else if (np) {
            parts[np - 1].body_len = (size_t)((j < n ? s + j + 1 : s + j) - parts[np - 1].body);
        }
        i = j + 1;
    }
    return np;
}

/* A heading of the text without the rule characters "── " and " ───". */
static void heading_text(const text_part *p, char *out, size_t n)
{
    const char *s = p->head, *e = p->head + p->head_len;
    const char *rule = "─";
    size_t rl = strlen(rule);
    while (s + rl <= e && !memcmp(s, rule, rl)) s += rl;
    while (s < e && *s == ' ') s++;
    while (e - rl >= s && !memcmp(e - rl, rule, rl)) e -= rl;
    while (e > s && e[-1] == ' ') e--;
    size_t len = (size_t)(e - s) < n - 1 ? (size_t)(e - s) : n - 1;
    memcpy(out, s, len);
    out[len] = 0;
}

/* The text under a heading; `prose` text (headline, run, notes) may wrap on a phone. */
static void pre_block(sturdy_buf *b, const text_part *p, int prose)
{
    size_t n = p->body_len;
    while (n && p->body[n - 1] == '\n')
        n--;
    if (!n)
        return;
    sturdy_buf_puts(b, prose ? "<pre class=\"prose\">" : "<pre>");
    esc_lines(b, p->body, n);
    sturdy_buf_puts(b, "</pre>\n");
}

static void num_cell(sturdy_buf *b, double v)
{
    char s[32];
    fig_num(v, s);
    sturdy_buf_printf(b, "<td>%s</td>", s);
}

/* The tests of a response as an HTML table (the same numbers as the text's table). */
static void tests_table(sturdy_buf *b, const sturdy_result *r, const sturdy_response_result *rr)
{
    sturdy_buf_puts(b, "<div class=\"scroll\"><table class=\"tests\">\n<caption>Tests of ");
    sturdy_svg_escape(b, rr->name);
    sturdy_buf_printf(b, " at α = %g</caption>\n<thead><tr><th scope=\"col\">term</th>"
                      "<th scope=\"col\">df</th><th scope=\"col\">SS</th><th scope=\"col\">F</th>"
                      "<th scope=\"col\">p F-test</th><th scope=\"col\">p resampled</th>"
                      "<th scope=\"col\">p unequal var</th><th scope=\"col\">partial η²</th>"
                      "<th scope=\"col\">F vs resampled</th></tr></thead>\n<tbody>\n",
                      r->opts.alpha);
    for (size_t t = 0; t < rr->nterms; t++) {
        const sturdy_term_result *tr = &rr->terms[t];
        sturdy_buf_puts(b, "<tr><th scope=\"row\">");
        sturdy_svg_escape(b, tr->label);
        sturdy_buf_puts(b, "</th>");
        num_cell(b, tr->df);
        num_cell(b, tr->ss);
        num_cell(b, tr->f);
        num_cell(b, tr->p);
        num_cell(b, tr->p_perm);
        num_cell(b, tr->uv.p_perm == tr->uv.p_perm ? tr->uv.p_perm : tr->uv.p);
        num_cell(b, tr->es[STURDY_ES_PARTIAL_ETA2]);
        int mixed = tr->verdict == STURDY_VERDICT_CLASSICAL_ONLY ||
                    tr->verdict == STURDY_VERDICT_RESAMPLING_ONLY;
        sturdy_buf_printf(b, "<td%s>", mixed ? " class=\"verdict-mixed\"" : "");
        sturdy_svg_escape(b, tr->f == tr->f ? sturdy_verdict_name(tr->verdict) : "not tested");
        sturdy_buf_puts(b, "</td></tr>\n");
    }
    sturdy_buf_puts(b, "<tr><th scope=\"row\">residual</th>");
    num_cell(b, rr->df_error);
    num_cell(b, rr->ss_error);
    sturdy_buf_puts(b, "<td></td><td></td><td></td><td></td><td></td><td></td></tr>\n"
                       "</tbody>\n</table></div>\n");
}

typedef struct {
    sturdy_buf *b;
    size_t resp;                 /* the response whose figures are wanted */
} page_figs;

static int put_figure(void *arg, const sturdy_fig *f)
{
    page_figs *pf = arg;
    if (f->resp != pf->resp)
        return 0;
    sturdy_buf *b = pf->b;
    sturdy_buf_printf(b, "<figure id=\"%s\">\n", f->name);
    sturdy_buf_put(b, f->svg->data, f->svg->len);
    sturdy_buf_puts(b, "<figcaption>");
    sturdy_svg_escape(b, f->title);
    sturdy_buf_puts(b, "</figcaption>\n<details><summary>The numbers</summary>\n"
                       "<div class=\"scroll\">\n");
    sturdy_buf_put(b, f->table->data, f->table->len);
    sturdy_buf_puts(b, "</div></details>\n</figure>\n");
    return 0;
}

sturdy_status sturdy_report_html(const sturdy_result *r, const sturdy_report_opts *o,
                                 sturdy_buf *out)
{
    if (r->read_back || !r->design)
        return STURDY_EUSAGE;
    sturdy_report_opts to;
    if (o) to = *o;
    else sturdy_report_opts_init(&to);
    to.color = 0;
    to.width = 100;
    sturdy_buf text;
    sturdy_buf_init(&text);
    sturdy_status st = sturdy_report_text(r, &to, &text);
    if (st) {
        sturdy_buf_free(&text);
        return st;
    }
    text_part *parts = sturdy_malloc(MAX_PARTS * sizeof *parts);
    if (!parts) {
        sturdy_buf_free(&text);
        return STURDY_EINTERNAL;
    }
    size_t np = split_text(text.data ? text.data : "", text.len, parts);
    const sturdy_design *d = r->design;

    sturdy_buf_puts(out, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
                         "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
                         "<title>sturdy report: ");
    for (size_t i = 0; i < r->nresp; i++) {
        if (i) sturdy_buf_puts(out, ", ");
        sturdy_svg_escape(out, r->resp[i].name);
    }
    sturdy_buf_puts(out, " (");
    sturdy_svg_escape(out, d->source);
    sturdy_buf_puts(out, ")</title>\n");
    sturdy_buf_puts(out, page_style);
    sturdy_buf_printf(out, "<style>\n%s\n</style>\n", sturdy_svg_style());
    sturdy_buf_puts(out, "</head>\n<body>\n<header>\n<h1>");
    for (size_t i = 0; i < r->nresp; i++) {
        if (i) sturdy_buf_puts(out, ", ");
        sturdy_svg_escape(out, r->resp[i].name);
    }
    sturdy_buf_puts(out, " by ");
    for (size_t f = 0; f < d->nfactors; f++) {
        if (f) sturdy_buf_puts(out, " × ");
        sturdy_svg_escape(out, d->factors[f].name);
    }
    sturdy_buf_puts(out, "</h1>\n<p class=\"sub\">");
    if (np && parts[0].head_len) {        /* the program's line: name, version, purpose */
        char first[256];
        size_t len = parts[0].head_len < sizeof first - 1 ? parts[0].head_len : sizeof first - 1;
        memcpy(first, parts[0].head, len);
        first[len] = 0;
        sturdy_svg_escape(out, first);
    }
    sturdy_buf_printf(out, "; seed %llu</p>\n</header>\n", (unsigned long long)r->opts.seed);
    /* contents */
    sturdy_buf_puts(out, "<nav aria-label=\"contents\"><ul>\n");
    size_t resp_seen = 0;
    for (size_t k = 1; k < np; k++) {
        char h[256];
        heading_text(&parts[k], h, sizeof h);
        int is_resp = !strncmp(parts[k].head, "─", strlen("─")) && resp_seen < r->nresp;
        if (is_resp)
            sturdy_buf_printf(out, "<li><a href=\"#response-%zu\">", ++resp_seen);
        else
            sturdy_buf_printf(out, "<li><a href=\"#part-%zu\">", k);
        sturdy_svg_escape(out, h);
        sturdy_buf_puts(out, "</a></li>\n");
    }
    sturdy_buf_puts(out, "</ul></nav>\n<main>\n");
    resp_seen = 0;
    for (size_t k = 1; k < np; k++) {
        char h[256];
        heading_text(&parts[k], h, sizeof h);
        int is_resp = !strncmp(parts[k].head, "─", strlen("─")) && resp_seen < r->nresp;
        if (!is_resp) {
            sturdy_buf_printf(out, "<section id=\"part-%zu\">\n<h2>", k);
            sturdy_svg_escape(out, h);
            sturdy_buf_puts(out, "</h2>\n");
            pre_block(out, &parts[k], 1);
            sturdy_buf_puts(out, "</section>\n");
            continue;
        }
        size_t ri = resp_seen++;
        sturdy_buf_printf(out, "<section id=\"response-%zu\">\n<h2>", ri + 1);
        sturdy_svg_escape(out, h);
        sturdy_buf_puts(out, "</h2>\n");
        tests_table(out, r, &r->resp[ri]);
        /* the figures before the long text: the data are looked at first */
        sturdy_buf_puts(out, "<h3>Figures</h3>\n");
        page_figs pf = { out, ri };
        if ((st = sturdy_figures_each(r, put_figure, &pf)))
            break;
        sturdy_buf_puts(out, "<h3>The report in full</h3>\n");
        pre_block(out, &parts[k], 0);
        sturdy_buf_puts(out, "</section>\n");
    }
    sturdy_buf_puts(out, "</main>\n<footer><p class=\"sub\">Made by sturdy " STURDY_VERSION
                         "; the figures are drawn by sturdy itself. The same data, settings "
                         "and seed give this page byte for byte.</p></footer>\n</body>\n</html>\n");
    sturdy_free(parts);
    sturdy_buf_free(&text);
    if (st)
        return st;
    return out->failed ? STURDY_EINTERNAL : STURDY_OK;
}

/* Each figure as a standalone SVG file's bytes. */
typedef struct {
    sturdy_figure_fn fn;
    void *arg;
    sturdy_buf file;
} file_figs;

static int put_file(void *arg, const sturdy_fig *f)
{
    file_figs *ff = arg;
    ff->file.len = 0;
    sturdy_buf_puts(&ff->file, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    /* the stylesheet after the text alternative, where a standalone file needs it */
    const char *s = f->svg->data, *at = strstr(s, "</desc>\n");
    size_t head = at ? (size_t)(at - s) + strlen("</desc>\n") : 0;
    sturdy_buf_put(&ff->file, s, head);
    sturdy_buf_printf(&ff->file, "<style>%s</style>\n", sturdy_svg_style());
    sturdy_buf_put(&ff->file, s + head, f->svg->len - head);
    if (ff->file.failed)
        return 1;
    return ff->fn(ff->arg, f->name, ff->file.data, ff->file.len);
}

sturdy_status sturdy_report_figures(const sturdy_result *r, sturdy_figure_fn fn, void *arg)
{
    if (r->read_back || !r->design)
        return STURDY_EUSAGE;
    file_figs ff = { fn, arg, { 0 } };
    sturdy_buf_init(&ff.file);
    sturdy_status st = sturdy_figures_each(r, put_file, &ff);
    if (ff.file.failed)
        st = STURDY_EINTERNAL;
    sturdy_buf_free(&ff.file);
    return st;
}
