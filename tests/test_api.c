/* test_api.c — the stable tier of the public API, used as an embedding program would use
 * it (this file includes <sturdy/sturdy.h> only): a table from the caller's columns equals
 * the same table read from CSV; accessors agree with the JSON report; a result read back
 * gives the same numbers; a run split into parts and added up equals the whole run bit
 * for bit; the context's thread count does not change a bit; a cancelled run stops with
 * STURDY_ECANCELLED; parts with impossible raw material are refused, naming the file. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "sturdy/sturdy.h"

/* invented property-test data: a 3 × 2 layout, 4 rows per cell */
#define NROWS 24
static const char *const col_names[] = { "tool", "coat", "wear" };

static void make_fields(const char *fields[3][NROWS], char text[NROWS][32])
{
    static const char *const tools[] = { "t1", "t2", "t3" }, *const coats[] = { "c1", "c2" };
    for (int i = 0; i < NROWS; i++) {
        int t = i % 3, c = (i / 3) % 2;
        double y = 10.0 + 1.5 * t + 0.8 * c + 0.37 * ((i * 7919) % 13 - 6);
        snprintf(text[i], 32, "%.3f", y);
        fields[0][i] = tools[t];
        fields[1][i] = coats[c];
        fields[2][i] = text[i];
    }
}

static sturdy_table *from_columns(void)
{
    static const char *fields[3][NROWS];
    static char text[NROWS][32];
    make_fields(fields, text);
    const char *const *cols[3] = { fields[0], fields[1], fields[2] };
    sturdy_table *t = NULL;
    char err[STURDY_ERR_LEN] = "";
    sturdy_status st = sturdy_table_from_columns("mem", col_names, 3, cols, NROWS, NULL, &t,
                                                 err);
    CHECK("a table from the caller's columns", st == STURDY_OK && t);
    return t;
}

static sturdy_table *from_csv(void)
{
    static const char *fields[3][NROWS];
    static char text[NROWS][32];
    make_fields(fields, text);
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_buf_puts(&b, "tool,coat,wear\n");
    for (int i = 0; i < NROWS; i++)
        sturdy_buf_printf(&b, "%s,%s,%s\n", fields[0][i], fields[1][i], fields[2][i]);
    sturdy_table *t = NULL;
    char err[STURDY_ERR_LEN] = "";
    sturdy_status st = sturdy_table_load_buffer("mem", b.data, b.len, NULL, &t, err);
    sturdy_buf_free(&b);
    CHECK("the same table from CSV text", st == STURDY_OK && t);
    return t;
}

static const char *ys[] = { "wear" }, *fs[] = { "tool", "coat" };

static void set_options(sturdy_options *o)
{
    sturdy_options_init(o);
    o->model.responses = ys;
    o->model.nresponses = 1;
    o->model.factors = fs;
    o->model.nfactors = 2;
    o->permutations = 499;
    o->bootstrap = 99;
    o->seed = 7;
}

static sturdy_result *run(const sturdy_table *t, const sturdy_options *o, int threads,
                          sturdy_status want)
{
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.threads = threads;
    sturdy_result *r = NULL;
    char err[STURDY_ERR_LEN] = "";
    sturdy_status st = sturdy_analyze(t, o, &ctx, &r, err);
    CHECK_INT("sturdy_analyze status", st, want);
    return r;
}

static char *json_of(const sturdy_result *r, int partial)
{
    sturdy_report_opts ro;
    sturdy_report_opts_init(&ro);
    ro.partial = partial;
    sturdy_buf b;
    sturdy_buf_init(&b);
    CHECK("JSON written", sturdy_report_json(r, &ro, &b) == STURDY_OK && b.data && !b.failed);
    return b.data;
}

