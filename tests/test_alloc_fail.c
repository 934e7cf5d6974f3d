/* test_alloc_fail.c — fault injection through the allocation hook (sturdy_set_allocator).
 *
 * A small but complete run — load a CSV from memory, two analyses of a 2×3 design (factors
 * only, with the cells bootstrap and the permuted unequal-variance test; with a covariate
 * and a block, ter Braak and the wild bootstrap), each written as text, JSON, partial JSON
 * and CSV — is first run with a counting allocator. Then, for every k from 1 to that
 * count, it is rerun with allocation k failing, and each run must
 *   - fail with STURDY_EINTERNAL and a message (load, analysis), or with STURDY_EINTERNAL
 *     and the output buffer flagged failed (writers): never a truncated report passed
 *     as complete;
 *   - or succeed, only when the failed allocation was optional: its caller retried it
 *     with a smaller size (libcsv grows its field buffer that way), and then every output
 *     must equal the reference byte for byte;
 *   - leave no block allocated once everything is freed (the allocator counts live
 *     blocks; ASan's leak check in the sanitizer build names the place).
 * (STURDY_QUICK=1, the sanitizer run, refuses every fourth allocation of that sweep.)
 * A second, short sweep takes paths the complete run does not: the table read from a
 * file, and an analysis that stops with a usage error (an unknown column); there each
 * refusal must give STURDY_EINTERNAL, or the usage error itself after a retry.
 * With threads = 1 the allocation order is fixed, so allocation k is the same one in
 * every run. With threads = 2 the allocations inside a parallel region (per-thread
 * workspaces, the jackknife's per-term buffers) come in an order that changes from run
 * to run, so that sweep covers only the k that the counting run saw inside a parallel
 * region (omp_in_parallel): whichever thread's allocation gets number k, it is one of
 * that region's, and the assertions do not depend on which. */
#include <omp.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "check.h"
#include "sturdy/advanced.h"

/* ---------------------------------------------------------------- the allocator */

/* STURDY_ALLOC_TRACE=k runs only the 1-thread sweep's run k and prints where allocation
 * k was asked for (the sanitizer build has the stack printer; elsewhere it is absent). */
void __sanitizer_print_stack_trace(void) __attribute__((weak));
static unsigned long trace_k;

#define MAX_PAR_INDICES 4096

typedef struct {
    atomic_ulong count;          /* allocation requests so far (malloc and realloc) */
    atomic_long live;            /* blocks handed out and not yet freed */
    unsigned long fail_at;       /* request number that fails; 0 = none */
    atomic_int failed;           /* request fail_at was made (and refused) */
    /* the refused request, to recognise a caller that retries it smaller */
    void *fail_ptr;
    size_t fail_size;
    int fail_was_realloc;
    atomic_int retried;
    /* counting run: request numbers made inside a parallel region */
    int record_parallel;
    atomic_size_t npar;
    unsigned long par[MAX_PAR_INDICES];
} fault;

static unsigned long next_request(fault *f, int is_realloc, void *ptr, size_t size, int *fail)
{
    unsigned long k = atomic_fetch_add(&f->count, 1) + 1;
    *fail = f->fail_at && k == f->fail_at;
    if (*fail) {
        if (k == trace_k) {
            printf("allocation %lu: %s of %zu bytes, refused, asked for here:\n", k,
                   is_realloc ? "realloc" : "malloc", size);
            fflush(stdout);
            if (__sanitizer_print_stack_trace) __sanitizer_print_stack_trace();
        }
        f->fail_ptr = ptr;
        f->fail_size = size;
        f->fail_was_realloc = is_realloc;
        atomic_store(&f->failed, 1);
    } else if (f->fail_at && k == f->fail_at + 1 && is_realloc && f->fail_was_realloc &&
               ptr == f->fail_ptr && size < f->fail_size) {
        atomic_store(&f->retried, 1);
    }
    if (f->record_parallel && omp_in_parallel()) {
        size_t i = atomic_fetch_add(&f->npar, 1);
        if (i < MAX_PAR_INDICES) f->par[i] = k;
    }
    return k;
}

