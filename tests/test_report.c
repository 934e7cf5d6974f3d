/* test_report.c — the writers on a result built by hand: JSON syntax, key order,
 * round-trip numbers, null for NaN, escaping; text width and advice; CSV shape. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "core/result.h"
#include "sturdy/report.h"

/* ---- a small JSON syntax checker (RFC 8259 grammar), independent of the writer ---- */

static const char *js_ws(const char *p)
{
    while (*p == ' ' || *p == '\n' || *p == '\r' || *p == '\t') p++;
    return p;
}

static const char *js_value(const char *p, int depth);

static const char *js_string(const char *p)
{
    if (*p++ != '"') return NULL;
    while (*p != '"') {
        unsigned char c = (unsigned char)*p;
        if (c < 0x20) return NULL;
        if (c == '\\') {
            p++;
            if (*p == 'u') {
                for (int i = 1; i <= 4; i++)
                    if (!strchr("0123456789abcdefABCDEF", p[i]) || !p[i]) return NULL;
                p += 5;
                continue;
            }
            if (!*p || !strchr("\"\\/bfnrt", *p)) return NULL;
        }
        p++;
    }
    return p + 1;
}

static const char *js_digits(const char *p)
{
    if (*p < '0' || *p > '9') return NULL;
    while (*p >= '0' && *p <= '9') p++;
    return p;
}

static const char *js_number(const char *p)
{
    if (*p == '-') p++;
    if (*p == '0') p++;
    else if (!(p = js_digits(p))) return NULL;
    if (*p == '.' && !(p = js_digits(p + 1))) return NULL;
    if (*p == 'e' || *p == 'E') {
        p++;
        if (*p == '+' || *p == '-') p++;
        if (!(p = js_digits(p))) return NULL;
    }
    return p;
}

static const char *js_container(const char *p, int depth, char close)
{
    p = js_ws(p + 1);
    if (*p == close) return p + 1;
    for (;;) {
        if (close == '}') {
            if (!(p = js_string(p))) return NULL;
            p = js_ws(p);
            if (*p++ != ':') return NULL;
        }
        if (!(p = js_value(p, depth + 1))) return NULL;
        p = js_ws(p);
        if (*p == close) return p + 1;
        if (*p++ != ',') return NULL;
        p = js_ws(p);
    }
}

static const char *js_value(const char *p, int depth)
{
    if (depth > 64) return NULL;
    p = js_ws(p);
    switch (*p) {
    case '{': return js_container(p, depth, '}');
    case '[': return js_container(p, depth, ']');
    case '"': return js_string(p);
    case 't': return strncmp(p, "true", 4) ? NULL : p + 4;
    case 'f': return strncmp(p, "false", 5) ? NULL : p + 5;
    case 'n': return strncmp(p, "null", 4) ? NULL : p + 4;
    default: return js_number(p);
    }
}

static int json_valid(const char *s)
{
    const char *end = js_value(s, 0);
    return end && *js_ws(end) == '\0';
}

/* The keys `"k":` appear in this order, each after the previous, starting at `from`. */
static int keys_in_order(const char *from, const char *const *keys, size_t n)
{
    char pat[96];
    for (size_t i = 0; i < n; i++) {
        snprintf(pat, sizeof pat, "\"%s\": ", keys[i]);
        const char *q = strstr(from, pat);
        if (!q) { printf("     key %s missing or out of order\n", keys[i]); return 0; }
        from = q + strlen(pat);
    }
    return 1;
}

/* The number after the first `"key": ` at or after `from`, via strtod. */
static double json_number_after(const char *from, const char *key)
{
    char pat[96];
    snprintf(pat, sizeof pat, "\"%s\": ", key);
    const char *q = strstr(from, pat);
    return q ? strtod(q + strlen(pat), NULL) : NAN;
}

/* ---- the hand-built result ---- */

static char *levels_dose[] = { "low", "high" };
static char *levels_mix[] = { "plain", "a×b" };     /* UTF-8 passes through */
static sturdy_factor factors[2] = { { "dose", 2, levels_dose }, { "mix", 2, levels_mix } };
static size_t cell_levels[] = { 0, 0, 0, 1, 1, 0, 1, 1 };
static size_t cell_count[] = { 3, 3, 4, 3 };
static sturdy_dropped dropped[] = { { 4, 6, "missing value in column 'yield'" } };
static char *f_dose[] = { "dose" }, *f_mix[] = { "mix" }, *f_both[] = { "dose", "mix" };
static char *notes[] = { "cells scheme with fewer than 10 rows per cell: intervals biased",
                         "odd bytes: \001 and \377 and a \"quote\"" };
static double mean1[] = { 1, 2, 3, 4 }, sd1[] = { 0.5, NAN, 0.25, 1 };
static sturdy_outlier outl[] = { { 3, 4, 1, 3.4, 2.9, 0.25, 0.04 },
                                 { 11, 13, 3, -3.9, -3.2, 0.25, 0.01 } };
