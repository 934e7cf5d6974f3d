/* run.c — one `check` (or `demo`): load the table, analyse it, render the report and
 * write it; the work estimate and progress go to standard error only. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"

/* Progress lines at most this often (seconds), i.e. about 5 a second. */
#define PROGRESS_INTERVAL 0.2
/* Only runs predicted to take longer than this (seconds) show progress at all. */
#define PROGRESS_MIN_RUN 1.0

typedef struct {
    double t0, last;
    int shown;
    int width;      /* characters of the last progress line, to blank it out */
} progress_state;

double cli_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Called by the library from one thread at a time; writes only to stderr. */
static void progress(void *ctx, uint64_t done, uint64_t total)
{
    progress_state *p = ctx;
    double t = cli_now(), elapsed = t - p->t0;
    if (done == 0 || total == 0 || done >= total) return;
    if (t - p->last < PROGRESS_INTERVAL || elapsed < PROGRESS_INTERVAL) return;
    double rate = (double)done / elapsed;
    double left = (double)(total - done) / rate;
    if (!p->shown && elapsed + left < PROGRESS_MIN_RUN) return;
    p->last = t;
    p->shown = 1;
    int n = fprintf(stderr, "\r rearrangements %llu/%llu  %.0f/s  ~%.0fs left ",
                    (unsigned long long)done, (unsigned long long)total, rate, left + 0.5);
    if (n < p->width) fprintf(stderr, "%*s", p->width - n, "");
    if (n > p->width) p->width = n;
}

static void progress_clear(progress_state *p)
{
    if (p->shown) fprintf(stderr, "\r%*s\r", p->width, "");
}

static void work_estimate(const cli_check *c, const sturdy_table *t)
{
    const sturdy_options *o = &c->opts;
    uint64_t per = o->shard_count ? (o->permutations + o->shard_count - 1) / o->shard_count
                                  : o->permutations;
    fprintf(stderr, "sturdy: work: %llu rearrangements × %llu terms × %zu rows",
            (unsigned long long)per, (unsigned long long)sturdy_model_spec_terms(&o->model),
            sturdy_table_nrows(t));
    if (c->responses.n > 1) fprintf(stderr, " × %zu responses", c->responses.n);
    if (o->bootstrap)
        fprintf(stderr, ", and %llu bootstrap replicates", (unsigned long long)o->bootstrap);
    if (o->shard_count)
        fprintf(stderr, " (shard %llu of %llu)", (unsigned long long)o->shard_index,
                (unsigned long long)o->shard_count);
    fputc('\n', stderr);
}

static void achieved(const sturdy_result *r, double seconds)
{
    sturdy_run_info info;
    sturdy_result_info(r, &info);
    uint64_t perms = info.perm_end - info.perm_begin, boots = info.boot_end - info.boot_begin;
    fprintf(stderr, "sturdy: done in %.2f s", seconds);
    if (perms && seconds > 0)
        fprintf(stderr, "; %.0f rearrangements/s", (double)perms / seconds);
    else if (boots && seconds > 0)
        fprintf(stderr, "; %.0f bootstrap replicates/s", (double)boots / seconds);
    fputc('\n', stderr);
}

static int use_color(const cli_check *c)
{
    const char *term = getenv("TERM");
    return c->format == CLI_FMT_TEXT && !c->out_path && isatty(STDOUT_FILENO) &&
           getenv("NO_COLOR") == NULL && !(term && strcmp(term, "dumb") == 0);
}

int cli_render(const cli_check *c, const sturdy_result *r, sturdy_buf *out)
{
    sturdy_report_opts ro;
    sturdy_report_opts_init(&ro);
    ro.color = use_color(c);
    ro.partial = c->opts.shard_count > 0;
    ro.args = (const char *const *)c->argv;
    ro.nargs = (size_t)c->argc;
    ro.cwd = c->cwd;
    ro.ascii_terms = c->ascii_terms;
    ro.bom = c->csv_bom;
    /* the report advises in terms of this program's options */
    ro.setting_names[STURDY_SETTING_ORDER] = "--order";
    ro.setting_names[STURDY_SETTING_PERMUTATIONS] = "-B";
    ro.setting_names[STURDY_SETTING_BOOTSTRAP] = "--bootstrap";
    ro.setting_names[STURDY_SETTING_FACTORS] = "-f";
    ro.setting_names[STURDY_SETTING_BLOCK] = "--block";
    ro.setting_names[STURDY_SETTING_JSON] = "--format json";
    ro.setting_names[STURDY_SETTING_CONF] = "--conf";
    switch (c->format) {
    case CLI_FMT_JSON: return sturdy_report_json(r, &ro, out);
    case CLI_FMT_CSV: return sturdy_report_csv(r, &ro, out);
    case CLI_FMT_CSV_COMPARISONS: return sturdy_report_csv_comparisons(r, &ro, out);
    case CLI_FMT_HTML: return sturdy_report_html(r, &ro, out);
    case CLI_FMT_TEXT: break;
    }
    return sturdy_report_text(r, &ro, out);
}

