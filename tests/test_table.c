/* test_table.c — the table stage: CSV reading (quoting, line numbers, line ends,
 * delimiters, missing tokens), its error messages, and exact numeric conversion
 * checked on NIST StRD SmLs09. Run from the repository root. */
#include "check.h"
#include "sturdy/design.h"
#include "sturdy/table.h"
#include "input/table_layout.h"

#include <stdint.h>
#include <stdlib.h>

static char err[STURDY_ERR_LEN];

static sturdy_table *load(const char *name, const char *csv, const sturdy_table_opts *o,
                          sturdy_status *st)
{
    sturdy_table *t = NULL;
    err[0] = '\0';
    *st = sturdy_table_load_buffer(name, csv, strlen(csv), o, &t, err);
    return t;
}

/* The status, and that the message holds each fragment (NULL ends the list). */
static void check_err(const char *what, sturdy_status st, sturdy_status want, const char *f1,
                      const char *f2, const char *f3)
{
    char line[700];
    const char *frag[3] = {f1, f2, f3};
    int ok = st == want;
    for (int k = 0; k < 3; k++)
        if (frag[k] && !strstr(err, frag[k])) ok = 0;
    snprintf(line, sizeof line, "%s: status %d (want %d), message \"%s\"", what, (int)st,
             (int)want, err);
    CHECK(line, ok);
}

static const char *cell(const sturdy_table *t, size_t col, size_t row)
{
    return t->cols[col].text[row];
}

static void test_quoting_and_lines(void)
{
    sturdy_status st;
    const char *csv = "id,note,x\n"
                      "1,\"a, b\",2\n"                /* line 2: embedded delimiter */
                      "2,\"two\nlines\",3\n"          /* lines 3-4: embedded newline */
                      "3,\"say \"\"hi\"\"\",4\n"      /* line 5: doubled quote */
                      "\n   \n"                       /* lines 6-7: blank, skipped */
                      "4,\"\n\n\",5\n"                /* lines 8-10 */
                      ",,\n"                          /* line 11: a row of empty fields */
                      "6,last,7";                     /* line 12, no final newline */
    sturdy_table *t = load("q.csv", csv, NULL, &st);
    CHECK_INT("quoting: status", st, STURDY_OK);
    if (!t) return;
    CHECK_INT("quoting: rows (blank lines skipped)", t->nrows, 6);
    CHECK_INT("quoting: columns", t->ncols, 3);
    CHECK("quoting: embedded delimiter kept", !strcmp(cell(t, 1, 0), "a, b"));
    CHECK("quoting: embedded newline kept", !strcmp(cell(t, 1, 1), "two\nlines"));
    CHECK("quoting: doubled quote", !strcmp(cell(t, 1, 2), "say \"hi\""));
    CHECK("quoting: row of delimiters is empty fields",
          !strcmp(cell(t, 0, 4), "") && !strcmp(cell(t, 2, 4), "") && t->cols[1].missing[4]);
    static const size_t want_line[] = {2, 3, 5, 8, 11, 12};
    for (size_t i = 0; i < 6; i++) {
        char name[64];
        snprintf(name, sizeof name, "quoting: line of row %zu", i + 1);
        CHECK_INT(name, t->line[i], want_line[i]);
    }
    CHECK("quoting: source name", !strcmp(t->source, "q.csv"));
    CHECK_INT("find: existing column", sturdy_table_find(t, "x"), 2);
    CHECK_INT("find: unknown column", sturdy_table_find(t, "y"), -1);
    sturdy_table_free(t);
    sturdy_table_free(NULL);
}

