/* table.c — reads a CSV table through libcsv into text columns.
 *
 * Line numbers: libcsv reports fields and record ends but not where they are, so the
 * input is fed to it one physical line at a time (a line ends at LF, CRLF or a lone
 * CR). A record can only end at the end of such a piece, so the line on which each
 * record starts is known exactly, even when quoted fields span several lines.
 * Blank lines (nothing but spaces and tabs) outside quoted fields are skipped wherever
 * they are, since spreadsheets emit them; a line holding only delimiters is a row of
 * empty fields. The numeric conversion lives in table_numeric.c. */
#include "core/core.h"
#include "input/table_internal.h"

#include <assert.h>
#include <csv.h>
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const char *const default_missing[] = {"", "NA"};
#define DEFAULT_NMISSING (sizeof default_missing / sizeof default_missing[0])

void sturdy_table_opts_init(sturdy_table_opts *o)
{
    o->delimiter = ',';
    o->missing = NULL;
    o->nmissing = 0;
}

void sturdy_table_show(char *dst, const char *s)
{
    size_t n = strlen(s), k = n > SHOW_MAX ? SHOW_MAX : n;
    while (k < n && k > 0 && ((unsigned char)s[k] & 0xC0) == 0x80) k--;
    for (size_t i = 0; i < k; i++)
        dst[i] = (unsigned char)s[i] < 0x20 || s[i] == 0x7F ? '?' : s[i];
    strcpy(dst + k, k < n ? "..." : "");
}

void sturdy_table_trim_range(const char *s, size_t *a, size_t *b)
{
    size_t i = 0, j = strlen(s);
    while (i < j && sturdy_table_is_blank(s[i])) i++;
    while (j > i && sturdy_table_is_blank(s[j - 1])) j--;
    *a = i;
    *b = j;
}

/* ---------------------------------------------------------------- loading */

typedef struct {
    const sturdy_table_opts *o;
    sturdy_table *t;
    char *err;
    sturdy_status st;      /* first error; once set, callbacks do nothing */
    char **rec;            /* fields of the record being read (stored ones) */
    size_t nrec, caprec;   /* fields seen in this record; capacity of rec */
    size_t caprows;        /* capacity of the column arrays */
    size_t cur_line;       /* line of the piece being fed */
    size_t rec_line;       /* line on which the current record starts */
    size_t field_line;     /* line on which the current field starts */
    size_t header_line;
    int in_record, have_header;
} loader;

static void fail(loader *L, sturdy_status st, const char *fmt, ...)
{
    va_list ap;
    char msg[STURDY_ERR_LEN];
    if (L->st) return;
    L->st = st;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    sturdy_fail(L->err, st, "%s: %s", L->t->source, msg);
}

/* The advice for a header read as one field `name` with delimiter `delim`, or NULL. */
static const char *delimiter_hint(const char *name, char delim)
{
    size_t tabs = 0, semis = 0;
    for (const char *p = name; *p; p++) {
        tabs += *p == '\t';
        semis += *p == ';';
    }
    if (tabs && tabs >= semis && delim != '\t')
        return "this looks tab-separated: set the delimiter to tab";
    if (semis && delim != ';')
        return "this looks semicolon-separated: set the delimiter to ';'";
    return NULL;
}

const char *sturdy_table_delimiter_hint(const sturdy_table *t)
{
    return t && t->ncols == 1 ? delimiter_hint(t->cols[0].name, t->delimiter) : NULL;
}

static void drop_record(loader *L)
{
    size_t stored = L->have_header && L->nrec > L->t->ncols ? L->t->ncols : L->nrec;
    for (size_t j = 0; j < stored; j++) sturdy_free(L->rec[j]);
    L->nrec = 0;
}

static void on_field(void *s, size_t len, void *data)
{
    loader *L = data;
    if (L->st) return;
    if (s && memchr(s, '\0', len)) {
        fail(L, STURDY_EDATA, "line %zu: a field holds a NUL byte; is this a text file?",
             L->field_line);
        return;
    }
    if (!L->have_header || L->nrec < L->t->ncols) {
        char *f = sturdy_malloc(len + 1);
        if (L->nrec == L->caprec) {
            size_t cap = L->caprec ? 2 * L->caprec : 16;
            char **r = sturdy_realloc(L->rec, cap * sizeof *r);
            if (r) { L->rec = r; L->caprec = cap; }
        }
        if (!f || L->nrec == L->caprec) {
            sturdy_free(f);
            fail(L, STURDY_EINTERNAL, "out of memory");
            return;
        }
        if (len) memcpy(f, s, len);
        f[len] = '\0';
        L->rec[L->nrec] = f;
    }
    L->nrec++;
    L->field_line = L->cur_line;   /* a next field of this record starts here */
}