static double boot_vals[5 * STURDY_BOOT_COLS];   /* replicates 0–4; the shard has 2–4 */

static const double ONE_THIRD = 1.0 / 3.0;
static const double F_A = 12.345678901234567;
static const double TINY = 4.9406564584124654e-324;   /* smallest subnormal */

static void fill_term(sturdy_term_result *t, char *label, char **fac, size_t nf, double df)
{
    memset(t, 0, sizeof *t);
    t->label = label;
    t->kind = STURDY_TERM_FACTORS;
    t->nfactors = nf;
    t->factors = fac;
    t->df = df;
    t->ss = ONE_THIRD;
    t->ms = ONE_THIRD / df;
    t->f = F_A;
    t->p = 0.0012345;
    for (int e = 0; e < STURDY_NES; e++) {
        t->es[e] = 0.1 * (e + 1);
        t->ci_pct[e] = (sturdy_pair){ 0.01 * (e + 1), 0.2 * (e + 1) };
        t->ci_bca[e] = (sturdy_pair){ 0.02 * (e + 1), 0.25 * (e + 1) };
    }
    t->ncf = (sturdy_pair){ 0.015, 0.3 };
    for (int e = 0; e < STURDY_NES; e++) {
        int lam = e != STURDY_ES_ETA2 && e != STURDY_ES_OMEGA2;
        t->ci_ti[e] = lam ? (sturdy_pair){ 0.0125, 0.375 } : (sturdy_pair){ NAN, NAN };
        t->ci_sti[e] = lam ? (sturdy_pair){ 0.00625, 0.4375 } : (sturdy_pair){ NAN, NAN };
        t->ci_rec_method[e] = lam ? STURDY_CI_TEST_INVERSION : STURDY_CI_BCA;
        t->ci_rec[e] = lam ? t->ci_ti[e] : t->ci_bca[e];
        t->ci_rec_reason[e] = lam ? "test inversion, residual scheme" : "BCa, approximate";
    }
    t->exceed = 212;
    t->exceed_fwer = 499;
    t->p_perm = 0.0213;
    t->p_perm_ci = (sturdy_pair){ 0.018, 0.0249 };
    t->p_perm_fwer = 0.05;
    t->p_perm_holm = 0.04;
    t->verdict = STURDY_VERDICT_BOTH;
    t->boot = boot_vals;
    t->uv = (sturdy_uv_result){ .wald = 6.25, .stat = 6.25, .df1 = df, .df2 = 7.5,
                                .p = 0.037, .johansen = 1, .ats = 5.5, .ats_df1 = df,
                                .ats_df2 = 6.5, .ats_p = 0.041, .exceed_wild = 20,
                                .p_wild = 0.0021, .p_permuted = NAN, .p_perm = 0.0021,
                                .p_perm_ci = { 0.0011, 0.0035 } };
}