static void test_line_ends_bom_delims(void)
{
    sturdy_status st;
    sturdy_table *t = load("crlf.csv", "a,b\r\n1,\"x\r\ny\"\r\n\r\n2,z\r\n", NULL, &st);
    CHECK_INT("crlf: status", st, STURDY_OK);
    if (t) {
        CHECK_INT("crlf: rows", t->nrows, 2);
        CHECK("crlf: no stray CR in last field", !strcmp(cell(t, 1, 1), "z"));
        CHECK_INT("crlf: line of row 2 (after quoted CRLF and blank line)", t->line[1], 5);
        sturdy_table_free(t);
    }
    t = load("cr.csv", "a,b\r1,2\r3,4\r", NULL, &st);
    CHECK_INT("lone CR: status", st, STURDY_OK);
    if (t) {
        CHECK_INT("lone CR: rows", t->nrows, 2);
        CHECK_INT("lone CR: line of row 2", t->line[1], 3);
        sturdy_table_free(t);
    }
    t = load("bom.csv", "\xEF\xBB\xBFname,v\nq,1\n", NULL, &st);
    CHECK_INT("bom: status", st, STURDY_OK);
    if (t) {
        CHECK("bom: skipped in first name", !strcmp(t->cols[0].name, "name"));
        CHECK_INT("bom: line of row 1", t->line[0], 2);
        sturdy_table_free(t);
    }
    sturdy_table_opts o;
    sturdy_table_opts_init(&o);
    CHECK("opts: default delimiter is comma", o.delimiter == ',' && o.missing == NULL);
    o.delimiter = ';';
    t = load("semi.csv", "a;b;c\n1,5;\"x;y\";3\n", &o, &st);
    CHECK_INT("semicolon: status", st, STURDY_OK);
    if (t) {
        CHECK("semicolon: comma is ordinary text", !strcmp(cell(t, 0, 0), "1,5"));
        CHECK("semicolon: quoted delimiter", !strcmp(cell(t, 1, 0), "x;y"));
        sturdy_table_free(t);
    }
    o.delimiter = '\t';
    t = load("tab.tsv", "a\tb\tc\n 1 \t\t3\n", &o, &st);
    CHECK_INT("tab: status", st, STURDY_OK);
    if (t) {
        CHECK("tab: spaces trimmed, tab splits", !strcmp(cell(t, 0, 0), "1"));
        CHECK("tab: empty middle field is missing", !strcmp(cell(t, 1, 0), "") &&
                                                         t->cols[1].missing[0]);
        CHECK("tab: last field", !strcmp(cell(t, 2, 0), "3"));
        sturdy_table_free(t);
    }
    o.delimiter = '"';
    t = load("bad.csv", "a\n1\n", &o, &st);
    check_err("delimiter: quote refused", st, STURDY_EUSAGE, "delimiter", NULL, NULL);
    CHECK("delimiter: nothing returned", t == NULL);
}

static void test_missing_and_trim(void)
{
    sturdy_status st;
    sturdy_table *t = load("m.csv", " a , \" b \" \n  x y  ,\" q \"\nNA,\n \" NA \" ,\"\"\n",
                           NULL, &st);
    CHECK_INT("trim: status", st, STURDY_OK);
    if (t) {
        CHECK("trim: header names trimmed (even quoted)",
              !strcmp(t->cols[0].name, "a") && !strcmp(t->cols[1].name, "b"));
        CHECK("trim: unquoted field trimmed", !strcmp(cell(t, 0, 0), "x y"));
        CHECK("trim: quoted content kept", !strcmp(cell(t, 1, 0), " q "));
        CHECK("missing: default NA and empty", t->cols[0].missing[1] && t->cols[1].missing[1]);
        CHECK("missing: ordinary text is not", !t->cols[0].missing[0] && !t->cols[1].missing[0]);
        CHECK("missing: quoted \" NA \" compared trimmed", t->cols[0].missing[2]);
        CHECK("missing: quoted empty field", t->cols[1].missing[2]);
        sturdy_table_free(t);
    }
    static const char *const tokens[] = {"-", "n/a", "."};
    sturdy_table_opts o;
    sturdy_table_opts_init(&o);
    o.missing = tokens;
    o.nmissing = 3;
    t = load("m2.csv", "a,b,c,d,e\n-,n/a,.,NA,\n", &o, &st);
    CHECK_INT("custom missing: status", st, STURDY_OK);
    if (t) {
        CHECK("custom missing: listed tokens", t->cols[0].missing[0] && t->cols[1].missing[0] &&
                                                   t->cols[2].missing[0]);
        CHECK("custom missing: NA and empty no longer missing",
              !t->cols[3].missing[0] && !t->cols[4].missing[0]);
        sturdy_table_free(t);
    }
}