/* The first column j whose name an earlier column k already has (*k < *j): 1 when
 * found, 0 when the names are distinct, -1 out of memory. One pass over an
 * open-addressing table hashed by FNV-1a, so a header of 100 000 names is checked in
 * linear time (the pairwise comparison took 12 s). */
static int first_duplicate(const sturdy_column *cols, size_t n, size_t *k, size_t *j)
{
    size_t cap = 16;
    while (cap < 2 * n) cap *= 2;
    size_t *slot = sturdy_malloc(cap * sizeof *slot);
    if (!slot) return -1;
    for (size_t i = 0; i < cap; i++) slot[i] = (size_t)-1;
    int found = 0;
    for (size_t c = 0; c < n && !found; c++) {
        size_t at = (size_t)sturdy_hash_text(cols[c].name) & (cap - 1);
        while (slot[at] != (size_t)-1 && strcmp(cols[slot[at]].name, cols[c].name))
            at = (at + 1) & (cap - 1);
        if (slot[at] != (size_t)-1) {
            *k = slot[at];
            *j = c;
            found = 1;
        }
        slot[at] = c;
    }
    sturdy_free(slot);
    return found;
}

static void take_header(loader *L)
{
    sturdy_table *t = L->t;
    size_t n = L->nrec;
    L->header_line = L->rec_line;
    t->cols = sturdy_calloc(n, sizeof *t->cols);
    if (!t->cols) { fail(L, STURDY_EINTERNAL, "out of memory"); return; }
    t->ncols = n;
    for (size_t j = 0; j < n; j++) {
        char *name = L->rec[j];
        size_t a, b;
        sturdy_table_trim_range(name, &a, &b);     /* names are trimmed even when quoted */
        memmove(name, name + a, b - a);
        name[b - a] = '\0';
        t->cols[j].name = name;
    }
    L->nrec = 0;                      /* the names now belong to the table */
    L->have_header = 1;
    size_t empty = 0, k = 0, j = n;
    while (empty < n && t->cols[empty].name[0])
        empty++;
    int dup = first_duplicate(t->cols, n, &k, &j);
    if (dup < 0) {
        fail(L, STURDY_EINTERNAL, "out of memory");
    } else if (empty < n && (!dup || empty < j)) {   /* the first problem, left to right */
        fail(L, STURDY_EDATA, "line %zu: column %zu has an empty name", L->header_line,
             empty + 1);
    } else if (dup) {
        char shown[SHOW_LEN];
        sturdy_table_show(shown, t->cols[j].name);
        fail(L, STURDY_EDATA, "line %zu: duplicated column name '%s' (columns %zu and %zu)",
             L->header_line, shown, k + 1, j + 1);
    }
}

static int grow_rows(loader *L)
{
    sturdy_table *t = L->t;
    assert(t->nrows == L->caprows);   /* called only when the column arrays are full */
    size_t cap = L->caprows ? 2 * L->caprows : 64;
    size_t *line = sturdy_realloc(t->line, cap * sizeof *line);
    if (!line) return 0;
    t->line = line;
    for (size_t j = 0; j < t->ncols; j++) {
        char **text = sturdy_realloc(t->cols[j].text, cap * sizeof *text);
        if (!text) return 0;
        t->cols[j].text = text;
        unsigned char *m = sturdy_realloc(t->cols[j].missing, cap);
        if (!m) return 0;
        t->cols[j].missing = m;
    }
    L->caprows = cap;
    return 1;
}

int sturdy_table_is_missing_token(const sturdy_table_opts *o, const char *s)
{
    const char *const *tok = o->missing ? o->missing : default_missing;
    size_t ntok = o->missing ? o->nmissing : DEFAULT_NMISSING, a, b;
    sturdy_table_trim_range(s, &a, &b);
    for (size_t k = 0; k < ntok; k++)
        if (tok[k] && strlen(tok[k]) == b - a && !memcmp(tok[k], s + a, b - a)) return 1;
    return 0;
}