static void build(sturdy_result *r, sturdy_design *d, sturdy_response_result resp[2],
                  sturdy_term_result terms1[3], sturdy_term_result terms2[3])
{
    memset(d, 0, sizeof *d);
    d->source = "trial \"7\".csv";
    d->rows_read = 14;
    d->n = 13;
    d->ndropped = 1;
    d->dropped = dropped;
    d->nfactors = 2;
    d->factors = factors;
    d->ncells = 4;
    d->ncells_possible = 4;
    d->cell_count = cell_count;
    d->cell_levels = cell_levels;
    d->balanced = 0;
    d->min_cell = 3;
    d->max_cell = 4;
    for (int i = 0; i < 5 * STURDY_BOOT_COLS; i++)
        boot_vals[i] = 0.125 * (i - 2 * STURDY_BOOT_COLS);
    boot_vals[3 * STURDY_BOOT_COLS + 2] = NAN;

    fill_term(&terms1[0], "dose", f_dose, 1, 1);
    terms1[0].verdict = STURDY_VERDICT_CLASSICAL_ONLY;
    terms1[0].verdict_reason = "residuals are right-skewed; the resampling test does not "
                               "assume normality";
    fill_term(&terms1[1], "mix", f_mix, 1, 1);
    terms1[1].p_perm = 0.049;
    terms1[1].p_perm_ci = (sturdy_pair){ 0.044, 0.055 };
    terms1[1].straddles = 1;
    fill_term(&terms1[2], "dose×mix", f_both, 2, 1);
    terms1[2].f = terms1[2].p = NAN;
    terms1[2].note = "cannot be tested:\nno \"residual\" df";
    terms1[2].p_perm = terms1[2].p_perm_fwer = terms1[2].p_perm_holm = NAN;
    terms1[2].p_perm_ci = (sturdy_pair){ NAN, NAN };
    terms1[2].perm_note = "not rearranged";
    for (int e = 0; e < STURDY_NES; e++) {
        terms1[2].es[e] = NAN;
        terms1[2].ci_pct[e] = terms1[2].ci_bca[e] = (sturdy_pair){ NAN, NAN };
        terms1[2].ci_ti[e] = terms1[2].ci_rec[e] = (sturdy_pair){ NAN, NAN };
        terms1[2].ci_sti[e] = (sturdy_pair){ NAN, NAN };
        terms1[2].ci_rec_method[e] = STURDY_CI_NONE;
        terms1[2].ci_rec_reason[e] = "no F-test, so no interval";
    }
    terms1[2].ncf = (sturdy_pair){ NAN, NAN };
    terms1[2].verdict = STURDY_VERDICT_NONE;
    terms1[2].boot = NULL;
    terms1[2].uv = (sturdy_uv_result){ .wald = NAN, .stat = NAN, .df1 = NAN, .df2 = NAN,
                                       .p = NAN, .ats = NAN, .ats_df1 = NAN, .ats_df2 = NAN,
                                       .ats_p = NAN, .p_wild = NAN, .p_permuted = NAN,
                                       .p_perm = NAN, .p_perm_ci = { NAN, NAN },
                                       .note = "cannot be tested: no residual df" };

    for (int k = 0; k < 3; k++) {
        terms2[k] = terms1[k];
        terms2[k].verdict = STURDY_VERDICT_NEITHER;
        terms2[k].verdict_reason = NULL;
        terms2[k].straddles = 0;
        for (int e = 0; e < STURDY_NES; e++) terms2[k].ci_bca[e] = (sturdy_pair){ NAN, NAN };
        terms2[k].boot_note = "jackknife values are all equal";
        terms2[k].uv = terms1[2].uv;
        terms2[k].uv.note = "no residual degrees of freedom";
    }
    terms2[2].verdict = STURDY_VERDICT_NONE;

    memset(resp, 0, 2 * sizeof resp[0]);
    resp[0].name = "yield";
    resp[0].nterms = 3;
    resp[0].terms = terms1;
    resp[0].df_error = 12;
    resp[0].ss_error = 123456.789;
    resp[0].ms_error = 123456.789 / 12;
    resp[0].df_total = 15;
    resp[0].ss_total = TINY;
    resp[0].cell_mean = mean1;
    resp[0].cell_sd = sd1;
    sturdy_diagnostics *g = &resp[0].diag;
    g->sw_w = 0.87; g->sw_p = 0.001;
    g->skewness = 1.9; g->excess_kurtosis = 4.2;
    g->bf_f = 5.1; g->bf_df1 = 3; g->bf_df2 = 9; g->bf_p = 0.01;
    g->variance_ratio = 9.5;
    g->spread_differs = 1; g->spread_reason = "Brown–Forsythe p = 0.01";
    g->noutliers = 2; g->outliers = outl;

    resp[1] = resp[0];
    resp[1].name = "time, s";
    resp[1].terms = terms2;
    resp[1].error_note = "no residual degrees of freedom";
    resp[1].ms_error = NAN;
    g = &resp[1].diag;
    g->sw_w = g->sw_p = NAN; g->sw_note = "fewer than 3 residuals";
    g->bf_f = g->bf_df1 = g->bf_df2 = g->bf_p = NAN; g->bf_note = "all deviations are zero";
    g->variance_ratio = NAN; g->vr_note = "a cell has one row";
    g->spread_differs = 0; g->spread_reason = NULL;
    g->noutliers = 0; g->outliers = NULL;

    memset(r, 0, sizeof *r);
    r->opts.seed = 20261201u;
    r->opts.conf = 0.95;
    r->opts.alpha = 0.05;
    r->design = d;
    r->opts.ss_type = 3;
    r->opts.method = STURDY_METHOD_FREEDMAN_LANE;
    r->opts.boot_scheme = STURDY_BOOT_RESIDUAL;
    r->opts.spread_scheme = STURDY_SPREAD_WILD;
    r->nperm = 9999;
    r->nboot = 2000;
    r->perm_end = 9999;
    r->boot_begin = 0;
    r->boot_end = 2000;
    r->finished = 1;
    r->nresp = 2;
    r->resp = resp;
    r->nnotes = 2;
    r->notes = notes;
    r->data_checksum = 0xdeadbeefu;
}

/* ---- checks ---- */

static void test_format_double(void)
{
    const double v[] = { 0.1, 1.0 / 3.0, 2.0 / 3.0, 1e-300, 123456.789, -2.5e17, 1e17,
                         9007199254740993.0, 0.95, F_A, TINY, 1.7976931348623157e308, -0.0 };
    char s[32], name[96];
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
        sturdy_format_double(v[i], s);
        snprintf(name, sizeof name, "format_double %s reads back exactly", s);
        CHECK(name, strtod(s, NULL) == v[i] && strlen(s) < 32);
    }
    sturdy_format_double(12, s);
    CHECK("df 12 prints as \"12\"", strcmp(s, "12") == 0);
    sturdy_format_double(9999, s);
    CHECK("9999 prints as \"9999\"", strcmp(s, "9999") == 0);
    sturdy_format_double(0.95, s);
    CHECK("0.95 prints as \"0.95\" (shortest exact)", strcmp(s, "0.95") == 0);
    sturdy_format_double(ONE_THIRD, s);
    CHECK("1/3 needs 16 digits", strcmp(s, "0.3333333333333333") == 0);
    sturdy_format_double(NAN, s);
    CHECK("NaN prints null", strcmp(s, "null") == 0);
    sturdy_format_double(-INFINITY, s);
    CHECK("-inf prints null", strcmp(s, "null") == 0);
}

