/* batch.c — `sturdy batch PLAN.csv`: many analyses from a plan file, each run in process
 * as the equivalent `check`, one result file each (complete or absent), resumable after
 * an interruption, and a summary with the verdict changes against an earlier run.
 *
 * Everything that reaches the summary is read back from the result's JSON, for computed
 * and resumed analyses alike, so that an interrupted and resumed batch writes the same
 * summary bytes as an uninterrupted one. Reading results back (resume, --compare) and
 * writing the summary live in batch_results.c; reading and checking the plan in
 * batch_plan.c. */
#include <errno.h>
#include <getopt.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "batch.h"

/* Exit status when some analyses failed and the others completed (DESIGN.md). */
#define BATCH_EXIT_SOME_FAILED 6
static const char batch_help[] =
"Usage: sturdy batch PLAN.csv [-o DIR] [--resume] [--compare OLD_DIR] [--threads N]\n"
"                    [--quiet]\n"
"\n"
"Runs one analysis per row of the plan, each as the equivalent 'sturdy check ... --format\n"
"json', and writes DIR/NAME.json for each (complete or not at all) with its page\n"
"DIR/NAME.html, then DIR/summary.csv, DIR/summary.txt and DIR/index.html (a page with\n"
"one row per analysis: verdicts, changes, time, links). A failing analysis is recorded\n"
"and the others go on.\n"
"\n"
"  -o, --output DIR       results folder (default: the plan's name without .csv, plus\n"
"                         '.results', beside the plan); created when missing\n"
"      --resume           keep results already in DIR that match their plan row: the\n"
"                         data file's bytes, every setting and the program version as\n"
"                         when the result was written (DIR/.NAME.key); dates are not used\n"
"      --compare OLD_DIR  list every term whose verdict differs from OLD_DIR/NAME.json\n"
"      --threads N        threads for each analysis (default 0 = all cores)\n"
"  -q, --quiet            no work estimates or rates on standard error\n"
"  -h, --help             show this help\n"
"\n"
"Plan columns (a CSV file, header first; one analysis per row)\n"
"  name       required: result file name (letters, digits, '.', '_', '-'; no leading '.')\n"
"  data       required: data file, relative to the plan's folder unless absolute\n"
"  response   required: response column(s), comma-separated inside a quoted field\n"
"  factors    required: factor columns, likewise\n"
"  optional, as the 'check' options of the same name: covariates, block, order, ss,\n"
"  levels, merge-numeric-levels, term-order, permutations, bootstrap, method, flip,\n"
"  resistant, tail-fit, stop-early, bootstrap-scheme, spread-scheme, conf, alpha,\n"
"  seed, delimiter, missing, missing-only, max-levels, max-columns. Flags (flip,\n"
"  resistant, tail-fit, stop-early, merge-numeric-levels) take yes/no/true/false/1/0.\n"
"  A column may be named by a prefix of exactly one option, as on the command line\n"
"  (perm = permutations). An\n"
"  empty field leaves the option at its default. threads, shard, format, output,\n"
"  quiet, ascii-terms and csv-bom belong to the batch and cannot be columns.\n"
"\n"
"Example plan (nightly.csv)\n"
"  name,data,response,factors,covariates,ss,permutations,flip\n"
"  rise,loaves.csv,rise_mm,\"proofing,flour\",,3,19999,\n"
"  crumb,loaves.csv,\"crumb,crust\",\"proofing,flour,rack\",oven_temp,2,9999,yes\n"
"  sturdy batch nightly.csv --resume      # results in nightly.results/\n"
"\n"
"Summary: summary.csv has name,status,exit_code,message,terms,disagreements,changed\n"
"(status: ok, failed, or untested when no term could be tested (exit 4, counted as\n"
"failed); terms: tested response × term pairs; disagreements: of those, verdict classical-only\n"
"or resampling-only; changed: verdicts that differ from OLD_DIR). summary.txt says the\n"
"same in words and lists the verdict changes.\n"
"\n"
"One batch at a time per folder: a batch locks DIR (flock on DIR/.sturdy-batch.lock)\n"
"and a second batch on the same folder refuses to start (exit 5) and names the first's\n"
"process. Ctrl-C, SIGTERM and SIGHUP remove the temporary file being written.\n"
"\n"
"Exit status: 0 all done, 2 usage error, 3 plan error (nothing run), 5 a result or the\n"
"summary could not be written, or DIR is in use by another batch, 6 some analyses\n"
"failed and the others completed.\n";