static void *fault_malloc(size_t size, void *arg)
{
    fault *f = arg;
    int fail;
    next_request(f, 0, NULL, size, &fail);
    if (fail) return NULL;
    void *p = malloc(size);
    if (p) atomic_fetch_add(&f->live, 1);
    return p;
}

static void *fault_realloc(void *ptr, size_t size, void *arg)
{
    fault *f = arg;
    int fail;
    next_request(f, 1, ptr, size, &fail);
    if (fail) return NULL;
    void *p = realloc(ptr, size);
    if (p && !ptr) atomic_fetch_add(&f->live, 1);
    return p;
}

static void fault_free(void *ptr, void *arg)
{
    fault *f = arg;
    atomic_fetch_sub(&f->live, 1);
    free(ptr);
}

static void fault_reset(fault *f, unsigned long fail_at, int record_parallel)
{
    atomic_store(&f->count, 0);
    atomic_store(&f->live, 0);
    f->fail_at = fail_at;
    atomic_store(&f->failed, 0);
    f->fail_ptr = NULL;
    f->fail_size = 0;
    f->fail_was_realloc = 0;
    atomic_store(&f->retried, 0);
    f->record_parallel = record_parallel;
    atomic_store(&f->npar, 0);
}

/* ---------------------------------------------------------------- the run */

/* Invented data: factors A (2 levels) × B (3, given in a chosen order), 4 rows per cell
 * plus one extra (unbalanced), block blk (levels 1 to 4, one row writing 2 as "2.0", which
 * the spec merges: a warning), covariate x, responses y and z; one row lacks z, so it is
 * left out (a dropped-row note). */
static char *make_csv(void)
{
    static const char *const bl[] = {"low", "mid", "high"};
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, 20240611u, 9, 0);
    size_t cap = 1 << 14, len = 0;
    char *csv = malloc(cap);
    if (!csv) return NULL;
    len += (size_t)snprintf(csv + len, cap - len, "A,B,blk,x,y,z\n");
    for (int a = 0; a < 2; a++)
        for (int b = 0; b < 3; b++)
            for (int i = 0; i < 4 + (a == 1 && b == 2); i++) {
                double u1 = sturdy_pcg_unit(&g), u2 = sturdy_pcg_unit(&g);
                double u3 = sturdy_pcg_unit(&g), u4 = sturdy_pcg_unit(&g);
                double x = 2.0 + 3.0 * u1;
                double y = 10.0 + 1.5 * a + 0.7 * b * (a + 1) + 0.8 * x + 2.0 * (u2 - 0.5) +
                           0.3 * (i % 4);
                double z = 5.0 + 0.4 * a - 0.3 * b + 3.0 * (u3 - 0.5) * (1 + b) + u4;
                const char *blk = a == 1 && b == 0 && i == 1 ? "2.0" : NULL;
                len += (size_t)snprintf(csv + len, cap - len, "a%d,%s,", a + 1, bl[b]);
                if (blk)
                    len += (size_t)snprintf(csv + len, cap - len, "%s,", blk);
                else
                    len += (size_t)snprintf(csv + len, cap - len, "%d,", i % 4 + 1);
                if (a == 0 && b == 1 && i == 2)
                    len += (size_t)snprintf(csv + len, cap - len, "%.4f,%.4f,NA\n", x, y);
                else
                    len += (size_t)snprintf(csv + len, cap - len, "%.4f,%.4f,%.4f\n", x, y,
                                            z);
            }
    return csv;
}

#define NMODELS 2
#define NWRITERS 4
static const char *const writer_names[NWRITERS] = {"text", "JSON", "partial JSON", "CSV"};
static const char *const stage_names[] = {"none", "load", "analysis", "report"};
enum { STAGE_NONE, STAGE_LOAD, STAGE_ANALYSIS, STAGE_REPORT };

typedef struct {
    sturdy_buf out[NMODELS][NWRITERS];
} outputs;