static void on_record(int c, void *data)
{
    loader *L = data;
    sturdy_table *t = L->t;
    (void)c;
    L->in_record = 0;
    if (L->st) return;
    if (!L->have_header) { take_header(L); return; }
    if (L->nrec != t->ncols) {
        const char *hint = sturdy_table_delimiter_hint(t);
        fail(L, STURDY_EDATA, "line %zu (row %zu): %zu field%s, but the header has %zu%s%s",
             L->rec_line, t->nrows + 1, L->nrec, L->nrec == 1 ? "" : "s", t->ncols,
             hint ? "; " : "", hint ? hint : "");
        drop_record(L);
        return;
    }
    if (t->nrows == L->caprows && !grow_rows(L)) {
        fail(L, STURDY_EINTERNAL, "out of memory");
        drop_record(L);
        return;
    }
    for (size_t j = 0; j < t->ncols; j++) {
        t->cols[j].text[t->nrows] = L->rec[j];
        t->cols[j].missing[t->nrows] =
            (unsigned char)sturdy_table_is_missing_token(L->o, L->rec[j]);
    }
    t->line[t->nrows++] = L->rec_line;
    L->nrec = 0;
}

/* Does a piece of input hold anything but blanks and line ends? */
static int has_content(const char *s, size_t n, char delim)
{
    for (size_t i = 0; i < n; i++)
        if (s[i] == delim ||
            !(sturdy_table_is_blank(s[i]) || s[i] == '\r' || s[i] == '\n'))
            return 1;
    return 0;
}

static void parse_all(loader *L, const char *buf, size_t len, unsigned char delim)
{
    struct csv_parser p;
    size_t pos = 0;
    /* STRICT rejects stray quotes; STRICT_FINI reports an unterminated quote at the end. */
    if (csv_init(&p, CSV_STRICT | CSV_STRICT_FINI | CSV_APPEND_NULL) != 0) {
        fail(L, STURDY_EINTERNAL, "out of memory");
        return;
    }
    /* libcsv's field buffer goes through the library's allocator too (a failed growth
       is retried by libcsv with a smaller block before it reports CSV_ENOMEM) */
    csv_set_realloc_func(&p, sturdy_realloc);
    csv_set_free_func(&p, sturdy_free);
    csv_set_delim(&p, delim);
    if (len >= 3 && !memcmp(buf, "\xEF\xBB\xBF", 3)) pos = 3;   /* UTF-8 byte-order mark */
    L->cur_line = 1;
    while (pos < len && !L->st) {
        size_t end = pos;
        int ended = 0;
        while (end < len && !ended) {
            char ch = buf[end++];
            if (ch == '\n') ended = 1;
            else if (ch == '\r') {
                if (end < len && buf[end] == '\n') end++;
                ended = 1;
            }
        }
        if (!L->in_record && has_content(buf + pos, end - pos, (char)delim)) {
            L->in_record = 1;
            L->rec_line = L->field_line = L->cur_line;
        }
        if (csv_parse(&p, buf + pos, end - pos, on_field, on_record, L) != end - pos &&
            !L->st) {
            if (csv_error(&p) == CSV_EPARSE)
                fail(L, STURDY_EDATA,
                     "line %zu: malformed quoting (a quote inside an unquoted field, or "
                     "text after a closing quote)", L->cur_line);
            else
                fail(L, STURDY_EINTERNAL, "out of memory while parsing line %zu", L->cur_line);
        }
        pos = end;
        if (ended) L->cur_line++;
    }
    if (!L->st && csv_fini(&p, on_field, on_record, L) != 0 && !L->st) {
        if (csv_error(&p) == CSV_EPARSE)
            fail(L, STURDY_EDATA, "line %zu: unterminated quoted field", L->field_line);
        else
            fail(L, STURDY_EINTERNAL, "out of memory");
    }
    csv_free(&p);
}

