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

static int names_match(const char *const *a, size_t na, const char *const *b, size_t nb)
{
    if (na != nb) return 0;
    for (size_t i = 0; i < na; i++)
        if (!str_eq(a[i], b[i])) return 0;
    return 1;
}

/* Do the settings and model of a result read back match what `o` asks for? */
static int settings_match(const sturdy_options *was, const sturdy_run_info *info,
                          const sturdy_options *o)
{
    sturdy_boot_scheme scheme = o->boot_scheme != STURDY_BOOT_DEFAULT ? o->boot_scheme
                                : o->flip ? STURDY_BOOT_WILD : STURDY_BOOT_RESIDUAL;
    /* an exhaustive enumeration is what any B at least as large gives too */
    int perms_ok = info->exact ? info->nperm <= o->permutations
                               : info->nperm == o->permutations;
    const sturdy_model_spec *a = &was->model, *b = &o->model;
    return was->seed == o->seed && was->ss_type == o->ss_type && was->method == o->method &&
           was->flip == o->flip && was->boot_scheme == scheme && perms_ok &&
           was->spread_scheme == o->spread_scheme && info->nboot == o->bootstrap &&
           was->conf == o->conf && was->alpha == o->alpha && was->resistant == o->resistant &&
           names_match(a->responses, a->nresponses, b->responses, b->nresponses) &&
           names_match(a->factors, a->nfactors, b->factors, b->nfactors) &&
           names_match(a->covariates, a->ncovariates, b->covariates, b->ncovariates) &&
           (b->block ? str_eq(a->block, b->block) : a->block == NULL);
}

sturdy_result *cli_batch_resumable(const cli_check *c, const char *out_path,
                                   const char *data_path)
{
    struct stat rs, ds;
    if (stat(out_path, &rs) != 0 || stat(data_path, &ds) != 0) return NULL;
    if (ds.st_mtim.tv_sec > rs.st_mtim.tv_sec ||
        (ds.st_mtim.tv_sec == rs.st_mtim.tv_sec && ds.st_mtim.tv_nsec > rs.st_mtim.tv_nsec))
        return NULL;             /* the data were edited after the result was written */
    sturdy_result *r = cli_batch_read_result(out_path);
    if (!r) return NULL;
    sturdy_run_info info;
    sturdy_result_info(r, &info);
    /* a bootstrap asked for on a model without residual df runs no replicates */
    int match = str_eq(info.input, c->data) &&
                settings_match(sturdy_result_options(r), &info, &c->opts) &&
                sturdy_result_nterms(r) == sturdy_model_spec_terms(&c->opts.model);
    if (!match) { sturdy_result_free(r); return NULL; }
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
    oc->message = cli_str_cat3("none of the requested terms could be tested: ",
                               why ? why : "no term has an F-test", "");
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
            sturdy_buf_printf(&oc->changes, "  %s / %s / %s: %s → %s\n", name, rn, tn,
                              a_is_new ? vb : va, a_is_new ? va : vb);
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