static char *str_printf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
static char *str_printf(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    char *s = n >= 0 ? malloc((size_t)n + 1) : NULL;
    if (!s) return NULL;
    va_start(ap, fmt);
    vsnprintf(s, (size_t)n + 1, fmt, ap);
    va_end(ap);
    return s;
}

/* --- standard error captured around calls that print their own messages ---------- */

typedef struct { int saved; FILE *tmp; } capture;

static void capture_begin(capture *cp)
{
    fflush(stderr);
    cp->tmp = tmpfile();
    cp->saved = cp->tmp ? dup(STDERR_FILENO) : -1;
    if (cp->saved < 0 || dup2(fileno(cp->tmp), STDERR_FILENO) < 0) {
        if (cp->saved >= 0) close(cp->saved);
        if (cp->tmp) fclose(cp->tmp);
        cp->tmp = NULL;          /* not captured: the messages go to stderr as usual */
    }
}

/* Restore stderr; the first captured line, without "sturdy: ", goes to msg. */
static void capture_end(capture *cp, char *msg, size_t len)
{
    msg[0] = '\0';
    if (!cp->tmp) return;
    fflush(stderr);
    dup2(cp->saved, STDERR_FILENO);
    close(cp->saved);
    rewind(cp->tmp);
    if (fgets(msg, (int)len, cp->tmp)) {
        msg[strcspn(msg, "\n")] = '\0';
        if (!strncmp(msg, "sturdy: ", 8)) memmove(msg, msg + 8, strlen(msg + 8) + 1);
    }
    fclose(cp->tmp);
}

/* --- one analysis ---------------------------------------------------------------- */

typedef struct { char **v; int n; int failed; } argvec;

static void arg_push(argvec *a, const char *s)
{
    char **v = realloc(a->v, (size_t)(a->n + 2) * sizeof *v);
    char *copy = strdup(s);
    if (v) a->v = v;
    if (!v || !copy) { free(copy); a->failed = 1; return; }
    a->v[a->n++] = copy;
    a->v[a->n] = NULL;
}

static void arg_free(argvec *a)
{
    for (int i = 0; i < a->n; i++) free(a->v[i]);
    free(a->v);
}

/* A name list with the blanks around its commas removed ("a, b" → "a,b"). */
static void push_list(argvec *a, const char *s)
{
    char *out = malloc(strlen(s) + 1), *o = out;
    if (!out) { a->failed = 1; return; }
    while (*s) {
        while (*s == ' ' || *s == '\t') s++;
        size_t len = strcspn(s, ",");
        size_t keep = len;
        while (keep && (s[keep - 1] == ' ' || s[keep - 1] == '\t')) keep--;
        memcpy(o, s, keep);
        o += keep;
        s += len;
        if (*s == ',') *o++ = *s++;
    }
    *o = '\0';
    arg_push(a, out);
    free(out);
}

/* The argument vector of the row's equivalent `check`; returns 0, or 2 with msg. */
static int row_argv(const batch *b, size_t row, argvec *a, char *msg, size_t len)
{
    for (size_t k = COL_DATA; k < NREQUIRED; k++)
        if (!*batch_cell(b, b->req[k], row)) {
            snprintf(msg, len, "the '%s' field is empty", batch_required_col(k));
            return CLI_EXIT_USAGE;
        }
    if (!strcmp(batch_cell(b, b->req[COL_DATA], row), "-")) {
        snprintf(msg, len, "a plan cannot read standard input ('-'); name the data file");
        return CLI_EXIT_USAGE;
    }
    arg_push(a, "check");
    arg_push(a, "--response");
    push_list(a, batch_cell(b, b->req[COL_RESPONSE], row));
    arg_push(a, "--factors");
    push_list(a, batch_cell(b, b->req[COL_FACTORS], row));
    for (int k = 0; k < MAX_CHECK_OPTIONS && cli_check_options[k].name; k++) {
        const char *v = batch_cell(b, b->opt[k], row), *full = cli_check_options[k].name;
        if (!*v) continue;
        char opt[64];
        snprintf(opt, sizeof opt, "--%s", full);
        if (cli_check_options[k].has_arg == no_argument) {
            int yes = !strcasecmp(v, "yes") || !strcasecmp(v, "true") || !strcmp(v, "1");
            int no = !strcasecmp(v, "no") || !strcasecmp(v, "false") || !strcmp(v, "0");
            if (!yes && !no) {
                snprintf(msg, len, "%s wants yes, no, true, false, 1 or 0, not '%s'", full, v);
                return CLI_EXIT_USAGE;
            }
            if (yes) arg_push(a, opt);
            continue;
        }
        arg_push(a, opt);
        arg_push(a, v);
    }
    if (b->threads) { arg_push(a, "--threads"); arg_push(a, b->threads); }
    arg_push(a, "--format");
    arg_push(a, "json");
    arg_push(a, "--quiet");
    arg_push(a, "--");           /* the data file is never read as an option */
    arg_push(a, batch_cell(b, b->req[COL_DATA], row));
    if (a->failed) {
        snprintf(msg, len, "out of memory");
        return STURDY_EINTERNAL;
    }
    return 0;
}

