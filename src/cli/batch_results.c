/* batch_results.c — what `sturdy batch` reads back from result files: whether a result
 * already in place can be kept (--resume), the verdict changes against an earlier run
 * (--compare), and the summary files written from the outcomes. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"
#include "json_read.h"

char *cli_str_cat3(const char *a, const char *b, const char *c)
{
    size_t la = strlen(a), lb = strlen(b), lc = strlen(c);
    char *s = malloc(la + lb + lc + 1);
    if (!s) return NULL;
    memcpy(s, a, la);
    memcpy(s + la, b, lb);
    memcpy(s + la + lb, c, lc + 1);
    return s;
}

jv *cli_batch_read_json(const char *path)
{
    size_t len = 0;
    char *text = cli_read_file(path, &len);
    if (!text) return NULL;
    jv *doc = jv_parse(text, len, NULL, 0);
    free(text);
    return doc;
}

/* --- resume: does the result in place match the plan row? ------------------------ */

static int jv_is_str(const jv *v, const char *s)
{
    return v && v->kind == JV_STRING && s && !strcmp(v->text, s);
}

static int jv_is_u64(const jv *v, uint64_t want)
{
    int ok = 0;
    uint64_t got = jv_u64(v, &ok);
    return ok && got == want;
}

/* Names in a JSON array (of strings, or of objects' "name") equal `names`. */
static int names_match(const jv *arr, const char *const *names, size_t n, const char *key)
{
    if (!arr || arr->kind != JV_ARRAY || arr->n != n) return 0;
    for (size_t i = 0; i < n; i++) {
        const jv *item = jv_at(arr, i);
        if (!jv_is_str(key ? jv_get(item, key) : item, names[i])) return 0;
    }
    return 1;
}

static const char *const method_names[] = { "freedman-lane", "ter-braak", "raw" };
static const char *const scheme_names[] = { "residual", "wild", "cells" };

jv *cli_batch_resumable(const cli_check *c, const char *out_path, const char *data_path)
{
    struct stat rs, ds;
    if (stat(out_path, &rs) != 0 || stat(data_path, &ds) != 0) return NULL;
    if (ds.st_mtim.tv_sec > rs.st_mtim.tv_sec ||
        (ds.st_mtim.tv_sec == rs.st_mtim.tv_sec && ds.st_mtim.tv_nsec > rs.st_mtim.tv_nsec))
        return NULL;             /* the data were edited after the result was written */
    jv *doc = cli_batch_read_json(out_path);
    const sturdy_options *o = &c->opts;
    const jv *s = jv_get(doc, "settings"), *d = jv_get(doc, "design");
    const jv *exact = jv_get(s, "exact"), *perms = jv_get(s, "permutations");
    int ok = 0;
    uint64_t n = jv_u64(perms, &ok);
    int scheme = o->boot_scheme != STURDY_BOOT_DEFAULT ? (int)o->boot_scheme
                 : o->flip ? STURDY_BOOT_WILD : STURDY_BOOT_RESIDUAL;
    /* an exhaustive enumeration is what any B at least as large gives too */
    int perms_ok = ok && (exact && exact->kind == JV_TRUE ? n <= o->permutations
                                                          : n == o->permutations);
    const jv *block = jv_get(d, "block");
    int block_ok = o->model.block ? jv_is_str(jv_get(block, "name"), o->model.block)
                                  : block && block->kind == JV_NULL;
    const jv *flip = jv_get(s, "flip"), *resp = jv_get(doc, "responses");
    int match = doc && jv_is_u64(jv_get(doc, "version"), 1) &&
        jv_is_str(jv_get(jv_get(doc, "input"), "file"), c->data) &&
        jv_is_u64(jv_get(s, "seed"), o->seed) &&
        jv_is_u64(jv_get(s, "ss_type"), (uint64_t)o->ss_type) &&
        jv_is_str(jv_get(s, "method"), method_names[o->method]) &&
        flip && flip->kind == (o->flip ? JV_TRUE : JV_FALSE) &&
        jv_is_str(jv_get(s, "bootstrap_scheme"), scheme_names[scheme]) && perms_ok &&
        jv_is_str(jv_get(s, "spread_scheme"), sturdy_spread_scheme_name(o->spread_scheme)) &&
        jv_is_u64(jv_get(s, "bootstrap"), o->bootstrap) &&
        jv_double(jv_get(s, "conf")) == o->conf && jv_double(jv_get(s, "alpha")) == o->alpha &&
        names_match(resp, o->model.responses, o->model.nresponses, "response") &&
        names_match(jv_get(d, "factors"), o->model.factors, o->model.nfactors, "name") &&
        names_match(jv_get(d, "covariates"), o->model.covariates, o->model.ncovariates, NULL) &&
        block_ok;
    for (size_t i = 0; match && i < resp->n; i++) {
        const jv *terms = jv_get(jv_at(resp, i), "terms");
        match = terms && terms->kind == JV_ARRAY && terms->n == cli_count_terms(&o->model);
    }
    if (!match) { jv_free(doc); return NULL; }
    return doc;
}