static void test_buf(void)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_buf_put(&b, "", 0);
    CHECK("empty put allocates a NUL-terminated buffer", b.data && b.data[0] == '\0');
    for (int i = 0; i < 1000; i++) sturdy_buf_printf(&b, "%04d,", i);
    CHECK_INT("buf grows to 5000 bytes", b.len, 5000);
    CHECK("buf content kept across growth", strncmp(b.data + 4995, "0999,", 5) == 0);
    sturdy_buf_free(&b);
    CHECK("buf free empties", b.data == NULL && b.len == 0);
    sturdy_buf_free(NULL);
}

static void test_names(void)
{
    CHECK("verdict name both", strcmp(sturdy_verdict_name(STURDY_VERDICT_BOTH), "both") == 0);
    CHECK("verdict name classical-only",
          strcmp(sturdy_verdict_name(STURDY_VERDICT_CLASSICAL_ONLY), "classical-only") == 0);
    CHECK("verdict name none is NULL", sturdy_verdict_name(STURDY_VERDICT_NONE) == NULL);
    CHECK("es name partial_eta2",
          strcmp(sturdy_es_names[STURDY_ES_PARTIAL_ETA2], "partial_eta2") == 0);
}

static void test_json(const sturdy_result *r)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    CHECK_INT("json status", sturdy_report_json(r, NULL, &b), STURDY_OK);
    const char *s = b.data;
    CHECK("json is syntactically valid", json_valid(s));
    CHECK("json opens with version 1", strncmp(s, "{\n  \"version\": 1,\n", 18) == 0);
    static const char *const top[] = { "version", "input", "file", "rows_read", "rows_used",
        "rows_dropped", "row", "line", "reason", "design", "factors", "name", "levels",
        "block", "covariates", "cells", "count", "cells_possible", "cells_empty",
        "balanced", "min_cell", "max_cell", "settings", "ss_type", "method", "flip",
        "permutations", "exact", "bootstrap", "bootstrap_scheme", "seed", "conf", "alpha",
        "notes", "responses" };
    CHECK("json top-level keys in contract order", keys_in_order(s, top, 35));
    static const char *const term[] = { "term", "factors", "df", "ss", "ms", "f", "p",
        "note", "p_perm", "p_perm_ci", "p_perm_fwer", "p_perm_holm", "exceed", "exceed_fwer",
        "perm_note", "eta2", "partial_eta2", "omega2", "partial_omega2", "cohens_f", "ci",
        "eta2", "percentile", "bca", "recommended", "method", "interval", "reason",
        "partial_eta2", "percentile", "bca", "noncentral_f", "test_inversion",
        "studentized_inversion", "recommended",
        "method", "interval", "reason", "omega2", "percentile", "bca", "recommended",
        "partial_omega2", "percentile", "bca", "test_inversion", "studentized_inversion",
        "recommended", "cohens_f",
        "percentile", "bca", "test_inversion", "studentized_inversion", "recommended",
        "boot_note", "ci_note",
        "verdict", "verdict_reason",
        "p_perm_straddles_alpha", "error", "df", "ss", "ms", "note", "total", "df", "ss",
        "cells", "mean", "sd", "diagnostics", "shapiro_wilk", "w", "p", "note", "skewness",
        "excess_kurtosis", "brown_forsythe", "f", "df1", "df2", "p", "note",
        "variance_ratio", "variance_ratio_note", "outliers", "row", "line", "cell",
        "studentized", "min_cell", "balanced" };
    const char *resp = strstr(s, "\"responses\": ");
    CHECK("json response keys in contract order",
          resp && keys_in_order(resp, term, sizeof term / sizeof term[0]));
    CHECK("json has no shard material by default", !strstr(s, "\"shard\"") &&
          !strstr(s, "\"raw\"") && !strstr(s, "data_checksum"));
    CHECK("json never mentions threads", !strstr(s, "thread"));
    /* numbers read back exactly */
    CHECK("json ss 1/3 round-trips", json_number_after(resp, "ss") == ONE_THIRD);
    CHECK("json F round-trips", json_number_after(resp, "f") == F_A);
    CHECK("json SS error round-trips", json_number_after(strstr(resp, "\"error\""), "ss") ==
          123456.789);
    CHECK("json subnormal total SS round-trips",
          json_number_after(strstr(resp, "\"total\""), "ss") == TINY);
    CHECK("json df prints as integer", strstr(resp, "\"df\": 12,") != NULL);
    CHECK("json seed as integer", strstr(s, "\"seed\": 20261201,") != NULL);
    CHECK("json conf as 0.95", strstr(s, "\"conf\": 0.95,") != NULL);
    CHECK("json dropped row is 1-based", strstr(s, "\"row\": 5,") != NULL);
    /* nulls with reasons */
    const char *t3 = strstr(resp, "\"term\": \"dose×mix\"");
    CHECK("json: untestable term present, × as UTF-8", t3 != NULL);
    if (t3) {
        CHECK("json NaN F is null", strstr(t3, "\"f\": null,") != NULL);
        CHECK("json note escapes newline and quotes",
              strstr(t3, "\"note\": \"cannot be tested:\\nno \\\"residual\\\" df\"") != NULL);
        CHECK("json absent p_perm: exceed null",
              strstr(t3, "\"exceed\": null,") && strstr(t3, "\"p_perm_ci\": [null, null],"));
        CHECK("json verdict none is null", strstr(t3, "\"verdict\": null,") != NULL);
        CHECK("json straddles null without p_perm",
              strstr(t3, "\"p_perm_straddles_alpha\": null") != NULL);
    }
    CHECK("json verdict name", strstr(resp, "\"verdict\": \"classical-only\",") != NULL);
    CHECK("json notes absent are null", strstr(resp, "\"boot_note\": null,") != NULL);
    CHECK("json interval pair", strstr(resp, "\"noncentral_f\": [0.015, 0.3]") != NULL);
    CHECK("json test inversion pair", strstr(resp, "\"test_inversion\": [0.0125, 0.375]") != NULL);
    CHECK("json studentized inversion pair",
          strstr(resp, "\"studentized_inversion\": [0.00625, 0.4375]") != NULL);
    CHECK("json recommended object",
          strstr(resp, "\"method\": \"test-inversion\",\n") &&
          strstr(resp, "\"interval\": [0.0125, 0.375],\n") &&
          strstr(resp, "\"reason\": \"test inversion, residual scheme\"\n") &&
          strstr(resp, "\"method\": \"bca\",\n"));
    {
        /* the first term's ci.eta2 object, up to its closing brace */
        const char *ci = strstr(resp, "\"ci\": {");
        const char *eta = ci ? strstr(ci, "\"eta2\": {") : NULL;
        const char *end = eta ? strstr(eta, "}") : NULL;
        const char *ti = eta ? strstr(eta, "\"test_inversion\"") : NULL;
        const char *sti = eta ? strstr(eta, "\"studentized_inversion\"") : NULL;
        CHECK("json η² has no test_inversion key", end && (!ti || ti > end));
        CHECK("json η² has no studentized_inversion key", end && (!sti || sti > end));
    }
    CHECK("json no recommended interval: method and interval null, reason kept",
          t3 && strstr(t3, "\"method\": null,\n") && strstr(t3, "\"interval\": null,\n") &&
          strstr(t3, "\"reason\": \"no F-test, so no interval\""));
    CHECK("json absent interval note is null", strstr(resp, "\"ci_note\": null,") != NULL);
    CHECK("json control char as \\u0001", strstr(s, "\\u0001") != NULL);
    CHECK("json invalid byte replaced", strstr(s, "\\ufffd") && !strchr(s, '\377'));
    CHECK("json file name quote escaped", strstr(s, "\"file\": \"trial \\\"7\\\".csv\",") != NULL);
    CHECK("json level a×b passes through", strstr(s, "[\"plain\", \"a×b\"]") != NULL);
    CHECK("json outlier cell label", strstr(s, "\"cell\": \"dose=high, mix=a×b\",") != NULL);
    CHECK("json cell sd NaN null", strstr(s, "\"sd\": null") != NULL);
    CHECK("json block null", strstr(s, "\"block\": null,") != NULL);
    CHECK("json empty covariates", strstr(s, "\"covariates\": [],") != NULL);
    CHECK("json ends with newline", b.len > 2 && strcmp(s + b.len - 2, "}\n") == 0);

    /* determinism */
    sturdy_buf b2;
    sturdy_buf_init(&b2);
    sturdy_report_json(r, NULL, &b2);
    CHECK("json byte-identical on a second run", b2.len == b.len && !memcmp(b.data, b2.data,
                                                                            b.len));
    sturdy_buf_free(&b2);
    sturdy_buf_free(&b);
}

