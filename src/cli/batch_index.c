/* batch_index.c — `sturdy batch` writes index.html beside its summary: one row per
 * analysis with its verdicts per response and term, the verdicts changed since the
 * --compare run, how long it took, and links to its HTML page and JSON result. A
 * self-contained page like the reports (inline CSS, no script, no external resource). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"

/* Text escaped for HTML (& < > " '); bytes are otherwise copied (the names and messages
 * are UTF-8 from the plan and the library). */
static void esc(sturdy_buf *b, const char *s)
{
    for (; s && *s; s++) {
        switch (*s) {
        case '&': sturdy_buf_puts(b, "&amp;"); break;
        case '<': sturdy_buf_puts(b, "&lt;"); break;
        case '>': sturdy_buf_puts(b, "&gt;"); break;
        case '"': sturdy_buf_puts(b, "&quot;"); break;
        case '\'': sturdy_buf_puts(b, "&#39;"); break;
        default:
            if ((unsigned char)*s < 0x20 && *s != '\n') sturdy_buf_puts(b, "\xEF\xBF\xBD");
            else sturdy_buf_put(b, s, 1);
        }
    }
}

static int file_exists(const char *dir, const char *name, const char *ext)
{
    char *p = cli_str_cat3(dir, "/", name), *q = p ? cli_str_cat3(p, ext, "") : NULL;
    struct stat sb;
    int ok = q && stat(q, &sb) == 0 && S_ISREG(sb.st_mode);
    free(p);
    free(q);
    return ok;
}

void cli_batch_verdicts(sturdy_buf *b, const sturdy_result *r)
{
    size_t nr = sturdy_result_nresponses(r), nt = sturdy_result_nterms(r);
    for (size_t ri = 0; ri < nr; ri++) {
        if (nr > 1) {
            sturdy_buf_puts(b, "<b>");
            esc(b, sturdy_result_response(r, ri));
            sturdy_buf_puts(b, "</b> ");
        }
        sturdy_buf_puts(b, "<ul class=\"v\">");
        for (size_t t = 0; t < nt; t++) {
            double f = sturdy_term_get(r, ri, t, STURDY_TV_F);
            sturdy_verdict v = sturdy_term_verdict(r, ri, t);
            int mixed = v == STURDY_VERDICT_CLASSICAL_ONLY || v == STURDY_VERDICT_RESAMPLING_ONLY;
            sturdy_buf_printf(b, "<li%s>", mixed ? " class=\"mixed\"" : "");
            esc(b, sturdy_result_term(r, t));
            sturdy_buf_puts(b, ": ");
            esc(b, f == f ? sturdy_verdict_name(v) : "not tested");
            sturdy_buf_puts(b, "</li>");
        }
        sturdy_buf_puts(b, "</ul>");
    }
}

/* The row's verdicts, kept from its result as read back when the row ended. */
static void verdicts(sturdy_buf *b, const cli_batch_outcome *o)
{
    if (o->verdicts.data && !o->verdicts.failed)
        sturdy_buf_put(b, o->verdicts.data, o->verdicts.len);
    else
        sturdy_buf_puts(b, "—");
}