/* Every accessor number of a and b equal (NaN equal to NaN). */
static void same_numbers(const char *what, const sturdy_result *a, const sturdy_result *b)
{
    int same = sturdy_result_nresponses(a) == sturdy_result_nresponses(b) &&
               sturdy_result_nterms(a) == sturdy_result_nterms(b);
    for (size_t i = 0; same && i < sturdy_result_nresponses(a); i++)
        for (size_t k = 0; same && k < sturdy_result_nterms(a); k++) {
            same &= !strcmp(sturdy_result_term(a, k), sturdy_result_term(b, k));
            same &= sturdy_term_verdict(a, i, k) == sturdy_term_verdict(b, i, k);
            for (int v = 0; v < STURDY_TV_COUNT; v++) {
                double x = sturdy_term_get(a, i, k, (sturdy_term_value)v);
                double y = sturdy_term_get(b, i, k, (sturdy_term_value)v);
                same &= (isnan(x) && isnan(y)) || x == y;
            }
            for (int e = 0; e < STURDY_NES; e++) {
                double x = sturdy_term_effect(a, i, k, e), y = sturdy_term_effect(b, i, k, e);
                same &= (isnan(x) && isnan(y)) || x == y;
                for (int m = 0; m <= STURDY_CI_TEST_INVERSION; m++) {
                    double l1, h1, l2, h2;
                    int h = sturdy_term_interval(a, i, k, e, (sturdy_ci_method)m, &l1, &h1);
                    same &= h == sturdy_term_interval(b, i, k, e, (sturdy_ci_method)m, &l2, &h2);
                    same &= !h || (l1 == l2 && h1 == h2);
                }
                sturdy_ci_method m1, m2;
                double l1, h1, l2, h2;
                const char *w1 = sturdy_term_recommended(a, i, k, e, &m1, &l1, &h1);
                const char *w2 = sturdy_term_recommended(b, i, k, e, &m2, &l2, &h2);
                same &= m1 == m2 && w1 && w2 && !strcmp(w1, w2) &&
                        ((isnan(l1) && isnan(l2)) || l1 == l2) &&
                        ((isnan(h1) && isnan(h2)) || h1 == h2);
            }
        }
    CHECK(what, same);
}

/* The recommended interval: test inversion under the residual scheme, noncentral F
 * without replicates or under the wild scheme, none for η² without replicates; the
 * accessors agree with each other and are in range. */