static void test_load_errors(void)
{
    sturdy_status st;
    sturdy_table *t;
    t = load("e.csv", "", NULL, &st);
    check_err("error: empty file", st, STURDY_EDATA, "e.csv: the file is empty", NULL, NULL);
    CHECK("error: nothing returned", t == NULL);
    load("e.csv", "\xEF\xBB\xBF\n \n", NULL, &st);
    check_err("error: BOM and blank lines only", st, STURDY_EDATA, "e.csv: the file is empty",
              NULL, NULL);
    load("h.csv", "a,b\n\n", NULL, &st);
    check_err("error: header only", st, STURDY_EDATA, "h.csv: only a header, no data rows",
              NULL, NULL);
    load("r.csv", "a,b,c,d,e\n1,2,3,4,5\n\"x\ny\",2,3,4,5\n1,2,3,4,5\n\n1,2,3,4\n", NULL, &st);
    check_err("error: short row", st, STURDY_EDATA,
              "r.csv: line 7 (row 4): 4 fields, but the header has 5", NULL, NULL);
    load("r.csv", "a,b\n1,2\n1,2,3\n", NULL, &st);
    check_err("error: long row", st, STURDY_EDATA,
              "r.csv: line 3 (row 2): 3 fields, but the header has 2", NULL, NULL);
    load("r.csv", "a,b\n7\n", NULL, &st);
    check_err("error: one field", st, STURDY_EDATA, "line 2 (row 1): 1 field,", NULL, NULL);
    load("n.csv", "a,b, ,d\n1,2,3,4\n", NULL, &st);
    check_err("error: blank column name", st, STURDY_EDATA,
              "n.csv: line 1: column 3 has an empty name", NULL, NULL);
    load("n.csv", "\n\na,\"\"\n1,2\n", NULL, &st);
    check_err("error: empty quoted name, header after blank lines", st, STURDY_EDATA,
              "n.csv: line 3: column 2 has an empty name", NULL, NULL);
    load("d.csv", "id,dose,x,y,dose\n1,2,3,4,5\n", NULL, &st);
    check_err("error: duplicated name", st, STURDY_EDATA, "d.csv",
              "duplicated column name 'dose' (columns 2 and 5)", NULL);
    load("u.csv", "a,b\n1,2\n3,4\n5,\"open\n6,7\n8,9\n", NULL, &st);
    check_err("error: unterminated quote", st, STURDY_EDATA,
              "u.csv: line 4: unterminated quoted field", NULL, NULL);
    load("s.csv", "a,b\n1,2\n3,x\"y\n", NULL, &st);
    check_err("error: quote inside unquoted field", st, STURDY_EDATA, "s.csv: line 3:",
              "malformed quoting", NULL);
    load("s.csv", "a,b\n1,\"q\"z\n", NULL, &st);
    check_err("error: text after closing quote", st, STURDY_EDATA, "s.csv: line 2:",
              "malformed quoting", NULL);
    t = NULL;
    err[0] = '\0';
    st = sturdy_table_load_buffer("z.csv", "a,b\n1,x\0y\n", 10, NULL, &t, err);
    check_err("error: NUL byte", st, STURDY_EDATA, "z.csv: line 2:", "NUL", NULL);
    load("w.csv", "\xFF\xFE" "a\0", NULL, &st);
    check_err("error: UTF-16", st, STURDY_EDATA, "w.csv:", "UTF-16", NULL);
    err[0] = '\0';
    st = sturdy_table_load("tests/data/bad/no_such_file.csv", NULL, &t, err);
    check_err("error: cannot open", st, STURDY_EDATA,
              "tests/data/bad/no_such_file.csv: cannot open: No such file or directory", NULL,
              NULL);
    CHECK("error: cannot open returns nothing", t == NULL);
    err[0] = '\0';
    st = sturdy_table_load("tests/data/bad", NULL, &t, err);
    check_err("error: a directory cannot be read", st, STURDY_EDATA,
              "tests/data/bad: cannot read:", NULL, NULL);
    st = sturdy_table_load("tests/data/bad/empty.csv", NULL, &t, NULL);
    CHECK_INT("error: NULL error buffer is allowed", st, STURDY_EDATA);
}