static void outputs_init(outputs *o)
{
    for (int m = 0; m < NMODELS; m++)
        for (int w = 0; w < NWRITERS; w++) sturdy_buf_init(&o->out[m][w]);
}

static void outputs_free(outputs *o)
{
    for (int m = 0; m < NMODELS; m++)
        for (int w = 0; w < NWRITERS; w++) sturdy_buf_free(&o->out[m][w]);
}

static int outputs_equal(const outputs *a, const outputs *b)
{
    for (int m = 0; m < NMODELS; m++)
        for (int w = 0; w < NWRITERS; w++) {
            const sturdy_buf *x = &a->out[m][w], *y = &b->out[m][w];
            if (x->failed || y->failed || x->len != y->len || !x->data || !y->data ||
                memcmp(x->data, y->data, x->len) != 0)
                return 0;
        }
    return 1;
}

typedef struct {
    sturdy_status st;
    int stage;
    int model, writer;           /* where a report failed */
    int flagged;                 /* that report's buffer says failed */
    char err[STURDY_ERR_LEN];
} outcome;

static void set_model(sturdy_options *o, int m)
{
    static const char *const ys[] = {"y", "z"}, *const y1[] = {"y"};
    static const char *const fs[] = {"A", "B"}, *const cov[] = {"x"};
    static const char *const border[] = {"low", "mid", "high"};
    static const sturdy_level_order lo[] = {{"B", border, 3}};
    sturdy_options_init(o);
    o->model.factors = fs;
    o->model.nfactors = 2;
    o->model.level_orders = lo;
    o->model.nlevel_orders = 1;
    /* few draws: every allocation is made whatever their number, and each of the
       thousands of runs of the sweep costs in proportion to them */
    o->permutations = 19;
    o->bootstrap = 19;
    if (m == 0) {
        /* factors only, two responses: cell variances and Johansen's F in the
           unequal-variance test, permuted; the cells bootstrap */
        o->model.responses = ys;
        o->model.nresponses = 2;
        o->boot_scheme = STURDY_BOOT_CELLS;
        o->spread_scheme = STURDY_SPREAD_PERMUTATION;
    } else {
        /* a covariate (every row its own group) and a block with two levels merged,
           ter Braak, Type II, wild bootstrap and the wild-bootstrap unequal-variance test;
           the outlier-resistant test */
        o->model.responses = y1;
        o->model.nresponses = 1;
        o->model.covariates = cov;
        o->model.ncovariates = 1;
        o->model.block = "blk";
        o->model.merge_numeric_levels = 1;
        o->method = STURDY_METHOD_TER_BRAAK;
        o->ss_type = 2;
        o->boot_scheme = STURDY_BOOT_WILD;
        o->spread_scheme = STURDY_SPREAD_WILD;
        o->resistant = 1;
        /* the comparisons' allocations are swept in the first model; their range
           integrals would double the sweep's time here */
        o->compare_mode = STURDY_COMPARE_NONE;
    }
}

static sturdy_status write_report(const sturdy_result *r, int w, sturdy_buf *out)
{
    static const char *const args[] = {"check", "data.csv", "-y", "y"};
    sturdy_report_opts ro;
    sturdy_report_opts_init(&ro);
    switch (w) {
    case 0: return sturdy_report_text(r, &ro, out);
    case 1: return sturdy_report_json(r, &ro, out);
    case 2:
        ro.partial = 1;
        ro.args = args;
        ro.nargs = 4;
        ro.cwd = "/tmp";
        return sturdy_report_json(r, &ro, out);
    default:
        ro.bom = 1;
        ro.ascii_terms = 1;
        return sturdy_report_csv(r, &ro, out);
    }
}

