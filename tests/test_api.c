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
                same_d(x.p_boot_adjusted, y.p_boot_adjusted) &&
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

/* The bootstrap max-T p of every comparison inverts its simultaneous band: p ≤ 1 − conf
 * only where the band excludes 0, and the band excludes 0 only where p < 1 − conf +
 * 2/(B + 1) (the replicate maxima's discreteness; bootcmp.c); within a family the
 * larger statistic never has the larger p; p is (1 + e)/(B + 1) for a whole e. Counts
 * the comparisons whose band excludes 0 and those whose band holds it into *excl, *incl. */
static void boot_inverts(const char *what, const sturdy_result *r, double B, double alpha,
                         int *excl, int *incl)
{
    int ok = 1, have = 0;
    size_t nc = sturdy_result_ncomparisons(r, 0);
    for (size_t i = 0; i < nc; i++) {
        sturdy_comparison_info c, d;
        sturdy_result_comparison(r, 0, i, &c);
        if (isnan(c.p_boot_adjusted))
            continue;
        have++;
        int out = !(c.boot_sim_lo <= 0 && 0 <= c.boot_sim_hi);
        *excl += out;
        *incl += !out;
        double e = c.p_boot_adjusted * (B + 1) - 1;
        ok &= c.p_boot_adjusted > 0 && c.p_boot_adjusted <= 1 && fabs(e - nearbyint(e)) < 1e-9;
        ok &= !(c.p_boot_adjusted <= alpha) || out;
        ok &= !out || c.p_boot_adjusted < alpha + 2 / (B + 1);
        int gh = !strcmp(c.adjustment, "games-howell");
        for (size_t j = 0; j < nc; j++) {   /* the statistic of the max: |t| at its df */
            sturdy_result_comparison(r, 0, j, &d);
            if (strcmp(c.term, d.term) || isnan(d.p_boot_adjusted))
                continue;
            /* pooled: |t| (the pooled t); Games–Howell: −ln p at its Welch df */
            double sc = gh ? -c.p : fabs(c.t), sd = gh ? -d.p : fabs(d.t);
            ok &= !(sc > sd) || c.p_boot_adjusted <= d.p_boot_adjusted;
        }
    }
    char line[256];
    snprintf(line, sizeof line, "%s: the bootstrap max-T p inverts the max-|t| band at "
             "level %g (%d comparisons)", what, 1 - alpha, have);
    CHECK(line, ok && have > 0);
}

/* A one-way table whose last cell is five times as spread as the others (n 16, 12, 10,
 * 8): the spread rule fires and the families are Games–Howell. */
static sturdy_table *unequal_table(void)
{
    static const int ns[] = { 16, 12, 10, 8 };
    static const char *const lv[] = { "a", "b", "c", "d" }, *const names[] = { "g", "y" };
    static const char *fields[2][46];
    static char text[46][32];
    int i = 0;
    for (int g = 0; g < 4; g++)
        for (int k = 0; k < ns[g]; k++, i++) {
            double u = ((i * 7919 + 3) % 13 - 6) / 3.74;   /* sd ≈ 1 */
            snprintf(text[i], 32, "%.4f", 10.0 + 0.45 * g + (g == 3 ? 5.0 : 1.0) * u);
            fields[0][i] = lv[g];
            fields[1][i] = text[i];
        }
    const char *const *cols[2] = { fields[0], fields[1] };
    sturdy_table *t = NULL;
    char err[STURDY_ERR_LEN] = "";
    CHECK("the unequal-spread table", sturdy_table_from_columns("mem", names, 2, cols, i,
                                                                NULL, &t, err) == STURDY_OK);
    return t;
}

/* The column header line of the text report's comparisons holds `col`, and the text
 * `phrase` (NULL: no check); the header line is the one with "difference" and
 * "estimate". */