static void test_parse_number(void)
{
    static const struct { const char *s; int ok; double v; } cases[] = {
        {"1.5", 1, 1.5}, {"  -2e3\t", 1, -2000.0}, {".5", 1, 0.5}, {"5.", 1, 5.0},
        {"+7E-1", 1, 0.7}, {"0", 1, 0.0}, {"1e-400", 1, 0.0}, {"1e", 0, 0}, {"abc", 0, 0},
        {"inf", 0, 0}, {"nan", 0, 0}, {"0x10", 0, 0}, {"1e400", 0, 0}, {"", 0, 0},
        {"+", 0, 0}, {".", 0, 0}, {"1.2.3", 0, 0}, {"1 2", 0, 0}, {"1,5", 0, 0}};
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        char name[80];
        double v = -99.0;
        int ok = sturdy_parse_number(cases[k].s, &v);
        snprintf(name, sizeof name, "parse_number('%s') accepts", cases[k].s);
        CHECK_INT(name, ok, cases[k].ok);
        if (cases[k].ok) {
            snprintf(name, sizeof name, "parse_number('%s') value", cases[k].s);
            CHECK_ABS(name, v, cases[k].v, 0.0);
        }
    }
}

/* Converts column 0 of a one-column CSV built from `vals`, all rows. */
static sturdy_status convert(const char *const *vals, size_t n, double *values, double *ref)
{
    char csv[4096] = "v\n";
    size_t *rows = malloc(n * sizeof *rows);
    sturdy_status st;
    sturdy_table *t;
    for (size_t i = 0; i < n; i++) {
        strcat(csv, vals[i]);
        strcat(csv, "\n");
        rows[i] = i;
    }
    t = load("c.csv", csv, NULL, &st);
    if (t) st = sturdy_table_numeric(t, 0, rows, n, values, ref, err);
    sturdy_table_free(t);
    free(rows);
    return st;
}