static void test_recommended(const sturdy_table *t, const sturdy_result *a)
{
    sturdy_ci_method m;
    double lo, hi, l2, h2;
    const char *why = sturdy_term_recommended(a, 0, 0, STURDY_ES_PARTIAL_ETA2, &m, &lo, &hi);
    CHECK("recommended partial η²: test inversion with a reason",
          m == STURDY_CI_TEST_INVERSION && why && strstr(why, "test inversion"));
    CHECK("recommended = the test-inversion interval",
          sturdy_term_interval(a, 0, 0, STURDY_ES_PARTIAL_ETA2, STURDY_CI_TEST_INVERSION, &l2,
                               &h2) && l2 == lo && h2 == hi && lo >= 0 && lo <= hi && hi < 1);
    CHECK("partial ω²'s test inversion = partial η²'s (one population quantity)",
          sturdy_term_interval(a, 0, 0, STURDY_ES_PARTIAL_OMEGA2, STURDY_CI_TEST_INVERSION,
                               &l2, &h2) && l2 == lo && h2 == hi);
    double f = sturdy_term_effect(a, 0, 0, STURDY_ES_COHENS_F);
    sturdy_term_recommended(a, 0, 0, STURDY_ES_COHENS_F, &m, &l2, &h2);
    CHECK("Cohen's f's interval maps partial η²'s: f = √(η²/(1 − η²))",
          m == STURDY_CI_TEST_INVERSION && fabs(l2 - sqrt(lo / (1 - lo))) < 1e-12 &&
          fabs(h2 - sqrt(hi / (1 - hi))) < 1e-12 && f > 0);
    CHECK("no test inversion for η²",
          !sturdy_term_interval(a, 0, 0, STURDY_ES_ETA2, STURDY_CI_TEST_INVERSION, &l2, &h2));
    CHECK("out-of-range recommended: NULL, none, NaN",
          !sturdy_term_recommended(a, 0, 9, 0, &m, &l2, &h2) && m == STURDY_CI_NONE &&
          isnan(l2) && isnan(h2));
    sturdy_options o;
    set_options(&o);
    o.bootstrap = 0;
    sturdy_result *r = run(t, &o, 1, STURDY_OK);
    if (r) {
        sturdy_term_recommended(r, 0, 0, STURDY_ES_PARTIAL_ETA2, &m, &lo, &hi);
        CHECK("no replicates: the noncentral-F interval is recommended",
              m == STURDY_CI_NONCENTRAL_F &&
              sturdy_term_interval(r, 0, 0, STURDY_ES_PARTIAL_ETA2, STURDY_CI_NONCENTRAL_F,
                                   &l2, &h2) && l2 == lo && h2 == hi);
        why = sturdy_term_recommended(r, 0, 0, STURDY_ES_ETA2, &m, &lo, &hi);
        CHECK("no replicates: no interval for η², with a reason",
              m == STURDY_CI_NONE && isnan(lo) && why && strstr(why, "none"));
    }
    sturdy_result_free(r);
    set_options(&o);
    o.boot_scheme = STURDY_BOOT_WILD;
    r = run(t, &o, 1, STURDY_OK);
    if (r) {
        why = sturdy_term_recommended(r, 0, 0, STURDY_ES_PARTIAL_ETA2, &m, &lo, &hi);
        CHECK("wild scheme: noncentral F recommended (the test inversion is computed)",
              m == STURDY_CI_NONCENTRAL_F && strstr(why, "residual") &&
              sturdy_term_interval(r, 0, 0, STURDY_ES_PARTIAL_ETA2, STURDY_CI_TEST_INVERSION,
                                   &l2, &h2));
    }
    sturdy_result_free(r);
}

static int same_d(double x, double y) { return (isnan(x) && isnan(y)) || x == y; }
static int same_s(const char *x, const char *y) { return (!x && !y) || (x && y && !strcmp(x, y)); }

/* The means and comparisons of a result read back equal the run's, field by field. */
static void same_compare(const sturdy_result *a, const sturdy_result *b)
{
    size_t nm = sturdy_result_nmeans(a, 0), nc = sturdy_result_ncomparisons(a, 0);
    CHECK("read back: as many means and comparisons (and some)",
          nm > 0 && nc > 0 && nm == sturdy_result_nmeans(b, 0) &&
          nc == sturdy_result_ncomparisons(b, 0));
    int same = 1;
    for (size_t i = 0; i < nm && i < sturdy_result_nmeans(b, 0); i++) {
        sturdy_mean_info x, y;
        sturdy_result_mean(a, 0, i, &x);
        sturdy_result_mean(b, 0, i, &y);
        same &= same_s(x.term, y.term) && x.nfactors == y.nfactors && same_d(x.estimate, y.estimate) &&
                same_d(x.se, y.se) && same_d(x.df, y.df) && same_d(x.ci_lo, y.ci_lo) &&
                same_d(x.ci_hi, y.ci_hi) && same_s(x.note, y.note);
        for (size_t f = 0; f < x.nfactors && f < y.nfactors; f++)
            same &= same_s(x.factors[f], y.factors[f]) && same_s(x.levels[f], y.levels[f]);
    }
    for (size_t i = 0; i < nc && i < sturdy_result_ncomparisons(b, 0); i++) {
        sturdy_comparison_info x, y;
        sturdy_result_comparison(a, 0, i, &x);
        sturdy_result_comparison(b, 0, i, &y);
        same &= same_s(x.term, y.term) && same_s(x.factor, y.factor) && same_s(x.level, y.level) &&
                same_s(x.versus, y.versus) && same_s(x.by_factor, y.by_factor) &&
                same_s(x.by_level, y.by_level) && same_s(x.adjustment, y.adjustment) &&
                same_d(x.estimate, y.estimate) && same_d(x.se, y.se) && same_d(x.df, y.df) &&
                same_d(x.t, y.t) && same_d(x.p, y.p) && same_d(x.hedges_g, y.hedges_g) &&
                same_d(x.ci_lo, y.ci_lo) && same_d(x.ci_hi, y.ci_hi) &&
                same_d(x.sim_lo, y.sim_lo) && same_d(x.sim_hi, y.sim_hi) &&
                same_d(x.p_adjusted, y.p_adjusted) && same_d(x.p_perm_adjusted, y.p_perm_adjusted) &&
                same_d(x.boot_sim_lo, y.boot_sim_lo) && same_d(x.boot_sim_hi, y.boot_sim_hi) &&
                x.reported == y.reported && same_s(x.note, y.note) && same_s(x.perm_note, y.perm_note);
    }
    CHECK("read back: every mean and comparison field equals the run's", same);
}