static void test_json_partial(sturdy_result *r)
{
    sturdy_report_opts o;
    sturdy_report_opts_init(&o);
    o.partial = 1;
    r->opts.shard_index = 1;
    r->opts.shard_count = 2;
    r->perm_end = 5000;
    r->boot_begin = 2;
    r->boot_end = 5;
    r->finished = 0;
    sturdy_buf b;
    sturdy_buf_init(&b);
    CHECK_INT("partial json status", sturdy_report_json(r, &o, &b), STURDY_OK);
    const char *s = b.data;
    CHECK("partial json valid", json_valid(s));
    static const char *const keys[] = { "settings", "shard", "index", "count", "perm_range",
                                        "boot_range", "data_checksum", "notes", "responses" };
    CHECK("partial json shard keys in order", keys_in_order(s, keys, 9));
    CHECK("partial json shard ranges", strstr(s, "\"perm_range\": [0, 5000],") &&
          strstr(s, "\"boot_range\": [2, 5]"));
    CHECK("partial json checksum 16 hex digits",
          strstr(s, "\"data_checksum\": \"00000000deadbeef\",") != NULL);
    CHECK("partial json raw boot rows",
          strstr(s, "\"raw\": {\n") &&
          strstr(s, "[0, 0.125, 0.25, 0.375, 0.5, 0.625, 0.75, 0.875, 1],\n") &&
          strstr(s, "[1.125, 1.25, null, 1.5, 1.625, 1.75, 1.875, 2, 2.125],\n") &&
          strstr(s, "[2.25, 2.375, 2.5, 2.625, 2.75, 2.875, 3, 3.125, 3.25]\n"));
    CHECK("partial json raw counts", strstr(s, "\"exceed\": 212,\n") &&
          strstr(s, "\"exceed_fwer\": 499,\n"));
    CHECK("partial json: no replicates → boot null", strstr(s, "\"boot\": null") != NULL);
    sturdy_buf_free(&b);
    r->perm_end = 9999;
    r->boot_begin = 0;
    r->boot_end = 2000;
    r->finished = 1;
    r->opts.shard_index = r->opts.shard_count = 0;
}