static void test_numeric_small(void)
{
    double v[8], ref;
    sturdy_status st;
    static const char *const same[] = {"123.456", "1.23456e2", "0.00123456E+5", "+123456e-3",
                                       "123.4560000", "12345600e-5"};
    st = convert(same, 6, v, &ref);
    CHECK_INT("numeric: one value, six spellings: status", st, STURDY_OK);
    CHECK_ABS("numeric: reference is strtod of the first", ref, 123.456, 0.0);
    int zero = 1;
    for (int i = 0; i < 6; i++) zero &= v[i] == 0.0;
    CHECK("numeric: every spelling differs from the reference by exactly 0", zero);

    static const char *const small[] = {"3e-30", "1e-30", "-2.5e-30"};   /* scale 31 > 22 */
    st = convert(small, 3, v, &ref);
    CHECK_INT("numeric: tiny values: status", st, STURDY_OK);
    CHECK_ABS("numeric: 1e-30 - 3e-30", v[1], strtod("-2e-30", NULL), 0.0);
    CHECK_ABS("numeric: -2.5e-30 - 3e-30", v[2], strtod("-5.5e-30", NULL), 0.0);

    static const char *const big[] = {"4e40", "7e40", "4.000000000000000000001e40"};
    st = convert(big, 3, v, &ref);
    CHECK_INT("numeric: huge values (negative scale): status", st, STURDY_OK);
    CHECK_ABS("numeric: 7e40 - 4e40", v[1], 3e40, 0.0);
    CHECK_ABS("numeric: 1e-21 relative step survives", v[2], 1e19, 0.0);

    static const char *const longd[] = {"1.0000000000000000000000000000000000000001", "2",
                                        "-0.5"};
    st = convert(longd, 3, v, &ref);
    CHECK_INT("numeric: over 36 digits falls back: status", st, STURDY_OK);
    CHECK_ABS("numeric: fallback is strtod(x) - strtod(ref)", v[1], 2.0 - ref, 0.0);
    CHECK_ABS("numeric: fallback negative", v[2], -0.5 - ref, 0.0);

    static const char *const zeros[] = {"0", "-0.000", "0e5"};
    st = convert(zeros, 3, v, &ref);
    CHECK("numeric: all zeros", st == STURDY_OK && v[0] == 0.0 && v[1] == 0.0 && v[2] == 0.0);

    static const char *const wide[] = {"1.7e308", "-1.7e308"};
    st = convert(wide, 2, v, &ref);
    check_err("numeric error: difference overflows", st, STURDY_EDATA,
              "c.csv: line 3 (row 2), column 'v'", "'-1.7e308'", NULL);

    static const struct { const char *bad, *frag; } errs[] = {
        {"abc", "'abc' is not a number"},
        {"inf", "'inf' is not a finite number"},
        {"-NaN", "'-NaN' is not a finite number"},
        {"1e400", "'1e400' is out of range"},
        {"\"1,5\"", "'1,5' is not a number (the decimal separator must be '.')"},
        {"NA", "the value is missing ('NA')"},
        {"\"\"", "the value is missing (empty field)"},
        {"0x1F", "'0x1F' is not a number"},
        {"1234567890123456789012345678901234567890123456789x",
         "'1234567890123456789012345678901234567890...' is not a number"}};
    for (size_t k = 0; k < sizeof errs / sizeof errs[0]; k++) {
        const char *vals[3] = {"1.5", "2", errs[k].bad};
        char name[120];
        st = convert(vals, 3, v, &ref);
        snprintf(name, sizeof name, "numeric error: %s", errs[k].bad);
        check_err(name, st, STURDY_EDATA, "c.csv: line 4 (row 3), column 'v'", errs[k].frag,
                  NULL);
    }

    sturdy_table *t = load("c.csv", "v,w\n1,2\n3,4\n", NULL, &st);
    if (t) {
        size_t rows[2] = {1, 5};
        st = sturdy_table_numeric(t, 0, rows, 2, v, &ref, err);
        check_err("numeric error: row index out of range", st, STURDY_EINTERNAL, "c.csv",
                  "row index 5", NULL);
        st = sturdy_table_numeric(t, 2, rows, 1, v, &ref, err);
        check_err("numeric error: column index out of range", st, STURDY_EINTERNAL, "c.csv",
                  "column index 2", NULL);
        rows[0] = 1;
        rows[1] = 0;
        st = sturdy_table_numeric(t, 1, rows, 2, v, &ref, err);
        CHECK("numeric: reference is the first LISTED row",
              st == STURDY_OK && ref == 4.0 && v[0] == 0.0 && v[1] == -2.0);
        st = sturdy_table_numeric(t, 1, rows, 0, v, &ref, err);
        CHECK("numeric: no rows is fine", st == STURDY_OK && ref == 0.0);
        sturdy_table_free(t);
    }
}

/* Random decimals m·10^−k (m up to 10^17, fixed seed) written in several spellings; the
 * expected difference is computed in int64 and rounded by strtod, apart from the code
 * under test. */
static void test_numeric_random(void)
{
    enum { N = 200 };
    static char text[N][48];
    static const char *vals[N];
    long long m[N];
    double v[N], ref;
    uint64_t s = 0x9E3779B97F4A7C15ull;   /* xorshift64 state, fixed seed */
    const int k = 9;
    for (int i = 0; i < N; i++) {
        s ^= s << 13; s ^= s >> 7; s ^= s << 17;
        m[i] = (long long)(s % 100000000000000000ull) - 50000000000000000LL;
        long long a = m[i] < 0 ? -m[i] : m[i];
        switch (i % 3) {
        case 0: snprintf(text[i], sizeof text[i], "%llde-%d", m[i], k); break;
        case 1: snprintf(text[i], sizeof text[i], "%s%lld.%09lld", m[i] < 0 ? "-" : "",
                         a / 1000000000LL, a % 1000000000LL); break;
        default: snprintf(text[i], sizeof text[i], "%lld0E-%d", m[i], k + 1); break;
        }
        vals[i] = text[i];
    }
    char *csv = malloc((size_t)N * 48 + 8);
    strcpy(csv, "v\n");
    size_t rows[N];
    for (int i = 0; i < N; i++) {
        strcat(csv, vals[i]);
        strcat(csv, "\n");
        rows[i] = (size_t)i;
    }
    sturdy_status st;
    sturdy_table *t = load("rnd.csv", csv, NULL, &st);
    free(csv);
    if (t) st = sturdy_table_numeric(t, 0, rows, N, v, &ref, err);
    CHECK_INT("random decimals: status", st, STURDY_OK);
    int bad = 0;
    for (int i = 0; i < N && st == STURDY_OK; i++) {
        char e[48];
        snprintf(e, sizeof e, "%llde-%d", m[i] - m[0], k);
        if (v[i] != strtod(e, NULL)) bad++;
    }
    CHECK_INT("random decimals: values equal strtod of the exact difference (mismatches)",
              bad, 0);
    CHECK_ABS("random decimals: reference", ref, strtod(vals[0], NULL), 0.0);
    sturdy_table_free(t);
}