static void test_read_back(const sturdy_result *r)
{
    char *text = json_of(r, 0);
    sturdy_result *back = NULL;
    char err[STURDY_ERR_LEN] = "";
    sturdy_status st = sturdy_result_read_json("r.json", text, strlen(text), &back, err);
    CHECK("a JSON result reads back", st == STURDY_OK);
    if (back) {
        same_numbers("read back: every accessor number equals the run's", r, back);
        same_compare(r, back);
        sturdy_run_info a, b;
        sturdy_result_info(r, &a);
        sturdy_result_info(back, &b);
        CHECK("read back: input, rows and counts", a.rows_used == b.rows_used &&
              a.nperm == b.nperm && a.nboot == b.nboot && !strcmp(a.input, b.input));
        const sturdy_options *o = sturdy_result_options(back);
        CHECK("read back: settings and model names", o->seed == 7 && o->ss_type == 3 &&
              o->model.nfactors == 2 && !strcmp(o->model.factors[1], "coat"));
        sturdy_buf out;
        sturdy_buf_init(&out);
        CHECK("the writers decline a result read back",
              sturdy_report_text(back, NULL, &out) == STURDY_EUSAGE);
        sturdy_buf_free(&out);
    }
    sturdy_result_free(back);
    text[strlen(text) / 2] = '\0';
    st = sturdy_result_read_json("cut.json", text, strlen(text), &back, err);
    CHECK("a cut result is refused, naming the file",
          st == STURDY_EDATA && !back && strstr(err, "cut.json"));
    free(text);
}

/* Parts of a 3-way split read back from their JSON and added up = the whole run. */
static void test_parts(const sturdy_table *t, const sturdy_result *whole)
{
    sturdy_options o;
    set_options(&o);
    o.resample = 0;
    sturdy_result *sum = run(t, &o, 1, STURDY_OK);
    char err[STURDY_ERR_LEN] = "";
    int ok = sum != NULL;
    for (uint64_t i = 1; ok && i <= 3; i++) {
        sturdy_options oi;
        set_options(&oi);
        oi.shard_index = i;
        oi.shard_count = 3;
        sturdy_result *ri = run(t, &oi, 1, STURDY_OK);
        char *text = ri ? json_of(ri, 1) : NULL;
        sturdy_part *p = NULL;
        ok = text && sturdy_part_read_json("p.json", text, strlen(text), &p, err) == STURDY_OK &&
             sturdy_result_add_slice(sum, sturdy_part_slice(p), err) == STURDY_OK;
        sturdy_part_free(p);
        free(text);
        sturdy_result_free(ri);
    }
    if (!ok) printf("# %s\n", err);
    CHECK("three parts read back and added", ok);
    CHECK("the sum finishes", ok && sturdy_result_finish(sum, err) == STURDY_OK);
    char *a = json_of(whole, 0), *b = ok ? json_of(sum, 0) : NULL;
    CHECK("parts added up = the whole run, byte for byte", b && !strcmp(a, b));
    free(a);
    free(b);
    sturdy_result_free(sum);
}