/* A message about `path` (the resolved data path) naming the file as the plan does. */
static char *plan_message(const char *msg, const char *path, const char *shown)
{
    size_t n = path ? strlen(path) : 0;
    if (n && !strncmp(msg, path, n)) return cli_str_cat3(shown, msg + n, "");
    return strdup(msg);
}

typedef struct {
    size_t done, resumed, failed;
    uint64_t perms;              /* rearrangements computed (not resumed) */
    double seconds;
    int eoutput;                 /* a result could not be written */
} totals;

/* Parse row i's equivalent `check` (its messages captured into msg, STURDY_ERR_LEN
 * bytes) into *c; *parsed says whether *c then needs cli_check_free. Returns 0 or an exit
 * status. */
static int parse_row(const batch *b, size_t i, argvec *a, cli_check *c, int *parsed,
                     const char *data_path, char *msg)
{
    int rc = row_argv(b, i, a, msg, STURDY_ERR_LEN);
    if (rc)
        return rc;
    capture cp;
    capture_begin(&cp);
    rc = cli_check_parse(a->n, a->v, 0, c);
    capture_end(&cp, msg, STURDY_ERR_LEN);
    *parsed = 1;
    if (rc == CLI_DONE) rc = CLI_EXIT_USAGE;
    if (rc && !msg[0]) snprintf(msg, STURDY_ERR_LEN, "invalid options");
    c->data_path = data_path;
    return rc;
}

/* "[i/n] name: B rearrangements × T terms × N rows ..." before row i is computed. */
static void announce_row(const batch *b, size_t i, const char *name, const cli_check *c,
                         const char *data_path)
{
    const sturdy_options *o = &c->opts;
    sturdy_table *t = NULL;
    char err[STURDY_ERR_LEN];
    uint64_t nt = sturdy_model_spec_terms(&o->model);
    fprintf(stderr, "[%zu/%zu] %s: %llu rearrangements × %llu term%s", i + 1,
            sturdy_table_nrows(b->plan), name, (unsigned long long)o->permutations,
            (unsigned long long)nt, nt == 1 ? "" : "s");
    if (c->table)
        fprintf(stderr, " × %zu rows", sturdy_table_nrows(c->table));
    else if (!sturdy_table_load(data_path ? data_path : c->data, &c->topts, &t, err))
        fprintf(stderr, " × %zu rows", sturdy_table_nrows(t));
    sturdy_table_free(t);
    if (c->responses.n > 1) fprintf(stderr, " × %zu responses", c->responses.n);
    if (o->bootstrap)
        fprintf(stderr, ", %llu bootstrap replicates", (unsigned long long)o->bootstrap);
    fputs(" ...\n", stderr);
}

/* The analysis's HTML page beside its result: NAME.html for NAME.json (index.html links
 * it). Returns 0 or an exit status with msg. */
static int write_page(const cli_check *c, const sturdy_result *r, const char *out_path,
                      totals *tot, char *msg)
{
    cli_check hc = *c;           /* the same settings, rendered as the page */
    hc.format = CLI_FMT_HTML;
    size_t n = strlen(out_path);
    char *page = n > 5 ? str_printf("%.*s.html", (int)(n - 5), out_path) : NULL;
    sturdy_buf out;
    sturdy_buf_init(&out);
    int rc = 0;
    if (!page || cli_render(&hc, r, &out) != STURDY_OK || !out.data || out.failed) {
        rc = STURDY_EINTERNAL;
        snprintf(msg, STURDY_ERR_LEN, "out of memory while writing the HTML page");
    } else {
        capture cp;
        capture_begin(&cp);
        rc = cli_write_output(page, out.data, out.len);
        capture_end(&cp, msg, STURDY_ERR_LEN);
        if (rc) tot->eoutput = 1;
    }
    sturdy_buf_free(&out);
    free(page);
    return rc;
}