int cli_check_compute(cli_check *c, sturdy_result **out, char *err)
{
    *out = NULL;
    sturdy_status st = sturdy_options_validate(&c->opts, err);
    if (st)
        return (int)st;
    sturdy_table *t = NULL;      /* read here, freed here */
    const sturdy_table *data = c->table;
    if (data) {
        /* read by the caller */
    } else if (c->demo) {
        st = sturdy_table_load_buffer(CLI_DEMO_NAME, sturdy_demo_csv, sturdy_demo_csv_len,
                                      &c->topts, &t, err);
    } else if (c->data_path) { /* read from elsewhere (merge), reported as given */
        size_t len = 0;
        char *text = cli_read_file(c->data_path, &len);
        if (!text) {
            snprintf(err, STURDY_ERR_LEN, "%s: cannot read the data", c->data_path);
            return STURDY_EDATA;
        }
        st = sturdy_table_load_buffer(c->data, text, len, &c->topts, &t, err);
        free(text);
    } else {
        st = sturdy_table_load(c->data, &c->topts, &t, err);
    }
    if (st)
        return (int)st;
    if (!data) data = t;
    int talk = !c->quiet && isatty(STDERR_FILENO) && cli_mpi_rank() == 0;
    progress_state ps = { .t0 = cli_now() };
    sturdy_options opts = c->opts;
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.threads = c->threads;
    ctx.cache = c->cache;
    if (talk) {
        work_estimate(c, data);
        ctx.progress = progress;
        ctx.progress_arg = &ps;
    }
    if (cli_mpi_size() > 1) {
        if (opts.shard_count) {
            sturdy_table_free(t);
            snprintf(err, STURDY_ERR_LEN, "--shard cannot be combined with MPI ranks: each "
                                          "rank already computes its own slice");
            return STURDY_EUSAGE;
        }
        opts.shard_index = (uint64_t)cli_mpi_rank() + 1;
        opts.shard_count = (uint64_t)cli_mpi_size();
    }
    ps.t0 = cli_now();
    sturdy_result *r = NULL;
    st = sturdy_analyze(data, &opts, &ctx, &r, err);
    if (cli_mpi_size() > 1)
        st = cli_mpi_combine(r, st, err);
    double seconds = cli_now() - ps.t0;
    progress_clear(&ps);
    sturdy_table_free(t);
    if (st) {
        sturdy_result_free(r);
        return (int)st;
    }
    if (talk)
        achieved(r, seconds);
    *out = r;
    return 0;
}

int cli_check_run(cli_check *c)
{
    char err[STURDY_ERR_LEN] = "";
    sturdy_result *r = NULL;
    /* -o naming the data file would replace the data with the report */
    if (!c->demo && c->out_path && cli_same_file(c->out_path, c->data_path ? c->data_path
                                                                           : c->data))
        return cli_usage_error(c->command, "-o '%s' is the data file itself; the report "
                               "would replace the data: name another file", c->out_path);
    int st = cli_check_compute(c, &r, err);
    if (st) {
        if (cli_mpi_rank() == 0 || st != STURDY_EUSAGE) {
            if (st == STURDY_EUSAGE) cli_usage_error(c->command, "%s", err);
            else cli_print_error(NULL, err);
        }
        return st;
    }
    if (cli_mpi_rank() != 0) { /* only rank 0 writes */
        sturdy_result_free(r);
        return 0;
    }
    sturdy_buf out;
    sturdy_buf_init(&out);
    int rc = 0;
    if (cli_render(c, r, &out) != STURDY_OK || !out.data) {
        fputs("sturdy: out of memory while writing the report\n", stderr);
        rc = STURDY_EINTERNAL;
    } else {
        rc = cli_write_output(c->out_path, out.data, out.len);
    }
    if (!rc && c->figures_dir)
        rc = cli_write_figures(c->figures_dir, r);
    /* The report is written (it says why for each term), but a run that could test none
     * of the requested terms did not do what was asked (README: exit 4). */
    if (!rc && sturdy_result_tested_terms(r) == 0) {
        char *why = cli_escaped(sturdy_result_untested_reason(r));
        fprintf(stderr, "sturdy: none of the requested terms could be tested: %s\n",
                why ? why : "out of memory");
        free(why);
        rc = STURDY_EMODEL;
    }
    /* CSV has no place for the run's notes; keep them visible (they may quote levels) */
    if (!rc && !c->quiet && (c->format == CLI_FMT_CSV || c->format == CLI_FMT_CSV_COMPARISONS))
        for (size_t i = 0; i < sturdy_result_nnotes(r); i++) {
            char *note = cli_escaped(sturdy_result_note(r, i));
            fprintf(stderr, "sturdy: note: %s\n", note ? note : "out of memory");
            free(note);
        }
    sturdy_buf_free(&out);
    sturdy_result_free(r);
    return rc;
}
