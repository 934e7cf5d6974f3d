/* report.h — writers: the result as text, JSON (contract "version": 1) or CSV, into a
 * growing memory buffer. The caller decides where the bytes go (the CLI writes them to a
 * temporary file and renames it), so the library itself never touches stdout.
 *
 * JSON layout (keys always in this order, 2-space indent, arrays of scalars on one
 * line; absent numbers are null with a *_note/reason beside them):
 *   version, input{file, rows_read, rows_used, rows_dropped[{row, line, reason}]},
 *   design{factors[{name, levels}], block{name, levels}|null, covariates, cells[{levels,
 *   count}], cells_possible, cells_empty, balanced, min_cell, max_cell},
 *   settings{ss_type, method, flip, permutations, exact, bootstrap, bootstrap_scheme,
 *   seed, conf, alpha},
 *   [partial only: shard{index, count, perm_range, boot_range}, data_checksum],
 *   notes[], responses[{response, terms[...], error{df, ss, ms, note}, total{df, ss},
 *   cells[{mean, sd}], diagnostics{...}}].
 * With `partial` (a shard) each term also carries raw{exceed, exceed_fwer, boot}: the
 * slice's counts, and one [5 effect sizes] row per replicate in [boot_begin, boot_end)
 * (null when the term has no replicates), for `sturdy merge` to add up.
 * Row numbers ("row") are 1-based data rows (the first record after the header is row
 * 1); "line" is the file line. The thread count never appears, so results of any split
 * of the work compare byte for byte. */
#ifndef STURDY_REPORT_H
#define STURDY_REPORT_H

#include "analysis.h"

typedef struct {
    char *data;      /* NUL-terminated once anything was written (NULL before); owned */
    size_t len, cap;
    int failed;      /* an allocation failed; contents are incomplete */
} sturdy_buf;

void sturdy_buf_init(sturdy_buf *b);
/* Frees the data and leaves `b` empty and reusable. Accepts NULL. */
void sturdy_buf_free(sturdy_buf *b);
/* printf-style append; on allocation failure sets b->failed and keeps going. */
void sturdy_buf_printf(sturdy_buf *b, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
/* Append `len` bytes (len 0 still allocates, so data is non-NULL afterwards). */
void sturdy_buf_put(sturdy_buf *b, const char *s, size_t len);
/* Append a NUL-terminated string. */
void sturdy_buf_puts(sturdy_buf *b, const char *s);

typedef struct {
    int color;       /* ANSI colour in the text report (CLI: stdout is a terminal and
                        NO_COLOR is unset) */
    int width;       /* text width for wrapped prose; default 100, at least 60 is used.
                        The tables are at most 100 columns wide. */
    int partial;     /* JSON: include the raw slice material (shards) */
    const char *const *args; size_t nargs; /* partial JSON: the command's arguments and */
    const char *cwd;                       /* working folder, so a merge can repeat the
                                              set-up; NULL/0 when unknown */
    int ascii_terms; /* CSV: term names with the factor names joined by "_by_" (ASCII),
                        not by '×' */
    int bom;         /* CSV: begin with a UTF-8 byte-order mark, which some spreadsheet
                        programs need to read UTF-8 */
} sturdy_report_opts;

void sturdy_report_opts_init(sturdy_report_opts *o);

/* Each appends to `out` and returns STURDY_EINTERNAL only when memory ran out.
 * `o` may be NULL (defaults). */
sturdy_status sturdy_report_text(const sturdy_result *r, const sturdy_report_opts *o,
                                 sturdy_buf *out);
sturdy_status sturdy_report_json(const sturdy_result *r, const sturdy_report_opts *o,
                                 sturdy_buf *out);
/* One row per response × term; a header row first (after a byte-order mark with
 * o->bom; term names joined by "_by_" with o->ascii_terms). Numbers as sturdy_format_double,
 * an empty field for null; fields quoted (RFC 4180) when they hold a comma, a quote, a
 * line break or surrounding blanks; lines end in "\n". */
sturdy_status sturdy_report_csv(const sturdy_result *r, const sturdy_report_opts *o,
                                sturdy_buf *out);

/* Format a double for JSON and CSV, round-trip exact: "null" for NaN or infinities;
 * integral values below 1e17 as plain digits ("12"); otherwise the fewest of 15, 16 or
 * 17 significant digits that read back (strtod) to the same double. buf ≥ 32 bytes. */
void sturdy_format_double(double v, char *buf);

/* Bytes of the well-formed UTF-8 sequence starting at p (1 for ASCII), or 0 when the
 * bytes there are not valid UTF-8 (overlong, surrogate, truncated, beyond U+10FFFF). */
size_t sturdy_utf8_len(const char *p);

/* Append "A=a1, B=b2" for design cell `cell` (an index into d->cell_levels). */
void sturdy_report_cell_label(const sturdy_design *d, size_t cell, sturdy_buf *out);

#endif