/* Write r as the row's result file out_path (complete or not at all), after its key
 * file key_path, and read it back into *doc. Returns 0 or an exit status with msg
 * (STURDY_ERR_LEN bytes). */
static int write_result(const cli_check *c, const sturdy_result *r, const char *out_path,
                        const char *key_path, const cli_batch_key *key, totals *tot,
                        sturdy_result **doc, char *msg)
{
    int rc;
    sturdy_buf out;
    sturdy_buf_init(&out);
    if (cli_render(c, r, &out) != STURDY_OK || !out.data || out.failed) {
        rc = STURDY_EINTERNAL;
        snprintf(msg, STURDY_ERR_LEN, "out of memory while writing the result");
    } else {
        /* The key goes first: it names the new result's digest, so whatever an
         * interruption leaves (the old result or none beside the new key) does not
         * match it and is computed again. Without a key (the data could not be read for
         * it) the result is written and a later --resume computes it again. */
        char *kt = cli_batch_key_text(key, out.data, out.len);
        capture cp;
        capture_begin(&cp);
        rc = kt ? cli_write_output(key_path, kt, strlen(kt)) : (unlink(key_path), 0);
        if (!rc) rc = cli_write_output(out_path, out.data, out.len);
        capture_end(&cp, msg, STURDY_ERR_LEN);
        free(kt);
        if (rc) tot->eoutput = 1;
    }
    if (!rc) rc = write_page(c, r, out_path, tot, msg);
    if (!rc && sturdy_result_read_json(out_path, out.data, out.len, doc, NULL)) {
        rc = STURDY_EINTERNAL;
        snprintf(msg, STURDY_ERR_LEN, "the result could not be read back");
    }
    sturdy_buf_free(&out);
    return rc;
}

/* Compute row i and, on the lead rank, write its result (*doc: the result read back);
 * counts it in tot. Returns 0 or an exit status with msg (STURDY_ERR_LEN bytes). */
static int compute_row(const batch *b, size_t i, const char *name, cli_check *c,
                       const char *out_path, const char *key_path, const cli_batch_key *key,
                       totals *tot, sturdy_result **doc, char *msg)
{
    sturdy_result *r = NULL;
    double t0 = cli_now();
    int rc = cli_check_compute(c, &r, msg);
    double seconds = cli_now() - t0;
    if (!rc && b->lead)          /* under MPI only rank 0 holds the finished result */
        rc = write_result(c, r, out_path, key_path, key, tot, doc, msg);
    if (!rc) {
        sturdy_run_info info;
        sturdy_result_info(r, &info);
        uint64_t perms = info.perm_end - info.perm_begin;
        tot->done++;
        tot->perms += perms;
        tot->seconds += seconds;
        if (!b->quiet && b->lead) {
            fprintf(stderr, "[%zu/%zu] %s: ok in %.2f s", i + 1, sturdy_table_nrows(b->plan),
                    name, seconds);
            if (perms && seconds > 0)
                fprintf(stderr, ", %.0f rearrangements/s", (double)perms / seconds);
            fputc('\n', stderr);
        }
    }
    sturdy_result_free(r);
    return rc;
}

/* The row's outcome into oc: a failure (exit rc, message msg naming the data as the plan
 * does), or the result's own tally and the verdicts changed since `old`. */
static void finish_row(const batch *b, const char *name, int rc, const char *msg,
                       const char *data_path, const char *data, const sturdy_result *doc,
                       const sturdy_result *old, totals *tot, cli_batch_outcome *oc)
{
    oc->exit_code = rc;
    if (rc) {
        /* the message goes to stderr and the summaries: escaped, as it may quote data */
        char *hinted = cli_option_hints(msg);
        char *shown = plan_message(hinted ? hinted : msg, data_path, data);
        free(hinted);
        oc->message = cli_escaped(shown ? shown : msg);
        free(shown);
        tot->failed++;
        if (b->lead)
            fprintf(stderr, "sturdy: %s: failed (exit %d): %s\n", name, rc,
                    oc->message ? oc->message : "out of memory");
        return;
    }
    cli_batch_verdicts(&oc->verdicts, doc);
    if (cli_batch_tally(doc, oc)) {
        tot->failed++;
        if (b->lead)
            fprintf(stderr, "sturdy: %s: %s (exit %d)\n", name, oc->message ? oc->message
                                                                          : "untested",
                    oc->exit_code);
    }
    cli_batch_compare(name, old, doc, oc);
}