static int report_quotes(const sturdy_result *r, const char *col, const char *phrase)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    int ok = sturdy_report_text(r, NULL, &b) == STURDY_OK && b.data;
    const char *at = ok ? strstr(b.data, "difference ") : NULL;
    const char *end = at ? strchr(at, '\n') : NULL;
    ok = at && end && strstr(at, "estimate") && strstr(at, "estimate") < end;
    if (ok) {
        const char *c = strstr(at, col);
        ok = c && c < end;
    }
    if (ok && phrase) {   /* the phrase may be wrapped: whitespace runs as one space */
        size_t k = 0;
        for (size_t i = 0; i < b.len; i++) {
            int sp = b.data[i] == ' ' || b.data[i] == '\n';
            if (!sp || (k && b.data[k - 1] != ' '))
                b.data[k++] = sp ? ' ' : b.data[i];
        }
        b.data[k] = '\0';
        ok = strstr(b.data, phrase) != NULL;
    }
    sturdy_buf_free(&b);
    return ok;
}

/* Runs t under o at other levels: the bootstrap max-T p is the same at each (the same
 * replicates) and inverts each level's band. The levels include, for each p of r below
 * 0.5, one just above 1 − p (where that band must exclude 0) and one 2.5/(B + 1) below it
 * (where it must hold 0), so a statistic on another scale than the band's fails. */
static void inverts_at_levels(const char *what, const sturdy_table *t, sturdy_options o,
                              const sturdy_result *r, int *excl, int *incl)
{
    double B = (double)o.bootstrap, confs[24] = { 0.6, 0.75, 0.9, 0.99 };
    size_t nconf = 4;
    sturdy_comparison_info c, x;
    for (size_t i = 0; sturdy_result_comparison(r, 0, i, &c) && nconf + 2 <= 24; i++)
        if (c.p_boot_adjusted < 0.5 && c.p_boot_adjusted > 3 / (B + 1)) {
            confs[nconf++] = 1 - (c.p_boot_adjusted + 0.25 / (B + 1));
            confs[nconf++] = 1 - (c.p_boot_adjusted - 2.5 / (B + 1));
        }
    int same = 1;
    for (size_t k = 0; k < nconf; k++) {
        o.conf = confs[k];
        sturdy_result *rk = run(t, &o, 1, STURDY_OK);
        if (!rk) continue;
        boot_inverts(what, rk, B, 1 - confs[k], excl, incl);
        for (size_t i = 0; sturdy_result_comparison(r, 0, i, &c); i++)
            same &= sturdy_result_comparison(rk, 0, i, &x) &&
                    same_d(x.p_boot_adjusted, c.p_boot_adjusted);
        sturdy_result_free(rk);
    }
    char line[256];
    snprintf(line, sizeof line, "%s: the bootstrap max-T p does not depend on the level "
             "(%zu levels, %zu near a p)", what, nconf, nconf - 4);
    CHECK(line, same && nconf > 4);
}