static size_t max_line_width(const char *s, int *has_esc)
{
    size_t best = 0, cur = 0;
    *has_esc = 0;
    for (const char *p = s; *p; p++) {
        if (*p == '\n') { if (cur > best) best = cur; cur = 0; continue; }
        if (*p == '\033') { *has_esc = 1; while (*p && *p != 'm') p++; if (!*p) break; continue; }
        if (((unsigned char)*p & 0xc0) != 0x80) cur++;
    }
    return cur > best ? cur : best;
}

/* A copy of s with every run of blanks and line breaks squeezed to one space, so that
 * phrase checks do not depend on where the prose wraps. Caller frees. */
static char *squash(const char *s)
{
    char *out = malloc(strlen(s) + 1), *o = out;
    if (!out) return NULL;
    for (const char *p = s; *p; p++) {
        if (*p == ' ' || *p == '\n') {
            if (o > out && o[-1] == ' ') continue;
            *o++ = ' ';
        } else *o++ = *p;
    }
    *o = '\0';
    return out;
}

static void test_text(sturdy_result *r)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    /* the library's own words name no command-line option */
    CHECK_INT("text status (no setting names)", sturdy_report_text(r, NULL, &b), STURDY_OK);
    char *plain = squash(b.data);
    CHECK("text without setting names names no option",
          plain && !strstr(plain, "-B") && !strstr(plain, "--") &&
          strstr(plain, "run more rearrangements (99999)") &&
          strstr(plain, "Run more rearrangements before deciding"));
    free(plain);
    sturdy_buf_free(&b);
    sturdy_buf_init(&b);
    sturdy_report_opts named;
    sturdy_report_opts_init(&named);
    named.setting_names[STURDY_SETTING_PERMUTATIONS] = "-B";
    CHECK_INT("text status", sturdy_report_text(r, &named, &b), STURDY_OK);
    int esc;
    size_t wmax = max_line_width(b.data, &esc);
    CHECK("text: no trailing blanks", !strstr(b.data, " \n"));
    CHECK("text: control characters and bad bytes cleaned",
          !strchr(b.data, '\001') && !strchr(b.data, '\377') && strstr(b.data, "odd bytes: ?"));
    char *s = squash(b.data);
    CHECK_INT("text: widest line ≤ 100 columns", wmax <= 100, 1);
    CHECK("text: no colour by default", !esc);
    CHECK("text headline counts agreement", strstr(s, "3 of 4 tested terms") != NULL);
    CHECK("text headline names the disagreement with its reason",
          strstr(s, "dose (yield): significant by the F-test and the unequal-variance test "
                    "only (unequal-variance p 0.037) — residuals are") != NULL);
    CHECK("text headline leads with unequal spreads",
          strstr(s, "In short The cell spreads of yield differ (Brown–Forsythe p = 0.01).") &&
          strstr(s, "2 of 2 terms significant at α = 0.05 — dose (p = 0.037), mix"));
    CHECK("text: unequal-variance column and its details",
          strstr(s, "p unequal var") && strstr(s, "Welch–James F 6.25 on 1 and 7.5 df "
                                               "(Johansen), p = 0.037; ANOVA-type p = 0.041; "
                                               "wild-bootstrap p = 0.0021 (99% range "
                                               "0.0011–0.0035)"));
    CHECK("text: straddle advice -B", strstr(s, "-B 99999") && strstr(s, "(-B) before"));
    CHECK("text: unequal variances → the unequal-variance column, never --flip",
          strstr(s, "Cell variances differ; read the unequal-variance column") &&
          !strstr(s, "--flip"));
    CHECK("text: not normal with unequal spreads → not the resampling column",
          strstr(s, "The residuals are not normal and the cell spreads differ; read the "
                    "unequal-variance column.") && !strstr(s, "rely on the resampling"));
    CHECK("text: outliers by row, with the unit",
          strstr(s, "row 3 (line 4; dose=low, mix=a×b) externally studentized residual 3.4") &&
          strstr(s, "row 11 (line 13; dose=high, mix=a×b) externally studentized residual "
                    "-3.9"));
    CHECK("text: the outlier rule is stated", strstr(s, "the Bonferroni bound, is at most 0.05") != NULL);
    CHECK("text: no claim that resampling resists a gross error",
          !strstr(s, "leans on single rows") && strstr(s, "rearranges the same F"));
    CHECK("text: absent values as —", strstr(s, "—") != NULL);
    CHECK("text: footnote reason", strstr(s, "[1] cannot be tested: no \"residual\" df") ||
          strstr(s, "] cannot be tested: no \"residual\" df"));
    CHECK("text: dropped row listed", strstr(s, "row 5 (line 6): missing value") != NULL);
    CHECK("text: notes listed", strstr(s, "• cells scheme with fewer") != NULL);
    CHECK("text: seed printed", strstr(s, "seed 20261201") != NULL);
    CHECK("text: no thread count", !strstr(s, "thread"));
    CHECK("text: p formats", strstr(s, "0.0012") && strstr(s, "0.0213"));
    CHECK("text: residual and total rows",
          strstr(b.data, "\n  residual ") && strstr(b.data, "\n  total "));

    sturdy_report_opts o;
    sturdy_report_opts_init(&o);
    o.color = 1;
    sturdy_buf c;
    sturdy_buf_init(&c);
    sturdy_report_text(r, &o, &c);
    CHECK_INT("text with colour: widest line ≤ 100 columns", max_line_width(c.data, &esc) <= 100,
              1);
    CHECK("text with colour has ANSI codes", esc);
    sturdy_buf_free(&c);

    /* long labels and names still fit */
    char longname[200];
    memset(longname, 'x', 150);
    longname[150] = '\0';
    char *saved = r->resp[0].terms[0].label;
    char *saved_reason = r->resp[0].terms[0].verdict_reason;
    r->resp[0].terms[0].label = longname;
    r->resp[0].terms[0].verdict_reason = longname;
    sturdy_buf_init(&c);
    sturdy_report_text(r, NULL, &c);
    CHECK_INT("text with a 150-character label: widest line ≤ 100",
              max_line_width(c.data, &esc) <= 100, 1);
    sturdy_buf_free(&c);
    /* a 30-character label widens the term column: its numbers stay on its line */
    memset(longname, 'y', 30);
    longname[30] = '\0';
    sturdy_buf_init(&c);
    sturdy_report_text(r, NULL, &c);
    {
        char row[sizeof longname + 8];
        snprintf(row, sizeof row, "\n  %s ", longname);
        const char *at = c.data ? strstr(c.data, row) : NULL;
        const char *eol = at ? strchr(at + 1, '\n') : NULL;
        /* the row goes on with df, SS, F, p: more than the label on that line */
        CHECK_INT("text with a 30-character label: the tests row keeps its numbers",
                  at && eol && (size_t)(eol - at) > strlen(row) + 20, 1);
        CHECK_INT("text with a 30-character label: widest line ≤ 100 + 12",
                  max_line_width(c.data, &esc) <= 112, 1);
    }
    sturdy_buf_free(&c);
    r->resp[0].terms[0].label = saved;
    r->resp[0].terms[0].verdict_reason = saved_reason;

    /* a long note is wrapped, not cut */
    static char longnote[3000];
    for (size_t i = 0; i + 7 < sizeof longnote; i += 7) memcpy(longnote + i, "word× ", 7);
    memcpy(longnote + sizeof longnote - 10, " THE END.", 10);
    char *saved_note = r->notes[0];
    r->notes[0] = longnote;
    sturdy_buf_init(&c);
    sturdy_report_text(r, NULL, &c);
    CHECK_INT("text with a 3000-byte note: widest line ≤ 100", max_line_width(c.data, &esc) <= 100,
              1);
    CHECK("text keeps the end of a long note", strstr(c.data, "THE END.") != NULL);
    sturdy_buf_free(&c);
    r->notes[0] = saved_note;

    /* no resampling at all */
    r->nperm = 0;
    sturdy_buf_init(&c);
    sturdy_report_text(r, NULL, &c);
    CHECK("text without rearrangements says so", strstr(c.data, "No resampling test was run") != NULL);
    sturdy_buf_free(&c);
    r->nperm = 9999;
    free(s);
    sturdy_buf_free(&b);
}