/* NIST StRD SmLs09: 18009 responses 1000000000000.x; 13 constant leading digits. */
static void test_smls09(void)
{
    FILE *f = fopen("tests/data/SmLs09.dat", "r");
    CHECK("SmLs09: data file opens", f != NULL);
    if (!f) return;
    size_t cap = 1 << 20, len = 0;
    char *csv = malloc(cap), line[256];
    int in_data = 0, nfmt = 0;
    len += (size_t)sprintf(csv, "treatment,response\n");
    while (fgets(line, sizeof line, f)) {
        char tr[32], y[64];
        if (!strncmp(line, "Data:  Treatment", 16)) { in_data = 1; continue; }
        if (!in_data || sscanf(line, "%31s %63s", tr, y) != 2) continue;
        const char *dot = strchr(y, '.');
        if (!dot || strlen(dot) != 2) nfmt++;      /* the check below assumes 1 decimal */
        if (len + strlen(tr) + strlen(y) + 3 > cap) csv = realloc(csv, cap *= 2);
        len += (size_t)sprintf(csv + len, "%s,%s\n", tr, y);
    }
    fclose(f);
    sturdy_status st;
    sturdy_table *t = NULL;
    err[0] = '\0';
    st = sturdy_table_load_buffer("SmLs09.dat", csv, len, NULL, &t, err);
    free(csv);
    CHECK_INT("SmLs09: load", st, STURDY_OK);
    if (!t) return;
    CHECK_INT("SmLs09: 18009 observations (NIST)", t->nrows, 18009);
    CHECK_INT("SmLs09: every response has one decimal", nfmt, 0);
    CHECK_INT("SmLs09: line of the last row", t->line[t->nrows - 1], t->nrows + 1);
    size_t n = t->nrows, *rows = malloc(n * sizeof *rows);
    double *v = malloc(n * sizeof *v), ref;
    for (size_t i = 0; i < n; i++) rows[i] = i;
    st = sturdy_table_numeric(t, 1, rows, n, v, &ref, err);
    CHECK_INT("SmLs09: numeric", st, STURDY_OK);
    CHECK("SmLs09: first response is 1000000000000.4",
          !strcmp(cell(t, 1, 0), "1000000000000.4"));
    CHECK_ABS("SmLs09: reference", ref, 1000000000000.4, 0.0);
    CHECK_ABS("SmLs09: row 1 - ref = 0", v[0], 0.0, 0.0);
    CHECK("SmLs09: row 2 is 1000000000000.3", !strcmp(cell(t, 1, 1), "1000000000000.3"));
    CHECK_ABS("SmLs09: row 2 - ref = the double nearest -0.1", v[1], -0.1, 0.0);
    CHECK_ABS("SmLs09: row 3 - ref = the double nearest 0.1", v[2], 0.1, 0.0);
    CHECK("SmLs09: (naive strtod difference would not be -0.1)",
          1000000000000.3 - 1000000000000.4 != -0.1);
    int bad = 0;
    for (size_t i = 0; i < n && st == STURDY_OK; i++) {
        /* exact difference in tenths, by int64 arithmetic on the digits */
        char a[64], b[64], e[64];
        size_t p = 0;
        for (const char *c = cell(t, 1, i); *c; c++) if (*c != '.') a[p++] = *c;
        a[p] = '\0';
        p = 0;
        for (const char *c = cell(t, 1, 0); *c; c++) if (*c != '.') b[p++] = *c;
        b[p] = '\0';
        snprintf(e, sizeof e, "%llde-1", strtoll(a, NULL, 10) - strtoll(b, NULL, 10));
        if (v[i] != strtod(e, NULL)) bad++;
    }
    CHECK_INT("SmLs09: every value equals strtod of the exact difference (mismatches)", bad, 0);
    free(rows);
    free(v);
    sturdy_table_free(t);
}