/* A part whose text says `from` at its first place after `after` replaced by `to`:
 * refused for the reason `why` (a phrase of the message). */
static void refused_part(const char *text, const char *after, const char *from, const char *to,
                         const char *what, const char *why)
{
    const char *start = strstr(text, after);
    const char *at = start ? strstr(start, from) : NULL;
    char line[1024];
    if (!at) {
        snprintf(line, sizeof line, "%s: '%s' found in the part", what, from);
        CHECK(line, 0);
        return;
    }
    size_t n = strlen(text) + strlen(to) + 1;
    char *bad = malloc(n);
    memcpy(bad, text, (size_t)(at - text));
    snprintf(bad + (at - text), n - (size_t)(at - text), "%s%s", to, at + strlen(from));
    sturdy_part *p = NULL;
    char err[STURDY_ERR_LEN] = "";
    sturdy_status st = sturdy_part_read_json("edited.json", bad, strlen(bad), &p, err);
    snprintf(line, sizeof line, "refused: %s (%s)", what, err);
    CHECK(line, st == STURDY_EDATA && !p && strstr(err, "edited.json") && strstr(err, why));
    sturdy_part_free(p);
    free(bad);
}

static void test_bad_parts(const sturdy_table *t)
{
    sturdy_options o;
    set_options(&o);
    o.shard_index = 1;
    o.shard_count = 2;
    sturdy_result *r = run(t, &o, 1, STURDY_OK);
    char *text = json_of(r, 1);
    const char *raw = "\"raw\": {";
    refused_part(text, raw, "\"exceed\": ", "\"exceed\": 100000", "a count above the part's range",
                 "more than the part's");
    refused_part(text, raw, "\"exceed\": ", "\"exceed\": -", "a negative count", "not a count");
    refused_part(text, raw, "\"exceed_fwer\": ", "\"exceed_fwer\": null, \"x\": ", "a null count",
                 "not a count");
    refused_part(text, raw, "\"uv_exceed_wild\": ", "\"uv_exceed_wild\": \"7\", \"x\": ",
                 "a count given as a string", "not a count");
    refused_part(text, raw, "\"uv_exceed_perm\"", "\"uv_exceed_other\"", "a missing count",
                 "is missing");
    refused_part(text, raw, "\"exceed\": ", "\"exceed\": 18446744073709551616",
                 "a count beyond 2^64 - 1", "not a count");
    refused_part(text, "\"shard\"", "\"perm_range\": [", "\"perm_range\": [900, ",
                 "a range that is reversed", "no valid ranges");
    refused_part(text, "\"shard\"", "\"data_checksum\": \"", "\"data_checksum\": \"zz",
                 "a checksum that is not hex", "hexadecimal");
    refused_part(text, raw, "\"boot\": [\n", "\"boot\": [\n[1, 1, 2, 3, 4],\n",
                 "a replicate row too many", "do not match its range");
    /* the first replicate value, from its row's '[' to the first ',', becomes text */
    const char *row = strstr(text, "\"boot\": [\n              [");
    char first[64] = "";
    if (row) {
        row = strchr(row + 9, '[');
        size_t n = (size_t)(strchr(row, ',') - row);
        if (n < sizeof first) memcpy(first, row, n);
    }
    refused_part(text, "\"boot\": [\n", first[0] ? first : "?", "[\"x\"",
                 "a replicate value that is text", "neither a number nor null");
    refused_part(text, "\"boot\": [\n", "\n              [", "\n              [1, ",
                 "a replicate row of 10 values", "does not hold 9 values");
    /* a hand edit that keeps every number in range: the first count one lower (one
     * higher at 0), and the first replicate value made another plausible number */
    const char *ex = strstr(strstr(text, raw), "\"exceed\": ");
    if (ex) {
        char from[64], to[64];
        unsigned long long v = strtoull(ex + strlen("\"exceed\": "), NULL, 10);
        snprintf(from, sizeof from, "\"exceed\": %llu,", v);
        snprintf(to, sizeof to, "\"exceed\": %llu,", v ? v - 1 : v + 1);
        refused_part(text, raw, from, to, "a count edited within its range", "raw_digest");
    } else {
        CHECK("a raw exceed count in the part", 0);
    }
    if (first[0])
        refused_part(text, "\"boot\": [\n", first, strcmp(first, "[0.5") ? "[0.5" : "[0.25",
                     "a replicate value edited", "raw_digest");
    refused_part(text, "\"shard\"", "\"raw_digest\": \"", "\"raw_digestx\": \"",
                 "a part without its digest", "raw_digest");
    free(text);
    sturdy_result_free(r);
}