/* Everything the sweep repeats; *o holds the reports written (free with outputs_free). */
static outcome run_all(const char *csv, int threads, outputs *o)
{
    outcome oc;
    memset(&oc, 0, sizeof oc);
    sturdy_table *t = NULL;
    oc.st = sturdy_table_load_buffer("alloc.csv", csv, strlen(csv), NULL, &t, oc.err);
    if (oc.st) {
        oc.stage = STAGE_LOAD;
        return oc;
    }
    for (int m = 0; m < NMODELS; m++) {
        sturdy_options opt;
        sturdy_result *r = NULL;
        sturdy_context ctx;
        sturdy_context_init(&ctx);
        ctx.threads = threads;
        set_model(&opt, m);
        oc.st = sturdy_analyze(t, &opt, &ctx, &r, oc.err);
        if (oc.st) {
            oc.stage = STAGE_ANALYSIS;
            oc.model = m;
            if (r) oc.flagged = -1;          /* a result returned with an error */
            sturdy_result_free(r);
            break;
        }
        for (int w = 0; w < NWRITERS && !oc.st; w++) {
            oc.st = write_report(r, w, &o->out[m][w]);
            if (oc.st || o->out[m][w].failed) {
                oc.stage = STAGE_REPORT;
                oc.model = m;
                oc.writer = w;
                oc.flagged = o->out[m][w].failed;
            }
        }
        sturdy_result_free(r);
        if (oc.stage) break;
    }
    sturdy_table_free(t);
    return oc;
}

/* ---------------------------------------------------------------- the sweep */

typedef struct {
    unsigned long runs, failed_load, failed_analysis, failed_report, ok_retried, bad;
    unsigned long retried_k[4];  /* the first requests whose refusal was retried */
} tally;

/* One run with request k refused; 1 when it behaved. */
static int run_failing(fault *f, const char *csv, int threads, unsigned long k,
                       const outputs *ref, tally *ty)
{
    outputs o;
    outputs_init(&o);
    fault_reset(f, k, 0);
    outcome oc = run_all(csv, threads, &o);
    int same = oc.st == STURDY_OK && outputs_equal(&o, ref);
    outputs_free(&o);
    long live = atomic_load(&f->live);
    int failed = atomic_load(&f->failed), retried = atomic_load(&f->retried);
    char why[1024] = "";
    ty->runs++;
    if (!failed)
        snprintf(why, sizeof why, "request %lu was never made (only %lu)", k,
                 (unsigned long)atomic_load(&f->count));
    else if (oc.st == STURDY_OK && !retried)
        snprintf(why, sizeof why, "succeeded although the refused request was not retried");
    else if (oc.st == STURDY_OK && !same)
        snprintf(why, sizeof why, "succeeded after a retry, but the output differs");
    else if (oc.st != STURDY_OK && oc.st != STURDY_EINTERNAL)
        snprintf(why, sizeof why, "%s failed with status %d (%s), not EINTERNAL: %.400s",
                 stage_names[oc.stage], (int)oc.st, sturdy_status_name(oc.st), oc.err);
    else if (oc.st != STURDY_OK && oc.stage != STAGE_REPORT && !oc.err[0])
        snprintf(why, sizeof why, "%s failed without a message", stage_names[oc.stage]);
    else if (oc.st != STURDY_OK && oc.stage == STAGE_ANALYSIS && oc.flagged < 0)
        snprintf(why, sizeof why, "the analysis failed but returned a result");
    else if (oc.stage == STAGE_REPORT && (!oc.flagged || oc.st == STURDY_OK))
        snprintf(why, sizeof why, "the %s report of model %d: status %d, buffer %s",
                 writer_names[oc.writer], oc.model + 1, (int)oc.st,
                 oc.flagged ? "flagged failed" : "not flagged failed");
    else if (live != 0)
        snprintf(why, sizeof why, "%ld blocks left allocated (a leak) after %s failed: %.400s",
                 live, stage_names[oc.stage], oc.err);
    if (why[0]) {
        char line[1200];
        snprintf(line, sizeof line, "threads %d, allocation %lu refused: %s", threads, k, why);
        check_report(0, line);
        ty->bad++;
        return 0;
    }
    if (oc.st == STURDY_OK && ty->ok_retried < 4) ty->retried_k[ty->ok_retried] = k;
    if (oc.st == STURDY_OK) ty->ok_retried++;
    else if (oc.stage == STAGE_LOAD) ty->failed_load++;
    else if (oc.stage == STAGE_ANALYSIS) ty->failed_analysis++;
    else ty->failed_report++;
    return 1;
}