/* Records and fields of a CSV text (RFC 4180 quotes); 0 when a record's field count
 * differs from the first's. */
static size_t csv_records(const char *s, size_t *nfields, int *consistent)
{
    size_t records = 0, fields = 1, first = 0;
    int inq = 0;
    *consistent = 1;
    for (const char *p = s; *p; p++) {
        if (inq) {
            if (*p == '"' && p[1] == '"') p++;
            else if (*p == '"') inq = 0;
        } else if (*p == '"') inq = 1;
        else if (*p == ',') fields++;
        else if (*p == '\n') {
            if (records == 0) first = fields;
            else if (fields != first) *consistent = 0;
            records++;
            fields = 1;
        }
    }
    *nfields = first;
    return records;
}

static void test_csv(const sturdy_result *r)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    CHECK_INT("csv status", sturdy_report_csv(r, NULL, &b), STURDY_OK);
    const char *s = b.data;
    CHECK("csv header starts as documented",
          strncmp(s, "response,term,df,ss,ms,f,p,p_perm,p_perm_lo,p_perm_hi,p_perm_fwer,"
                     "p_perm_holm,eta2,partial_eta2,omega2,partial_omega2,cohens_f,"
                     "eta2_pct_lo,eta2_pct_hi,eta2_bca_lo,eta2_bca_hi,", 170) == 0);
    CHECK("csv header has ncf and verdict columns",
          strstr(s, "partial_eta2_ncf_lo,partial_eta2_ncf_hi") && strstr(s, ",verdict,"));
    size_t nf;
    int ok;
    CHECK_INT("csv records: header + 2 responses × (3 terms + residual + total)",
              csv_records(s, &nf, &ok), 11);
    CHECK("csv every record has the header's field count", ok);
    /* 56 before the test inversions, + 5 effect sizes × (ti lo, hi, sti lo, hi, rec
       method, lo, hi), + 11 for single rows (rows_to_change … p_perm_without) and the
       resistant test (rs_statistic … rs_scale); --tail-fit and --stop-early add theirs */
    CHECK_INT("csv fields per record", nf, 102);
    CHECK("csv test inversion and recommended columns",
          strstr(s, ",partial_eta2_ncf_lo,partial_eta2_ncf_hi,partial_eta2_ti_lo,"
                    "partial_eta2_ti_hi,partial_eta2_sti_lo,partial_eta2_sti_hi,"
                    "partial_eta2_rec_method,partial_eta2_rec_lo,partial_eta2_rec_hi,") &&
          strstr(s, ",0.015,0.3,0.0125,0.375,0.00625,0.4375,test-inversion,0.0125,0.375,") &&
          strstr(s, ",eta2_bca_lo,eta2_bca_hi,eta2_ti_lo,eta2_ti_hi,eta2_sti_lo,eta2_sti_hi,"
                    "eta2_rec_method,") &&
          strstr(s, ",0.02,0.25,,,,,bca,0.02,0.25,"));
    CHECK("csv quotes a field with a comma", strstr(s, "\n\"time, s\",dose,") != NULL);
    CHECK("csv quotes doubled and line break kept inside quotes",
          strstr(s, "\"cannot be tested:\nno \"\"residual\"\" df; not rearranged\"") != NULL);
    CHECK("csv NaN is an empty field",
          strstr(s, "dose×mix,1,0.3333333333333333,0.3333333333333333,,,") != NULL);
    CHECK("csv 17-digit F round-trips", strstr(s, ",12.345678901234567,") != NULL);
    CHECK("csv verdict name", strstr(s, ",classical-only,false,") != NULL);
    sturdy_buf_free(&b);
}