sturdy_status sturdy_table_load_buffer(const char *name, const char *buf, size_t len,
                                       const sturdy_table_opts *o, sturdy_table **out,
                                       char *err)
{
    sturdy_table_opts dflt;
    loader L;
    *out = NULL;
    if (!o) { sturdy_table_opts_init(&dflt); o = &dflt; }
    if (o->delimiter == '"' || o->delimiter == '\r' || o->delimiter == '\n' ||
        o->delimiter == '\0')
        return sturdy_fail(err, STURDY_EUSAGE,
                           "the delimiter cannot be a quote, a line end or NUL");
    memset(&L, 0, sizeof L);
    L.o = o;
    L.err = err;
    L.t = sturdy_calloc(1, sizeof *L.t);
    if (L.t) L.t->delimiter = o->delimiter;
    if (!L.t || !(L.t->source = sturdy_strdup(name ? name : "<buffer>"))) {
        sturdy_free(L.t);
        return sturdy_fail(err, STURDY_EINTERNAL, "%s: out of memory",
                           name ? name : "<buffer>");
    }
    if (len >= 2 && ((buf[0] == '\xFF' && buf[1] == '\xFE') ||
                     (buf[0] == '\xFE' && buf[1] == '\xFF')))
        fail(&L, STURDY_EDATA, "the file is UTF-16 text; save it as UTF-8");
    else
        parse_all(&L, buf, len, (unsigned char)o->delimiter);
    drop_record(&L);
    sturdy_free(L.rec);
    if (!L.st && !L.have_header) fail(&L, STURDY_EDATA, "the file is empty");
    if (!L.st && L.t->nrows == 0) fail(&L, STURDY_EDATA, "only a header, no data rows");
    if (L.st) {
        sturdy_table_free(L.t);
        return L.st;
    }
    *out = L.t;
    return STURDY_OK;
}

/* Read all of f into a fresh buffer (sturdy_malloc). Returns 1, 0 on a read error (errno
 * set), or -1 when memory runs out. */
static int read_all(FILE *f, char **buf, size_t *len)
{
    size_t cap = 1 << 16, n = 0;
    char *b = sturdy_malloc(cap);
    if (!b) return -1;
    for (;;) {
        size_t got = fread(b + n, 1, cap - n, f);
        n += got;
        if (n < cap) {
            if (ferror(f)) { sturdy_free(b); return 0; }
            break;
        }
        char *nb = cap > ((size_t)-1) / 2 ? NULL : sturdy_realloc(b, cap * 2);
        if (!nb) { sturdy_free(b); return -1; }
        b = nb;
        cap *= 2;
    }
    *buf = b;
    *len = n;
    return 1;
}

sturdy_status sturdy_table_load(const char *path, const sturdy_table_opts *o,
                                sturdy_table **out, char *err)
{
    int is_stdin = !strcmp(path, "-");
    const char *name = is_stdin ? "<stdin>" : path;
    FILE *f = is_stdin ? stdin : fopen(path, "rb");
    char *buf = NULL;
    size_t len = 0;
    int ok;
    *out = NULL;
    if (!f)
        return sturdy_fail(err, STURDY_EDATA, "%s: cannot open: %s", name, strerror(errno));
    errno = 0;
    ok = read_all(f, &buf, &len);
    if (ok < 0) sturdy_fail(err, STURDY_EINTERNAL, "%s: out of memory reading the file", name);
    else if (!ok)
        sturdy_fail(err, STURDY_EDATA, "%s: cannot read: %s", name,
                    strerror(errno ? errno : EIO));
    if (!is_stdin) fclose(f);
    if (ok < 0) return STURDY_EINTERNAL;
    if (!ok) return STURDY_EDATA;
    sturdy_status st = sturdy_table_load_buffer(name, buf, len, o, out, err);
    sturdy_free(buf);
    return st;
}

void sturdy_table_free(sturdy_table *t)
{
    if (!t) return;
    for (size_t j = 0; t->cols && j < t->ncols; j++) {
        for (size_t i = 0; t->cols[j].text && i < t->nrows; i++) sturdy_free(t->cols[j].text[i]);
        sturdy_free(t->cols[j].text);
        sturdy_free(t->cols[j].missing);
        sturdy_free(t->cols[j].name);
    }
    sturdy_free(t->cols);
    sturdy_free(t->line);
    sturdy_free(t->source);
    sturdy_free(t);
}

long sturdy_table_find(const sturdy_table *t, const char *name)
{
    for (size_t j = 0; j < t->ncols; j++)
        if (!strcmp(t->cols[j].name, name)) return (long)j;
    return -1;
}