/* --- tally and verdict comparison ------------------------------------------------- */

int cli_batch_tally(const jv *doc, cli_batch_outcome *oc)
{
    const jv *resp = jv_get(doc, "responses");
    const char *why = NULL;
    for (size_t i = 0; resp && i < resp->n; i++) {
        const jv *terms = jv_get(jv_at(resp, i), "terms");
        if (!why) why = jv_str(jv_get(jv_get(jv_at(resp, i), "error"), "note"));
        for (size_t k = 0; terms && k < terms->n; k++) {
            const jv *t = jv_at(terms, k);
            const char *v = jv_str(jv_get(t, "verdict"));
            const jv *f = jv_get(t, "f");
            oc->terms++;
            if (f && f->kind == JV_NUMBER) oc->tested++;
            else if (!why) why = jv_str(jv_get(t, "note"));
            if (v && (!strcmp(v, "classical-only") || !strcmp(v, "resampling-only")))
                oc->disagree++;
        }
    }
    if (oc->tested > 0) return 0;
    oc->exit_code = STURDY_EMODEL;
    free(oc->message);
    oc->message = cli_str_cat3("none of the requested terms could be tested: ",
                               why ? why : "no term has an F-test", "");
    return 1;
}

static const jv *find_by(const jv *arr, const char *key, const char *value)
{
    for (size_t i = 0; arr && value && i < arr->n; i++)
        if (jv_is_str(jv_get(jv_at(arr, i), key), value)) return jv_at(arr, i);
    return NULL;
}

/* Words of --compare for a term without a verdict; plain phrases, so that they cannot
 * be read as a verdict ("neither" is one). */
#define NO_SUCH_TERM "(term not in this result)"
#define NO_VERDICT "(no verdict)"

/* Verdict of `term` in response `resp` of a result, or one of the phrases above. */
static const char *verdict_of(const jv *doc, const char *resp, const char *term)
{
    const jv *r = find_by(jv_get(doc, "responses"), "response", resp);
    const jv *t = r ? find_by(jv_get(r, "terms"), "term", term) : NULL;
    if (!t) return NO_SUCH_TERM;
    const char *v = jv_str(jv_get(t, "verdict"));
    return v ? v : NO_VERDICT;
}

/* Every (response, term) of `a` whose verdict in `b` differs, as "old → new" (a_is_new
 * says which is which); skip_present keeps only the pairs that `b` lacks. */
static void diff_verdicts(const char *name, const jv *a, const jv *b, int a_is_new,
                          int skip_present, cli_batch_outcome *oc)
{
    const jv *resp = jv_get(a, "responses");
    for (size_t i = 0; resp && i < resp->n; i++) {
        const char *rn = jv_str(jv_get(jv_at(resp, i), "response"));
        const jv *terms = jv_get(jv_at(resp, i), "terms");
        for (size_t k = 0; rn && terms && k < terms->n; k++) {
            const char *tn = jv_str(jv_get(jv_at(terms, k), "term"));
            if (!tn) continue;
            const char *va = verdict_of(a, rn, tn), *vb = verdict_of(b, rn, tn);
            if (!strcmp(va, vb) || (skip_present && strcmp(vb, NO_SUCH_TERM))) continue;
            sturdy_buf_printf(&oc->changes, "  %s / %s / %s: %s → %s\n", name, rn, tn,
                              a_is_new ? vb : va, a_is_new ? va : vb);
            oc->changed++;
        }
    }
}

void cli_batch_compare(const char *name, const jv *old, const jv *now, cli_batch_outcome *oc)
{
    if (!old) return;
    oc->compared = 1;
    diff_verdicts(name, now, old, 1, 0, oc);
    diff_verdicts(name, old, now, 0, 1, oc);   /* terms the new result no longer has */
}

/* --- summary files ---------------------------------------------------------------- */