static void test_failed_buffer(const sturdy_result *r)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    b.failed = 1;   /* as after an allocation failure */
    CHECK_INT("json reports a failed buffer", sturdy_report_json(r, NULL, &b), STURDY_EINTERNAL);
    CHECK_INT("text reports a failed buffer", sturdy_report_text(r, NULL, &b), STURDY_EINTERNAL);
    CHECK_INT("csv reports a failed buffer", sturdy_report_csv(r, NULL, &b), STURDY_EINTERNAL);
    sturdy_buf_free(&b);
}

int main(int argc, char **argv)
{
    static sturdy_result r;
    static sturdy_design d;
    static sturdy_response_result resp[2];
    static sturdy_term_result t1[3], t2[3];
    build(&r, &d, resp, t1, t2);
    test_format_double();
    test_buf();
    test_names();
    test_json(&r);
    test_json_partial(&r);
    test_text(&r);
    test_csv(&r);
    test_failed_buffer(&r);
    if (argc > 1) {   /* print a sample: test_report text|json|csv */
        sturdy_buf b;
        sturdy_buf_init(&b);
        if (!strcmp(argv[1], "json")) sturdy_report_json(&r, NULL, &b);
        else if (!strcmp(argv[1], "csv")) sturdy_report_csv(&r, NULL, &b);
        else sturdy_report_text(&r, NULL, &b);
        fputs(b.data, stderr);
        sturdy_buf_free(&b);
    }
    return check_done();
}
