/* table.h — the input table: a CSV file read through libcsv into text columns.
 *
 * Stage 1 of CSV → table → design → fit → classical → resampling → diagnostics → writers.
 * The table keeps every field as text, with a missing-value mask; numeric conversion
 * is done per column on demand, exactly (see sturdy_table_numeric). */
#ifndef STURDY_TABLE_H
#define STURDY_TABLE_H

#include "common.h"

typedef struct {
    char delimiter;               /* field separator; default ','; not '"', CR, LF or NUL */
    const char *const *missing;   /* tokens meaning "missing", compared with the field after
                                     trimming surrounding blanks (so a quoted "" is missing
                                     too); NULL = the default {"", "NA"}; a non-NULL list
                                     with nmissing = 0 means nothing is missing */
    size_t nmissing;
} sturdy_table_opts;

/* Fill `o` with the defaults. */
void sturdy_table_opts_init(sturdy_table_opts *o);

/* A table read from CSV text: every field kept as text with a missing flag. Opaque:
 * read it through the accessors below. */
typedef struct sturdy_table sturdy_table;

/* Read a CSV file (RFC 4180, through libcsv; "-" = standard input, named "<stdin>" in
 * messages). The first record is the header. Blank lines (only spaces and tabs) outside
 * quoted fields are skipped anywhere, since spreadsheets emit them; a line of only
 * delimiters is a row of empty fields. A UTF-8 byte-order mark and CRLF line ends are
 * accepted. Messages name the file, the line and, where it applies, the 1-based data row
 * ("data.csv: line 7 (row 6): 4 fields, but the header has 5").
 * Errors, all STURDY_EDATA: cannot open or read, empty file, header only, empty or
 * duplicated column name, a record with a different number of fields than the header,
 * malformed quoting (a quote inside an unquoted field, text after a closing quote, an
 * unterminated quoted field), a NUL byte, UTF-16 text. STURDY_EUSAGE: a delimiter that
 * cannot be one. On success *out is owned by the caller (sturdy_table_free); on error
 * *out is NULL. */
sturdy_status sturdy_table_load(const char *path, const sturdy_table_opts *o,
                                sturdy_table **out, char *err);

/* The same from a memory buffer of `len` bytes (not necessarily NUL-terminated); `name`
 * is used in messages; `o` may be NULL for the defaults. */
sturdy_status sturdy_table_load_buffer(const char *name, const char *buf, size_t len,
                                       const sturdy_table_opts *o, sturdy_table **out,
                                       char *err);

/* A table from the caller's columns: `ncols` columns named names[j], each with `nrows`
 * fields fields[j][i] (NUL-terminated text, read as a CSV field that was not quoted:
 * surrounding spaces and tabs trimmed; NULL means missing). The library copies what it
 * keeps; `source` names the table in messages (NULL: "<columns>"); `o` may be NULL (its
 * missing tokens apply; the delimiter is unused). Errors: STURDY_EDATA for no columns,
 * no rows, an empty or duplicated name; STURDY_EINTERNAL when out of memory. */
sturdy_status sturdy_table_from_columns(const char *source, const char *const *names,
                                        size_t ncols, const char *const *const *fields,
                                        size_t nrows, const sturdy_table_opts *o,
                                        sturdy_table **out, char *err);

void sturdy_table_free(sturdy_table *t);  /* accepts NULL */

/* Read-only accessors. Indices out of range give NULL, or 0 for line. */
size_t sturdy_table_nrows(const sturdy_table *t);   /* data rows, header excluded */
size_t sturdy_table_ncols(const sturdy_table *t);
const char *sturdy_table_source(const sturdy_table *t);  /* "<stdin>" for "-" */
const char *sturdy_table_column(const sturdy_table *t, size_t col);  /* header name */
/* Field text as read (quotes removed; unquoted fields trimmed of spaces and tabs). */
const char *sturdy_table_field(const sturdy_table *t, size_t row, size_t col);
int sturdy_table_is_missing(const sturdy_table *t, size_t row, size_t col);
/* File line on which data row `row` (0-based) starts. */
size_t sturdy_table_line(const sturdy_table *t, size_t row);

/* When the header was read as one field that holds tabs or semicolons (a file with
 * another separator read with the default ','), the advice "this looks tab-separated:
 * add --delimiter tab" (or semicolon, ';'); else NULL. A static string. The loader adds
 * the same advice to its message about a row with more fields than the header. */
const char *sturdy_table_delimiter_hint(const sturdy_table *t);

/* Index of the column named `name`, or -1. */
long sturdy_table_find(const sturdy_table *t, const char *name);

/* Convert column `col` at the given data rows to numbers, exactly.
 *
 * Each field is parsed as an exact decimal (sign, digits, optional fraction and
 * exponent). A per-column reference value (the first listed row's value) is subtracted
 * in integer arithmetic at a common decimal scale, and only the difference is rounded
 * to double, so data with many constant leading digits keep their precision (NIST
 * StRD SmLs07–09). values[i] = x[rows[i]] − *ref; *ref is the reference rounded to
 * double. Where a column's values do not fit the exact path (more than 36 significant
 * digits at the common scale) the conversion falls back to strtod minus the reference.
 * Returns STURDY_EDATA naming file, line, row and column and showing the field (cut to
 * 40 bytes) for a field that is missing or not a finite decimal number (with a hint:
 * a decimal comma; text after the number, such as units; a field with no digits or
 * starting with '<' or '>', such as "<LOD", which --missing can declare missing), or whose
 * difference from the reference overflows; STURDY_EINTERNAL for an index out of range.
 * nrows = 0 is allowed (*ref = 0). Assumes the C numeric locale (strtod). */
sturdy_status sturdy_table_numeric(const sturdy_table *t, size_t col, const size_t *rows,
                                   size_t nrows, double *values, double *ref, char *err);

/* Parse one field as a finite decimal number: the whole field, blanks trimmed, in the
 * same syntax as sturdy_table_numeric ([sign] digits [. digits] [e|E [sign] digits]; no
 * hex, inf or nan), rounded by strtod. Returns 1 and sets *v on success, else 0. */
int sturdy_parse_number(const char *s, double *v);

#endif
