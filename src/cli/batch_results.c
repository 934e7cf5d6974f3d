/* batch_results.c — what `sturdy batch` reads back from result files: whether a result
 * already in place can be kept (--resume), the verdict changes against an earlier run
 * (--compare), and the summary files written from the outcomes. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"

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

sturdy_result *cli_batch_read_result(const char *path)
{
    size_t len = 0;
    char *text = cli_read_file(path, &len);
    if (!text) return NULL;
    sturdy_result *r = NULL;
    if (sturdy_result_read_json(path, text, len, &r, NULL) != STURDY_OK) r = NULL;
    free(text);
    return r;
}

/* --- resume: does the result in place match the plan row? ------------------------ */

static int str_eq(const char *a, const char *b) { return a && b && !strcmp(a, b); }

/* The key file holds digests of everything a result depends on, compared as bytes, so
 * that resume never trusts file dates (a file replaced by an older one, cp -p, rsync -t,
 * untar) nor names as the JSON writer rewrites them (bytes that are not UTF-8). */
#define KEY_HEAD "sturdy batch key 1\n"

int cli_batch_key_make(cli_batch_key *k, char *const *argv, int argc, const char *data_file,
                       char **bytes, size_t *len)
{
    cli_sha256 s;
    cli_sha256_init(&s);
    /* the program's version: defaults and methods may change between versions */
    cli_sha256_add(&s, STURDY_VERSION, sizeof STURDY_VERSION);
    for (int i = 0; i < argc; i++) {
        if (!strcmp(argv[i], "--threads") && i + 1 < argc) { i++; continue; } /* no effect */
        cli_sha256_add(&s, argv[i], strlen(argv[i]) + 1);
    }
    cli_sha256_hex(&s, k->settings);
    /* only a regular file: reading a pipe here would leave nothing for the analysis
     * (such a row gets no key, so --resume always computes it again) */
    struct stat sb;
    size_t n = 0;
    char *text = stat(data_file, &sb) == 0 && S_ISREG(sb.st_mode)
                 ? cli_read_file(data_file, &n) : NULL;
    k->ok = text != NULL;
    if (text) {
        cli_sha256_init(&s);
        cli_sha256_add(&s, text, n);
        cli_sha256_hex(&s, k->data);
    }
    *bytes = text;
    *len = n;
    return k->ok ? 0 : -1;
}

char *cli_batch_key_text(const cli_batch_key *k, const char *result, size_t len)
{
    if (!k->ok) return NULL;
    cli_sha256 s;
    char rhex[CLI_SHA256_HEX];
    cli_sha256_init(&s);
    cli_sha256_add(&s, result, len);
    cli_sha256_hex(&s, rhex);
    size_t n = sizeof KEY_HEAD + 3 * (CLI_SHA256_HEX + 16);
    char *text = malloc(n);
    if (text)
        snprintf(text, n, KEY_HEAD "settings %s\ndata %s\nresult %s\n", k->settings, k->data,
                 rhex);
    return text;
}

sturdy_result *cli_batch_resumable(const cli_batch_key *k, const char *out_path,
                                   const char *key_path)
{
    size_t rlen = 0, klen = 0;
    char *result = cli_read_file(out_path, &rlen), *key = cli_read_file(key_path, &klen);
    char *want = result && key ? cli_batch_key_text(k, result, rlen) : NULL;
    sturdy_result *r = NULL;
    if (want && strlen(want) == klen && !memcmp(want, key, klen) &&
        sturdy_result_read_json(out_path, result, rlen, &r, NULL) != STURDY_OK)
        r = NULL;
    free(want);
    free(key);
    free(result);
    return r;
}

/* --- tally and verdict comparison ------------------------------------------------- */

int cli_batch_tally(const sturdy_result *r, cli_batch_outcome *oc)
{
    const char *why = NULL;
    size_t nr = sturdy_result_nresponses(r), nt = sturdy_result_nterms(r);
    for (size_t i = 0; i < nr; i++) {
        if (!why) why = sturdy_response_note(r, i);
        for (size_t k = 0; k < nt; k++) {
            sturdy_verdict v = sturdy_term_verdict(r, i, k);
            oc->terms++;
            if (isfinite(sturdy_term_get(r, i, k, STURDY_TV_F))) oc->tested++;
            else if (!why) why = sturdy_term_note(r, i, k, STURDY_NOTE_CLASSICAL);
            if (v == STURDY_VERDICT_CLASSICAL_ONLY || v == STURDY_VERDICT_RESAMPLING_ONLY)
                oc->disagree++;
        }
    }
    if (oc->tested > 0) return 0;
    oc->exit_code = STURDY_EMODEL;
    free(oc->message);
    char *safe = cli_escaped(why ? why : "no term has an F-test");   /* may quote data */
    oc->message = safe ? cli_str_cat3("none of the requested terms could be tested: ", safe,
                                      "")
                       : NULL;
    free(safe);
    return 1;
}

/* Words of --compare for a term without a verdict; plain phrases, so that they cannot
 * be read as a verdict ("neither" is one). */
#define NO_SUCH_TERM "(term not in this result)"
#define NO_VERDICT "(no verdict)"

/* Verdict of `term` in response `resp` of a result, or one of the phrases above. */
static const char *verdict_of(const sturdy_result *r, const char *resp, const char *term)
{
    size_t nr = sturdy_result_nresponses(r), nt = sturdy_result_nterms(r);
    for (size_t i = 0; i < nr; i++) {
        if (!str_eq(sturdy_result_response(r, i), resp)) continue;
        for (size_t k = 0; k < nt; k++) {
            if (!str_eq(sturdy_result_term(r, k), term)) continue;
            const char *v = sturdy_verdict_name(sturdy_term_verdict(r, i, k));
            return v ? v : NO_VERDICT;
        }
        break;
    }
    return NO_SUCH_TERM;
}

/* Every (response, term) of `a` whose verdict in `b` differs, as "old → new" (a_is_new
 * says which is which); skip_present keeps only the pairs that `b` lacks. */
static void diff_verdicts(const char *name, const sturdy_result *a, const sturdy_result *b,
                          int a_is_new, int skip_present, cli_batch_outcome *oc)
{
    size_t nr = sturdy_result_nresponses(a), nt = sturdy_result_nterms(a);
    for (size_t i = 0; i < nr; i++) {
        const char *rn = sturdy_result_response(a, i);
        for (size_t k = 0; rn && k < nt; k++) {
            const char *tn = sturdy_result_term(a, k);
            if (!tn) continue;
            const char *va = verdict_of(a, rn, tn), *vb = verdict_of(b, rn, tn);
            if (!strcmp(va, vb) || (skip_present && strcmp(vb, NO_SUCH_TERM))) continue;
            char *srn = cli_escaped(rn), *stn = cli_escaped(tn);   /* names from data */
            sturdy_buf_printf(&oc->changes, "  %s / %s / %s: %s → %s\n", name,
                              srn ? srn : "?", stn ? stn : "?", a_is_new ? vb : va,
                              a_is_new ? va : vb);
            free(srn);
            free(stn);
            oc->changed++;
        }
    }
}

void cli_batch_compare(const char *name, const sturdy_result *old, const sturdy_result *now,
                       cli_batch_outcome *oc)
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
                            const char *const *names, const cli_batch_outcome *oc,
                            size_t n)
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