int cli_batch_write_index(const char *plan_path, const char *dir, const char *old_dir,
                          const char *const *names, const cli_batch_outcome *oc, size_t n)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    const char *base = strrchr(plan_path, '/');
    base = base ? base + 1 : plan_path;
    size_t failed = 0;
    for (size_t i = 0; i < n; i++)
        failed += oc[i].exit_code != 0;
    sturdy_buf_puts(&b, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
                        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
                        "<title>sturdy batch: ");
    esc(&b, base);
    sturdy_buf_puts(&b, "</title>\n<style>\n"
        "body{font-family:system-ui,sans-serif;color:#1b2430;max-width:70rem;margin:0 auto;"
        "padding:1rem;line-height:1.4}\n"
        "h1{font-size:1.4rem;border-bottom:2px solid #1f5fa8;padding-bottom:.2rem}\n"
        "a{color:#1f5fa8}.scroll{overflow-x:auto}\n"
        "table{border-collapse:collapse;font-size:.9rem}\n"
        "th,td{border-bottom:1px solid #d4dae1;padding:.3rem .5rem;text-align:left;"
        "vertical-align:top}\n"
        "ul.v{margin:0;padding-left:1rem}li.mixed,.failed{font-weight:600}\n"
        ".changes{white-space:pre-wrap;font-family:monospace;font-size:.8rem;margin:0}\n"
        ".num{text-align:right;white-space:nowrap}\n"
        "@media print{@page{size:A4;margin:14mm}body{max-width:none;padding:0}}\n"
        "</style>\n</head>\n<body>\n<h1>Batch ");
    esc(&b, base);
    sturdy_buf_printf(&b, "</h1>\n<p>%zu analyses, %zu ok, %zu failed or untested.", n,
                      n - failed, failed);
    if (old_dir) {
        sturdy_buf_puts(&b, " Verdicts compared with the results in ");
        esc(&b, old_dir);
        sturdy_buf_puts(&b, ".");
    }
    sturdy_buf_puts(&b, " The times are those of this run (a kept result took none).</p>\n"
                        "<div class=\"scroll\"><table>\n<caption>One row per analysis of the "
                        "plan</caption>\n<thead><tr><th scope=\"col\">analysis</th>"
                        "<th scope=\"col\">status</th><th scope=\"col\">verdicts</th>"
                        "<th scope=\"col\">changed since the compared run</th>"
                        "<th scope=\"col\">time</th></tr></thead>\n<tbody>\n");
    for (size_t i = 0; i < n; i++) {
        const cli_batch_outcome *o = &oc[i];
        sturdy_buf_puts(&b, "<tr><th scope=\"row\">");
        int page = file_exists(dir, names[i], ".html");
        int json = file_exists(dir, names[i], ".json");
        if (page || json) {
            sturdy_buf_puts(&b, "<a href=\"");
            esc(&b, names[i]);
            sturdy_buf_puts(&b, page ? ".html\">" : ".json\">");
            esc(&b, names[i]);
            sturdy_buf_puts(&b, "</a>");
            if (page && json) {
                sturdy_buf_puts(&b, " <small>(<a href=\"");
                esc(&b, names[i]);
                sturdy_buf_puts(&b, ".json\">JSON</a>)</small>");
            }
        } else {
            esc(&b, names[i]);
        }
        sturdy_buf_puts(&b, "</th>");
        if (o->exit_code) {
            sturdy_buf_printf(&b, "<td class=\"failed\">%s (exit %d): ",
                              o->terms ? "untested" : "failed", o->exit_code);
            esc(&b, o->message ? o->message : "");
            sturdy_buf_puts(&b, "</td><td>");
            if (o->terms) verdicts(&b, o);
            sturdy_buf_puts(&b, "</td>");
        } else {
            sturdy_buf_printf(&b, "<td>ok: %zu tested term%s, %zu where classical and "
                              "resampling disagree</td><td>", o->tested,
                              o->tested == 1 ? "" : "s", o->disagree);
            verdicts(&b, o);
            sturdy_buf_puts(&b, "</td>");
        }
        sturdy_buf_puts(&b, "<td>");
        if (!old_dir)
            sturdy_buf_puts(&b, "not compared");
        else if (!o->compared)
            sturdy_buf_puts(&b, "no earlier result");
        else if (!o->changed)
            sturdy_buf_puts(&b, "no verdict changed");
        else {
            sturdy_buf_printf(&b, "%zu changed<pre class=\"changes\">", o->changed);
            esc(&b, o->changes.data);
            sturdy_buf_puts(&b, "</pre>");
        }
        sturdy_buf_puts(&b, "</td><td class=\"num\">");
        if (o->resumed) sturdy_buf_puts(&b, "kept");
        else if (o->seconds > 0) sturdy_buf_printf(&b, "%.2f s", o->seconds);
        else sturdy_buf_puts(&b, "—");
        sturdy_buf_puts(&b, "</td></tr>\n");
    }
    sturdy_buf_puts(&b, "</tbody>\n</table></div>\n<p>Summaries: <a href=\"summary.txt\">"
                        "summary.txt</a>, <a href=\"summary.csv\">summary.csv</a>.</p>\n"
                        "</body>\n</html>\n");
    int rc = 0;
    char *path = cli_str_cat3(dir, "/", "index.html");
    if (!path || b.failed) {
        fputs("sturdy: out of memory while writing the batch index\n", stderr);
        rc = STURDY_EOUTPUT;
    } else {
        rc = cli_write_output(path, b.data, b.len);
    }
    free(path);
    sturdy_buf_free(&b);
    return rc;
}