/* Run (or resume) row `i`; fills `oc`. `held`: the data table kept between rows. */
static void run_row(const batch *b, size_t i, cli_batch_data *held, totals *tot,
                    cli_batch_outcome *oc)
{
    const char *name = batch_cell(b, b->req[COL_NAME], i);
    const char *data = batch_cell(b, b->req[COL_DATA], i);
    char msg[STURDY_ERR_LEN] = "";
    argvec a = { 0 };
    cli_check c;
    int parsed = 0;
    char *out_path = str_printf("%s/%s.json", b->dir, name);
    char *key_path = str_printf("%s/.%s.key", b->dir, name);
    cli_batch_key key = { .ok = 0 };
    char *data_path = b->plan_dir && data[0] != '/' ? cli_str_cat3(b->plan_dir, "/", data)
                                                    : NULL;
    sturdy_result *doc = NULL, *old = NULL;
    char *bytes = NULL;
    size_t nbytes = 0;
    /* read before the new result is written: OLD_DIR may be DIR itself */
    char *old_path = b->old_dir ? str_printf("%s/%s.json", b->old_dir, name) : NULL;
    if (old_path) old = cli_batch_read_result(old_path);
    free(old_path);
    int rc = out_path && key_path && (data_path || !b->plan_dir || data[0] == '/')
             ? 0 : STURDY_EINTERNAL;
    /* (data_path is NULL by design when the plan has no folder or the path is absolute) */
    if (rc) snprintf(msg, sizeof msg, "out of memory");
    if (!rc) rc = parse_row(b, i, &a, &c, &parsed, data_path, msg);
    /* the file is read once: the analysis parses the very bytes the key digests, so a
     * result never gets the key of data other than its own */
    if (!rc)
        cli_batch_key_make(&key, a.v, a.n, data_path ? data_path : c.data, &bytes, &nbytes);
    /* a result kept by --resume needs its page too (a run killed between writing the
       two left the result alone): without it the row is computed again */
    int have_page = 0;
    if (b->resume) {
        char *page_path = str_printf("%s/%s.html", b->dir, name);
        have_page = page_path && access(page_path, F_OK) == 0;
        free(page_path);
    }
    if (!rc && have_page && (doc = cli_batch_resumable(&key, out_path, key_path))) {
        tot->resumed++;
        oc->resumed = 1;
        if (!b->quiet && b->lead)
            fprintf(stderr, "[%zu/%zu] %s: kept (its result is present and matches)\n", i + 1,
                    sturdy_table_nrows(b->plan), name);
    } else if (!rc) {
        if (bytes) c.table = cli_batch_data_table(held, c.data, key.data, bytes, nbytes,
                                                  &c.topts);
        c.cache = b->cache;
        free(bytes);
        bytes = NULL;
        if (!b->quiet && b->lead) announce_row(b, i, name, &c, data_path);
        double before = tot->seconds;
        rc = compute_row(b, i, name, &c, out_path, key_path, &key, tot, &doc, msg);
        oc->seconds = tot->seconds - before;
    }
    finish_row(b, name, rc, msg, data_path, data, doc, old, tot, oc);
    free(bytes);
    sturdy_result_free(doc);
    sturdy_result_free(old);
    if (parsed) cli_check_free(&c);
    arg_free(&a);
    free(out_path);
    free(key_path);
    free(data_path);
}

/* --- the run (the results folder: batch_dir.c) ----------------------------------- */

/* The temporary files a killed run left in the folder, for the plan's names. */
static void remove_stale(const batch *b)
{
    size_t n = sturdy_table_nrows(b->plan);
    const char **names = calloc(n + 1, sizeof *names);
    if (!names) return;          /* nothing removed: they are harmless, and a later run
                                    removes them */
    for (size_t i = 0; i < n; i++) names[i] = batch_cell(b, b->req[COL_NAME], i);
    cli_batch_remove_stale(b->dir, names, n, b->quiet);
    free(names);
}