static void test_boot_adjusted(const sturdy_table *t, const sturdy_result *a)
{
    int excl = 0, incl = 0;
    boot_inverts("pooled families (Tukey–Kramer)", a, 99, 0.05, &excl, &incl);
    sturdy_options o;
    set_options(&o);
    o.bootstrap = 199;
    o.compare_mode = STURDY_COMPARE_ALL;
    sturdy_result *r = run(t, &o, 2, STURDY_OK);
    CHECK("text report, pooled families: the permutation max-T p is quoted (p max-T)",
          r && report_quotes(r, "p max-T", NULL) && !report_quotes(r, "p boot", NULL));
    if (r) {
        boot_inverts("pooled families, B = 199", r, 199, 0.05, &excl, &incl);
        inverts_at_levels("pooled families (|t|)", t, o, r, &excl, &incl);
    }
    sturdy_result_free(r);
    o.bootstrap = 0;
    r = run(t, &o, 1, STURDY_OK);
    sturdy_comparison_info c;
    CHECK("no bootstrap: no bootstrap max-T p",
          r && sturdy_result_comparison(r, 0, 0, &c) && isnan(c.p_boot_adjusted) &&
          !isnan(c.p_perm_adjusted));
    sturdy_result_free(r);
    sturdy_table *u = unequal_table();
    static const char *uy[] = { "y" }, *uf[] = { "g" };
    set_options(&o);
    o.model.responses = uy;
    o.model.factors = uf;
    o.model.nfactors = 1;
    o.bootstrap = 499;
    o.compare_mode = STURDY_COMPARE_ALL;
    r = u ? run(u, &o, 3, STURDY_OK) : NULL;
    CHECK("unequal spreads: Games–Howell families",
          r && sturdy_result_comparison(r, 0, 0, &c) && !strcmp(c.adjustment, "games-howell"));
    CHECK("text report, Games–Howell families: the bootstrap max-T p is quoted (p boot), "
          "saying why", r && report_quotes(r, "p boot", "permutation max-T is only "
                                           "approximate when spreads differ") &&
          !report_quotes(r, "p max-T", NULL));
    if (r) {
        boot_inverts("Games–Howell families, B = 499", r, 499, 0.05, &excl, &incl);
        inverts_at_levels("Games–Howell families (p scale)", u, o, r, &excl, &incl);
        char *text = json_of(r, 0);
        sturdy_result *back = NULL;
        char err[STURDY_ERR_LEN] = "";
        CHECK("unequal spreads: the result reads back",
              sturdy_result_read_json("u.json", text, strlen(text), &back, err) == STURDY_OK);
        if (back) same_compare(r, back);
        sturdy_result_free(back);
        free(text);
    }
    sturdy_result_free(r);
    o.bootstrap = 0;
    r = u ? run(u, &o, 1, STURDY_OK) : NULL;
    CHECK("text report, Games–Howell families without a bootstrap: p max-T, said to be "
          "approximate", r && report_quotes(r, "p max-T", "only approximate when spreads "
                                            "differ (run a bootstrap"));
    sturdy_result_free(r);
    sturdy_table_free(u);
    char line[128];
    snprintf(line, sizeof line, "the inversion was tried both ways (%d bands exclude 0, %d "
             "hold it)", excl, incl);
    CHECK(line, excl > 0 && incl > 0);
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

/* A cache shared by runs (a batch's rows) changes no bit: two different runs through one
 * cache, and the first again, give the JSON each gives alone. */
static void test_cache(const sturdy_table *t)
{
    sturdy_options o1, o2;
    set_options(&o1);
    o1.compare_mode = STURDY_COMPARE_ALL;
    o2 = o1;
    o2.seed = 11;
    o2.conf = 0.9;
    sturdy_cache *cache = sturdy_cache_new();
    CHECK("a cache", cache != NULL);
    const sturdy_options *os[3] = {&o1, &o2, &o1};
    for (int i = 0; i < 3; i++) {
        sturdy_context ctx;
        sturdy_context_init(&ctx);
        ctx.threads = 2;
        sturdy_result *alone = run(t, os[i], 2, STURDY_OK), *shared = NULL;
        char err[STURDY_ERR_LEN] = "";
        ctx.cache = cache;
        CHECK("run through the cache", sturdy_analyze(t, os[i], &ctx, &shared, err) == 0);
        if (alone && shared) {
            char *ja = json_of(alone, 0), *jb = json_of(shared, 0);
            CHECK(i == 0 ? "through a new cache: the JSON of the run alone"
                  : i == 1 ? "through the cache another run filled: the JSON alone"
                           : "the first run again through the cache: the JSON alone",
                  !strcmp(ja, jb));
            free(ja);
            free(jb);
        }
        sturdy_result_free(alone);
        sturdy_result_free(shared);
    }
    sturdy_cache_free(cache);
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
        test_boot_adjusted(tc, a);
        test_parts(tv, a);
        test_bad_parts(tv);
        test_cancel(tv);
        test_cache(tv);
    }
    sturdy_result_free(a);
    sturdy_result_free(b);
    sturdy_table_free(tc);
    sturdy_table_free(tv);
    return check_done();
}