/* ---------------------------------------------------------------- an error path */

/* Paths the complete run does not take: reading the table from a file, then an analysis
 * that stops with a usage error — a response column that does not exist, whose message
 * suggests the closest name. */
static outcome run_error_path(const char *path)
{
    static const char *const wrong[] = {"yy"};
    outcome oc;
    memset(&oc, 0, sizeof oc);
    sturdy_table *t = NULL;
    oc.st = sturdy_table_load(path, NULL, &t, oc.err);
    if (oc.st) {
        oc.stage = STAGE_LOAD;
        return oc;
    }
    sturdy_options opt;
    set_model(&opt, 0);
    opt.model.responses = wrong;
    opt.model.nresponses = 1;
    sturdy_result *r = NULL;
    oc.st = sturdy_analyze(t, &opt, NULL, &r, oc.err);
    oc.stage = STAGE_ANALYSIS;
    if (r) oc.flagged = -1;
    sturdy_result_free(r);
    sturdy_table_free(t);
    return oc;
}

/* With request k refused the error path must end in STURDY_EINTERNAL with a message, or,
 * after a retried request, in the reference's own status and message. */
static void run_failing_error(fault *f, const char *path, unsigned long k, const outcome *ref,
                              tally *ty)
{
    fault_reset(f, k, 0);
    outcome oc = run_error_path(path);
    long live = atomic_load(&f->live);
    int same = oc.st == ref->st && !strcmp(oc.err, ref->err);
    char why[1024] = "";
    ty->runs++;
    if (!atomic_load(&f->failed))
        snprintf(why, sizeof why, "request %lu was never made", k);
    else if (oc.flagged < 0)
        snprintf(why, sizeof why, "the analysis returned a result with an error");
    else if (oc.st != STURDY_EINTERNAL && !(same && atomic_load(&f->retried)))
        snprintf(why, sizeof why, "%s ended with status %d, not EINTERNAL: %.400s",
                 stage_names[oc.stage], (int)oc.st, oc.err);
    else if (oc.st == STURDY_EINTERNAL && !oc.err[0])
        snprintf(why, sizeof why, "%s failed without a message", stage_names[oc.stage]);
    else if (live != 0)
        snprintf(why, sizeof why, "%ld blocks left allocated (a leak) after %s failed: %.400s",
                 live, stage_names[oc.stage], oc.err);
    if (why[0]) {
        char line[1200];
        snprintf(line, sizeof line, "error path, allocation %lu refused: %s", k, why);
        check_report(0, line);
        ty->bad++;
        return;
    }
    if (oc.st != STURDY_EINTERNAL) {
        if (ty->ok_retried < 4) ty->retried_k[ty->ok_retried] = k;
        ty->ok_retried++;
    } else if (oc.stage == STAGE_LOAD) {
        ty->failed_load++;
    } else {
        ty->failed_analysis++;
    }
}

static void report_tally(const char *what, const tally *ty)
{
    char line[500], ks[64] = "";
    for (unsigned long i = 0; i < ty->ok_retried && i < 4; i++)
        snprintf(ks + strlen(ks), sizeof ks - strlen(ks), "%s%lu", i ? ", " : ": k = ",
                 ty->retried_k[i]);
    snprintf(line, sizeof line,
             "%s: %lu runs, each failed cleanly or succeeded identically (load failed %lu, "
             "analysis failed %lu, a report flagged failed %lu, succeeded after a retried "
             "allocation %lu%s)", what, ty->runs, ty->failed_load, ty->failed_analysis,
             ty->failed_report, ty->ok_retried, ks);
    check_report(ty->bad == 0, line);
}

/* Reading back (report/read.c): the JSON result and the shard part of model `m`, with
 * allocation k refused (0: none). Returns the status; err gets the message. */