/* The malformed files of tests/data/bad/ that the table stage (or its numeric
 * conversion) catches; see tests/data/bad/README.md. */
static void test_bad_files(void)
{
    static const struct { const char *file, *frag; int numeric; } bad[] = {
        {"empty.csv", "the file is empty", 0},
        {"blank_lines.csv", "the file is empty", 0},
        {"header_only.csv", "only a header, no data rows", 0},
        {"ragged_short.csv", "line 4 (row 3): 3 fields, but the header has 4", 0},
        {"ragged_long.csv", "line 6 (row 5): 5 fields, but the header has 4", 0},
        {"ragged_after_multiline.csv", "line 6 (row 4): 3 fields, but the header has 4", 0},
        {"ragged_crlf.csv", "line 5 (row 4): 5 fields, but the header has 4", 0},
        {"unterminated_quote.csv", "line 5: unterminated quoted field", 0},
        {"stray_quote.csv", "line 4: malformed quoting", 0},
        {"text_after_quote.csv", "line 3: malformed quoting", 0},
        {"duplicate_column.csv", "line 1: duplicated column name 'dose' (columns 2 and 5)", 0},
        {"empty_column_name.csv", "line 1: column 3 has an empty name", 0},
        {"nul_byte.csv", "line 3: a field holds a NUL byte", 0},
        {"utf16.csv", "the file is UTF-16 text", 0},
        {"nonnumeric_response.csv", "line 7 (row 6), column 'yield': 'abc' is not a number", 1},
        {"inf_response.csv", "line 4 (row 3), column 'yield': 'inf' is not a finite number", 1},
        {"nan_response.csv", "line 8 (row 7), column 'yield': 'NaN' is not a finite number", 1},
        {"overflow_response.csv", "line 2 (row 1), column 'yield': '1e400' is out of range", 1},
        {"decimal_comma.csv", "line 5 (row 4), column 'yield': '5,3' is not a number", 1},
        {"all_missing_response.csv", "line 2 (row 1), column 'yield': the value is missing", 1},
        {"semicolon_separated.csv", "line 2 (row 1): 2 fields, but the header has 1; this "
                                    "looks semicolon-separated: set the delimiter to ';'", 0},
        {"below_detection.csv", "line 4 (row 3), column 'yield': '<LOD' is not a number; if "
                                "it marks a value that was not measured, declare '<LOD' a "
                                "missing-value token", 1},
        {"units_in_cell.csv", "line 6 (row 5), column 'yield': '3.8 MPa' is not a number: "
                              "text follows it ('MPa'); give units in the column name", 1},
    };
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        char path[128], name[160];
        sturdy_table *t = NULL;
        snprintf(path, sizeof path, "tests/data/bad/%s", bad[k].file);
        err[0] = '\0';
        sturdy_status st = sturdy_table_load(path, NULL, &t, err);
        if (bad[k].numeric && st == STURDY_OK) {
            long col = sturdy_table_find(t, "yield");
            size_t rows[64];
            double v[64], ref;
            for (size_t i = 0; i < t->nrows && i < 64; i++) rows[i] = i;
            st = col < 0 ? STURDY_EINTERNAL
                         : sturdy_table_numeric(t, (size_t)col, rows, t->nrows < 64 ? t->nrows : 64,
                                                v, &ref, err);
        }
        snprintf(name, sizeof name, "bad file %s", bad[k].file);
        check_err(name, st, STURDY_EDATA, path, bad[k].frag, NULL);
        sturdy_table_free(t);
    }
    static const char *const design_level[] = {"unknown_column.csv", "one_level.csv",
                                               "column_case.csv", "tab_separated.csv",
                                               "semicolon_no_comma.csv"};
    for (size_t k = 0; k < sizeof design_level / sizeof *design_level; k++) {
        char path[128], name[160];
        sturdy_table *t = NULL;
        snprintf(path, sizeof path, "tests/data/bad/%s", design_level[k]);
        sturdy_status st = sturdy_table_load(path, NULL, &t, err);
        snprintf(name, sizeof name, "bad file %s is a valid table (design catches it)",
                 design_level[k]);
        CHECK(name, st == STURDY_OK && t && t->nrows == 8);
        /* the header read as one field: the delimiter advice, and only then */
        const char *hint = st == STURDY_OK ? sturdy_table_delimiter_hint(t) : NULL;
        const char *want = k == 3 ? "this looks tab-separated: set the delimiter to tab"
                           : k == 4 ? "this looks semicolon-separated: set the delimiter to ';'"
                                    : NULL;
        snprintf(name, sizeof name, "bad file %s: delimiter advice \"%s\" (want \"%s\")",
                 design_level[k], hint ? hint : "none", want ? want : "none");
        CHECK(name, want ? hint && !strcmp(hint, want) : hint == NULL);
        sturdy_table_free(t);
    }
    /* read with the right delimiter, no advice */
    sturdy_table_opts o;
    sturdy_table_opts_init(&o);
    o.delimiter = '\t';
    sturdy_table *t = NULL;
    sturdy_status st = sturdy_table_load("tests/data/bad/tab_separated.csv", &o, &t, err);
    CHECK("tab_separated.csv with delimiter tab: 4 columns, no advice",
          st == STURDY_OK && t && t->ncols == 4 && !sturdy_table_delimiter_hint(t));
    sturdy_table_free(t);
}