static int run_batch(batch *b)
{
    int rc = batch_plan_load(b);
    if (rc) return rc;
    const char *slash = strrchr(b->plan_path, '/');
    if (slash && !(b->plan_dir = strndup(b->plan_path, slash == b->plan_path ? 1
                                                : (size_t)(slash - b->plan_path))))
        return STURDY_EINTERNAL;
    if ((rc = cli_batch_make_dir(b->dir))) return rc;
    /* only the lead rank writes, so only it locks; every rank stops if it cannot */
    if ((rc = cli_mpi_agree(b->lead ? cli_batch_lock(b->dir, &b->lock_fd) : 0))) return rc;
    if (b->lead) remove_stale(b);    /* under the lock: no other batch's files are live */
    size_t n = sturdy_table_nrows(b->plan);
    cli_batch_outcome *oc = calloc(n, sizeof *oc);
    if (!oc) return STURDY_EINTERNAL;
    totals tot = { 0 };
    cli_batch_data held = { 0 };
    b->cache = sturdy_cache_new();
    for (size_t i = 0; i < n; i++) {
        sturdy_buf_init(&oc[i].changes);
        sturdy_buf_init(&oc[i].verdicts);
        run_row(b, i, &held, &tot, &oc[i]);
    }
    cli_batch_data_free(&held);
    sturdy_cache_free(b->cache);
    b->cache = NULL;
    const char **names = calloc(n + 1, sizeof *names);
    for (size_t i = 0; names && i < n; i++) names[i] = batch_cell(b, b->req[COL_NAME], i);
    int wrote = !names ? STURDY_EINTERNAL
                : b->lead ? cli_batch_write_summary(b->plan_path, b->dir, b->old_dir, names,
                                                    oc, n)
                          : 0;
    if (!wrote && names && b->lead)
        wrote = cli_batch_write_index(b->plan_path, b->dir, b->old_dir, names, oc, n);
    free(names);
    if (!b->quiet && b->lead) {
        fprintf(stderr, "sturdy: batch: %zu analyses: %zu computed, %zu kept, %zu failed",
                n, tot.done, tot.resumed, tot.failed);
        if (tot.perms && tot.seconds > 0)
            fprintf(stderr, "; %llu rearrangements in %.2f s (%.0f/s)",
                    (unsigned long long)tot.perms, tot.seconds, (double)tot.perms / tot.seconds);
        fprintf(stderr, "\nsturdy: summary in %s/summary.txt\n", b->dir);
    }
    for (size_t i = 0; i < n; i++) {
        free(oc[i].message);
        sturdy_buf_free(&oc[i].changes);
        sturdy_buf_free(&oc[i].verdicts);
    }
    free(oc);
    if (wrote || tot.eoutput) return STURDY_EOUTPUT;
    return tot.failed ? BATCH_EXIT_SOME_FAILED : 0;
}

int sturdy_cli_batch(int argc, char **argv)
{
    enum { OPT_RESUME = 256, OPT_COMPARE, OPT_THREADS };
    static const struct option opts[] = {
        { "output", required_argument, NULL, 'o' },
        { "resume", no_argument, NULL, OPT_RESUME },
        { "compare", required_argument, NULL, OPT_COMPARE },
        { "threads", required_argument, NULL, OPT_THREADS },
        { "quiet", no_argument, NULL, 'q' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 }
    };
    batch b = { 0 };
    b.lock_fd = -1;
    b.lead = cli_mpi_rank() == 0;
    int opt;
    uint64_t u;
    struct stat sb;
    opterr = 0;
    optind = 1;
    while ((opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (opt) {
        case 'h': fputs(batch_help, stdout); return 0;
        case 'o':
            if (!*optarg) return cli_usage_error("batch", "--output wants a folder name");
            b.dir = optarg;
            break;
        case OPT_RESUME: b.resume = 1; break;
        case OPT_COMPARE:
            if (stat(optarg, &sb) != 0 || !S_ISDIR(sb.st_mode))
                return cli_usage_error("batch", "--compare wants a folder of earlier results; "
                                       "'%s' is not one", optarg);
            b.old_dir = optarg;
            break;
        case OPT_THREADS:
            if (!cli_parse_u64(optarg, &u) || u > 4096)
                return cli_usage_error("batch", "--threads wants a whole number up to 4096, "
                                       "not '%s'", optarg);
            b.threads = optarg;
            break;
        case 'q': b.quiet = 1; break;
        case ':':
            return cli_usage_error("batch", "option '%s' needs a value", argv[optind - 1]);
        default:
            return cli_usage_error("batch", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (argc - optind != 1) return cli_usage_error("batch", "name one plan file");
    b.plan_path = argv[optind];
    char *dir = NULL;
    if (!b.dir && !(b.dir = dir = cli_batch_default_dir(b.plan_path))) return STURDY_EINTERNAL;
    int rc = run_batch(&b);
    if (b.lock_fd >= 0) close(b.lock_fd);   /* releases the lock; the file stays */
    sturdy_table_free(b.plan);
    free(b.plan_dir);
    free(dir);
    return rc;
}