static sturdy_status read_back(const outputs *o, int m, char *err)
{
    sturdy_result *back = NULL;
    sturdy_part *part = NULL;
    const sturdy_buf *js = &o->out[m][1], *pj = &o->out[m][2];
    sturdy_status st = sturdy_result_read_json("r.json", js->data, js->len, &back, err);
    if (st && back)
        st = STURDY_EUSAGE;   /* an object returned with an error: caught below */
    if (!st && (st = sturdy_part_read_json("p.json", pj->data, pj->len, &part, err)) && part)
        st = STURDY_EUSAGE;
    sturdy_result_free(back);
    sturdy_part_free(part);
    return st;
}

/* Every allocation of reading each model's JSON result and shard part back refused in
 * turn: each refusal fails cleanly (EINTERNAL, a message, nothing left allocated). */
static void sweep_read_back(fault *f, const outputs *ref)
{
    for (int m = 0; m < NMODELS; m++) {
        char err[STURDY_ERR_LEN] = "", line[600];
        fault_reset(f, 0, 0);
        sturdy_status st = read_back(ref, m, err);
        unsigned long count = (unsigned long)atomic_load(&f->count);
        snprintf(line, sizeof line, "model %d reads back (%lu allocations): %s", m + 1, count,
                 st ? err : "ok");
        check_report(st == STURDY_OK && count > 100, line);
        unsigned long bad = 0, runs = 0;
        for (unsigned long k = 1; k <= count; k++) {
            err[0] = '\0';
            fault_reset(f, k, 0);
            st = read_back(ref, m, err);
            runs++;
            if (!atomic_load(&f->failed) || st != STURDY_EINTERNAL || !err[0] ||
                atomic_load(&f->live) != 0) {
                if (bad++ < 5) {
                    snprintf(line, sizeof line, "read back, model %d, allocation %lu refused: "
                             "status %d, %ld blocks left: %.300s", m + 1, k, (int)st,
                             (long)atomic_load(&f->live), err);
                    check_report(0, line);
                }
            }
        }
        snprintf(line, sizeof line, "model %d read back, every allocation refused in turn: "
                 "%lu runs, each failed cleanly (EINTERNAL, a message, no leak)", m + 1, runs);
        check_report(bad == 0, line);
    }
}