/* Natural order of levels (README): numbers numerically, then text with runs of digits
 * compared as whole numbers, never two distinct strings equal. */
static void test_level_order(void)
{
    static const char *const sorted[] = {"-2", "0", "1", "1.0", "10", "1e2", "N0", "N01",
                                         "N1", "N40", "N80", "N120", "N120b", "P2", "a",
                                         "b9x", "b10"};
    const size_t n = sizeof sorted / sizeof *sorted;
    for (size_t k = 0; k + 1 < n; k++) {
        char name[128];
        snprintf(name, sizeof name, "level order: '%s' before '%s'", sorted[k], sorted[k + 1]);
        CHECK(name, sturdy_level_compare(sorted[k], sorted[k + 1]) < 0 &&
                        sturdy_level_compare(sorted[k + 1], sorted[k]) > 0);
    }
    CHECK("level order: 'N0' before 'N120' (not bytewise)", sturdy_level_compare("N0", "N120") < 0 &&
          sturdy_level_compare("N40", "N120") < 0 && sturdy_level_compare("N80", "N120") < 0);
    CHECK("level order: equal strings compare 0", sturdy_level_compare("N40", "N40") == 0);
}

static void test_status_names(void)
{
    CHECK("status name: ok", !strcmp(sturdy_status_name(STURDY_OK), "ok"));
    CHECK("status name: data", !strcmp(sturdy_status_name(STURDY_EDATA), "bad input data"));
    const char *seen[6];
    int distinct = 1;
    for (int s = 0; s < 6; s++) {
        seen[s] = sturdy_status_name((sturdy_status)s);
        for (int r = 0; r < s; r++) distinct &= strcmp(seen[r], seen[s]) != 0;
    }
    CHECK("status names: six distinct names", distinct);
    CHECK("status name: unknown value", sturdy_status_name((sturdy_status)42) != NULL);
}

int main(void)
{
    test_quoting_and_lines();
    test_line_ends_bom_delims();
    test_missing_and_trim();
    test_load_errors();
    test_parse_number();
    test_numeric_small();
    test_numeric_random();
    test_smls09();
    test_bad_files();
    test_level_order();
    test_status_names();
    return check_done();
}