static void cancel_progress(void *arg, uint64_t done, uint64_t total)
{
    (void)done;
    (void)total;
    *(volatile int *)arg = 1;
}

static void test_cancel(const sturdy_table *t)
{
    sturdy_options o;
    set_options(&o);
    o.permutations = 2000000;
    o.bootstrap = 0;
    volatile int stop = 0;
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.threads = 1;
    ctx.cancel = &stop;
    ctx.progress = cancel_progress;   /* asks to stop at the first report */
    ctx.progress_arg = (void *)&stop;
    sturdy_result *r = NULL;
    char err[STURDY_ERR_LEN] = "";
    sturdy_status st = sturdy_analyze(t, &o, &ctx, &r, err);
    CHECK_INT("a cancelled run stops with STURDY_ECANCELLED", st, STURDY_ECANCELLED);
    CHECK("and returns no result", r == NULL);
    sturdy_context_init(&ctx);
    ctx.threads = -1;
    CHECK_INT("a negative thread count is a usage error",
              sturdy_analyze(t, &o, &ctx, &r, err), STURDY_EUSAGE);
}

int main(void)
{
    CHECK("run-time version = headers' version", !strcmp(sturdy_version(), STURDY_VERSION));
    sturdy_table *tc = from_columns(), *tv = from_csv();
    CHECK_INT("rows", sturdy_table_nrows(tc), NROWS);
    CHECK("columns, fields and lines equal the CSV's",
          sturdy_table_ncols(tc) == 3 && !strcmp(sturdy_table_column(tc, 2), "wear") &&
          !strcmp(sturdy_table_field(tc, 5, 0), sturdy_table_field(tv, 5, 0)) &&
          sturdy_table_line(tc, 0) == sturdy_table_line(tv, 0));
    CHECK("out-of-range accessors give NULL", !sturdy_table_field(tc, NROWS, 0) &&
          !sturdy_table_column(tc, 3));
    sturdy_options o;
    set_options(&o);
    sturdy_result *a = run(tc, &o, 1, STURDY_OK), *b = run(tv, &o, 3, STURDY_OK);
    if (a && b) {
        same_numbers("columns with 1 thread = CSV with 3 threads (every accessor)", a, b);
        char *ja = json_of(a, 0), *jb = json_of(b, 0);
        CHECK("and the same JSON", !strcmp(ja, jb));
        free(ja);
        free(jb);
        CHECK_INT("terms", sturdy_result_nterms(a), 3);
        CHECK("term labels", !strcmp(sturdy_result_term(a, 2), "tool×coat"));
        CHECK("out-of-range term values are NaN",
              isnan(sturdy_term_get(a, 0, 3, STURDY_TV_F)) &&
              isnan(sturdy_term_get(a, 1, 0, STURDY_TV_F)));
        test_recommended(tc, a);
        test_read_back(a);
        test_parts(tv, a);
        test_bad_parts(tv);
        test_cancel(tv);
    }
    sturdy_result_free(a);
    sturdy_result_free(b);
    sturdy_table_free(tc);
    sturdy_table_free(tv);
    return check_done();
}