static void csv_field(sturdy_buf *o, const char *s)
{
    if (!s[strcspn(s, ",\"\r\n")] && s[0] != ' ' && (!*s || s[strlen(s) - 1] != ' ')) {
        sturdy_buf_puts(o, s);
        return;
    }
    sturdy_buf_put(o, "\"", 1);
    for (; *s; s++) {
        if (*s == '"') sturdy_buf_put(o, "\"", 1);
        sturdy_buf_put(o, s, 1);
    }
    sturdy_buf_put(o, "\"", 1);
}

int cli_batch_write_summary(const char *plan_path, const char *dir, const char *old_dir,
                            char *const *names, const cli_batch_outcome *oc, size_t n)
{
    sturdy_buf csv, txt;
    sturdy_buf_init(&csv);
    sturdy_buf_init(&txt);
    size_t failed = 0, untested = 0, changed = 0, width = 0;
    for (size_t i = 0; i < n; i++) {
        size_t w = strlen(names[i]);
        if (w > width) width = w;
        failed += oc[i].exit_code != 0 && !oc[i].terms;
        untested += oc[i].exit_code != 0 && oc[i].terms;
        changed += oc[i].changed;
    }
    const char *base = strrchr(plan_path, '/');
    base = base ? base + 1 : plan_path;
    sturdy_buf_printf(&txt, "Plan %s: %zu analyses, %zu ok, %zu failed", base, n,
                      n - failed - untested, failed);
    if (untested) sturdy_buf_printf(&txt, ", %zu with no term tested", untested);
    sturdy_buf_puts(&txt, "\n\n");
    sturdy_buf_puts(&csv, "name,status,exit_code,message,terms,disagreements,changed\n");
    for (size_t i = 0; i < n; i++) {
        const char *name = names[i];
        const cli_batch_outcome *o = &oc[i];
        csv_field(&csv, name);
        if (o->exit_code && o->terms) {   /* a result without a tested term */
            sturdy_buf_printf(&csv, ",untested,%d,", o->exit_code);
            csv_field(&csv, o->message ? o->message : "");
            sturdy_buf_printf(&csv, ",%zu,%zu,", o->tested, o->disagree);
            if (o->compared) sturdy_buf_printf(&csv, "%zu", o->changed);
            sturdy_buf_puts(&csv, "\n");
            sturdy_buf_printf(&txt, "  %-*s  untested (exit %d): 0 of %zu terms tested: %s\n",
                              (int)width, name, o->exit_code, o->terms,
                              o->message ? o->message : "");
            continue;
        }
        if (o->exit_code) {
            sturdy_buf_printf(&csv, ",failed,%d,", o->exit_code);
            csv_field(&csv, o->message ? o->message : "");
            sturdy_buf_puts(&csv, ",,,\n");
            sturdy_buf_printf(&txt, "  %-*s  failed (exit %d): %s\n", (int)width, name,
                              o->exit_code, o->message ? o->message : "");
            continue;
        }
        sturdy_buf_printf(&csv, ",ok,0,,%zu,%zu,", o->tested, o->disagree);
        if (o->compared) sturdy_buf_printf(&csv, "%zu", o->changed);
        sturdy_buf_puts(&csv, "\n");
        sturdy_buf_printf(&txt, "  %-*s  ok: %zu tested term%s", (int)width, name, o->tested,
                          o->tested == 1 ? "" : "s");
        if (o->tested < o->terms)
            sturdy_buf_printf(&txt, " of %zu", o->terms);
        sturdy_buf_printf(&txt, ", %zu where classical and resampling disagree\n",
                          o->disagree);
    }
    if (old_dir) {
        sturdy_buf_printf(&txt, "\nVerdict changes against %s: %zu\n", old_dir, changed);
        for (size_t i = 0; i < n; i++) {
            if (oc[i].changes.data) sturdy_buf_puts(&txt, oc[i].changes.data);
            if (!oc[i].exit_code && !oc[i].compared)
                sturdy_buf_printf(&txt, "  %s: no earlier result to compare\n", names[i]);
        }
    }
    int rc = 0;
    char *pc = cli_str_cat3(dir, "/", "summary.csv");
    char *pt = cli_str_cat3(dir, "/", "summary.txt");
    if (!pc || !pt || csv.failed || txt.failed) {
        fputs("sturdy: out of memory while writing the summary\n", stderr);
        rc = STURDY_EOUTPUT;
    } else if (cli_write_output(pc, csv.data, csv.len) ||
               cli_write_output(pt, txt.data, txt.len)) {
        rc = STURDY_EOUTPUT;
    }
    free(pc);
    free(pt);
    sturdy_buf_free(&csv);
    sturdy_buf_free(&txt);
    return rc;
}
