/* columns.c — a table from the caller's own columns, and the read-only accessors of a
 * table (the public header keeps its layout opaque). */
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "input/table_internal.h"

/* A field as the CSV reader keeps an unquoted one: spaces and tabs trimmed. */
static char *trimmed_copy(const char *s)
{
    size_t a, b;
    sturdy_table_trim_range(s, &a, &b);
    char *d = sturdy_malloc(b - a + 1);
    if (d) {
        memcpy(d, s + a, b - a);
        d[b - a] = '\0';
    }
    return d;
}

static sturdy_status fill_column(sturdy_column *c, const char *name,
                                 const char *const *fields, size_t nrows,
                                 const sturdy_table_opts *o)
{
    c->name = trimmed_copy(name);
    c->text = sturdy_calloc(nrows, sizeof *c->text);
    c->missing = sturdy_calloc(nrows, 1);
    if (!c->name || !c->text || !c->missing)
        return STURDY_EINTERNAL;
    for (size_t i = 0; i < nrows; i++) {
        const char *f = fields[i] ? fields[i] : "";
        if (!(c->text[i] = trimmed_copy(f)))
            return STURDY_EINTERNAL;
        c->missing[i] = !fields[i] || sturdy_table_is_missing_token(o, f);
    }
    return STURDY_OK;
}

sturdy_status sturdy_table_from_columns(const char *source, const char *const *names,
                                        size_t ncols, const char *const *const *fields,
                                        size_t nrows, const sturdy_table_opts *o,
                                        sturdy_table **out, char *err)
{
    sturdy_table_opts defaults;
    *out = NULL;
    if (!o) {
        sturdy_table_opts_init(&defaults);
        o = &defaults;
    }
    const char *src = source ? source : "<columns>";
    if (ncols == 0 || nrows == 0)
        return sturdy_fail(err, STURDY_EDATA, "%s: the table needs at least one column and "
                                              "one row", src);
    for (size_t j = 0; j < ncols; j++) {
        size_t a, b;
        if (!names[j] || (sturdy_table_trim_range(names[j], &a, &b), a == b))
            return sturdy_fail(err, STURDY_EDATA, "%s: column %zu has an empty name", src,
                               j + 1);
        for (size_t k = 0; k < j; k++)
            if (!strcmp(names[k], names[j]))
                return sturdy_fail(err, STURDY_EDATA, "%s: columns %zu and %zu are both "
                                                      "named '%s'", src, k + 1, j + 1, names[j]);
    }
    sturdy_table *t = sturdy_calloc(1, sizeof *t);
    if (!t)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    t->delimiter = o->delimiter;
    t->nrows = nrows;
    t->source = sturdy_strdup(src);
    t->cols = sturdy_calloc(ncols, sizeof *t->cols);
    t->line = sturdy_calloc(nrows, sizeof *t->line);
    sturdy_status st = t->source && t->cols && t->line ? STURDY_OK : STURDY_EINTERNAL;
    if (!st)
        t->ncols = ncols;
    for (size_t j = 0; j < ncols && !st; j++)
        st = fill_column(&t->cols[j], names[j], fields[j], nrows, o);
    /* rows are numbered as if a header line came first, as in a file */
    for (size_t i = 0; i < nrows && !st; i++)
        t->line[i] = i + 2;
    if (st) {
        sturdy_table_free(t);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    *out = t;
    return STURDY_OK;
}

size_t sturdy_table_nrows(const sturdy_table *t) { return t ? t->nrows : 0; }

size_t sturdy_table_ncols(const sturdy_table *t) { return t ? t->ncols : 0; }

const char *sturdy_table_source(const sturdy_table *t) { return t ? t->source : NULL; }

const char *sturdy_table_column(const sturdy_table *t, size_t col)
{
    return t && col < t->ncols ? t->cols[col].name : NULL;
}

const char *sturdy_table_field(const sturdy_table *t, size_t row, size_t col)
{
    return t && col < t->ncols && row < t->nrows ? t->cols[col].text[row] : NULL;
}

int sturdy_table_is_missing(const sturdy_table *t, size_t row, size_t col)
{
    return t && col < t->ncols && row < t->nrows && t->cols[col].missing[row];
}

size_t sturdy_table_line(const sturdy_table *t, size_t row)
{
    return t && row < t->nrows ? t->line[row] : 0;
}