int main(void)
{
    static fault f;
    sturdy_allocator a = {fault_malloc, fault_realloc, fault_free, &f};
    setvbuf(stdout, NULL, _IOLBF, 0);   /* lines survive a crash in the sweep */
    char *csv = make_csv();
    CHECK("test data written", csv != NULL);
    if (!csv) return check_done();
    sturdy_set_allocator(&a);

    /* reference outputs and the number of allocations, one thread */
    outputs ref1, ref2;
    outputs_init(&ref1);
    outputs_init(&ref2);
    fault_reset(&f, 0, 0);
    outcome oc = run_all(csv, 1, &ref1);
    unsigned long count1 = (unsigned long)atomic_load(&f.count);
    if (oc.st) printf("reference run failed in %s: %s\n", stage_names[oc.stage], oc.err);
    CHECK_INT("reference run (1 thread) succeeds", oc.st, STURDY_OK);
    long held = 0;                     /* blocks the reference reports hold */
    for (int m = 0; m < NMODELS; m++)
        for (int w = 0; w < NWRITERS; w++) held += ref1.out[m][w].data != NULL;
    CHECK_INT("reference run leaves only its reports allocated", atomic_load(&f.live), held);
    printf("reference run: %lu allocations; reports of %zu, %zu, %zu and %zu bytes\n",
           count1, ref1.out[0][0].len, ref1.out[0][1].len, ref1.out[0][2].len,
           ref1.out[0][3].len);
    CHECK("the reference reports are not empty",
          ref1.out[1][0].len > 1000 && ref1.out[1][1].len > 1000 && ref1.out[1][3].len > 100);
    fault_reset(&f, 0, 0);
    outputs again;
    outputs_init(&again);
    run_all(csv, 1, &again);
    CHECK_INT("the allocation count is the same on a second run",
              atomic_load(&f.count), count1);
    CHECK("a second run writes the same reports", outputs_equal(&again, &ref1));
    outputs_free(&again);
    if (oc.st) {
        sturdy_set_allocator(NULL);
        free(csv);
        return check_done();
    }

    /* two threads: the same reports (the thread count never shows), and which request
       numbers fall inside parallel regions */
    fault_reset(&f, 0, 1);
    oc = run_all(csv, 2, &ref2);
    unsigned long count2 = (unsigned long)atomic_load(&f.count);
    size_t npar = atomic_load(&f.npar);
    CHECK_INT("reference run (2 threads) succeeds", oc.st, STURDY_OK);
    CHECK("2 threads make more allocations than 1 (per-thread workspaces)",
          count2 > count1);
    CHECK("2 threads write the same reports as 1", outputs_equal(&ref2, &ref1));
    CHECK("some allocations are made inside parallel regions", npar > 0);
    if (npar > MAX_PAR_INDICES) npar = MAX_PAR_INDICES;

    double t0 = (double)clock() / CLOCKS_PER_SEC;
    tally ty1 = {0}, ty2 = {0};
    const char *trace = getenv("STURDY_ALLOC_TRACE");
    if (trace && (trace_k = strtoul(trace, NULL, 10)) > 0) {
        run_failing(&f, csv, 1, trace_k, &ref1, &ty1);
        outputs_free(&ref1);
        outputs_free(&ref2);
        free(csv);
        return check_done();
    }
    /* STURDY_QUICK=1 (the sanitizer run, several times slower per run) refuses every
       fourth allocation only; the full sweep runs in make check */
    const char *quick = getenv("STURDY_QUICK");
    unsigned long stride = quick && !strcmp(quick, "1") ? 4 : 1;
    for (unsigned long k = 1; k <= count1; k += stride)
        run_failing(&f, csv, 1, k, &ref1, &ty1);
    report_tally(stride == 1 ? "1 thread, every allocation refused in turn"
                             : "1 thread, every fourth allocation refused in turn", &ty1);
    /* with 2 threads, the requests made inside parallel regions */
    for (size_t i = 0; i < npar; i++) run_failing(&f, csv, 2, f.par[i], &ref2, &ty2);
    report_tally("2 threads, each allocation inside a parallel region refused", &ty2);

    sweep_read_back(&f, &ref1);

    /* the error path, from a file */
    char path[] = "/tmp/sturdy_alloc_XXXXXX";
    int fd = mkstemp(path);
    FILE *fp = fd >= 0 ? fdopen(fd, "w") : NULL;
    int written = fp && fputs(csv, fp) >= 0;
    if (fp) written &= fclose(fp) == 0;
    CHECK("test data written to a temporary file", written);
    if (written) {
        fault_reset(&f, 0, 0);
        outcome ref = run_error_path(path);
        unsigned long count3 = (unsigned long)atomic_load(&f.count);
        CHECK_INT("an unknown response column is a usage error", ref.st, STURDY_EUSAGE);
        CHECK("its message suggests the closest name", strstr(ref.err, "did you mean 'y'") != NULL);
        CHECK_INT("the error path leaves no block allocated", atomic_load(&f.live), 0);
        tally ty3 = {0};
        for (unsigned long k = 1; k <= count3; k++) run_failing_error(&f, path, k, &ref, &ty3);
        report_tally("table from a file and a usage error, every allocation refused in turn",
                     &ty3);
    }
    if (fd >= 0) unlink(path);
    printf("the sweeps took %.1f s of CPU time\n", (double)clock() / CLOCKS_PER_SEC - t0);

    /* restoring the C library's allocator: the library still works */
    outputs_free(&ref1);
    outputs_free(&ref2);
    sturdy_set_allocator(NULL);
    sturdy_table *t = NULL;
    char err[STURDY_ERR_LEN];
    CHECK_INT("after sturdy_set_allocator(NULL) a table still loads",
              sturdy_table_load_buffer("x", csv, strlen(csv), NULL, &t, err), STURDY_OK);
    sturdy_table_free(t);
    free(csv);
    return check_done();
}
