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
 * With `partial` (a shard) each term also carries raw{exceed, exceed_fwer, ..., f_hist,
 * boot}: the slice's counts (f_hist: its F* on the STURDY_FHIST_BINS fixed bins), and one
 * row of raw material per replicate in [boot_begin, boot_end)
 * (null when the term has no replicates), for `sturdy merge` to add up.
 * Row numbers ("row") are 1-based data rows (the first record after the header is row
 * 1); "line" is the file line. The thread count never appears, so results of any split
 * of the work compare byte for byte. */
#ifndef STURDY_REPORT_H
#define STURDY_REPORT_H

#include "analysis.h"
#include "buf.h"


/* Settings the text report points to when it advises, and how the caller's users set
 * them. The library never names a command-line option by itself. */
typedef enum {
    STURDY_SETTING_ORDER = 0,        /* the highest interaction order */
    STURDY_SETTING_PERMUTATIONS,     /* the number of rearrangements */
    STURDY_SETTING_BOOTSTRAP,        /* the number of bootstrap replicates */
    STURDY_SETTING_FACTORS,          /* the factor columns */
    STURDY_SETTING_BLOCK,            /* the block column */
    STURDY_SETTING_JSON,             /* asking for the JSON result */
    STURDY_SETTING_CONF,             /* the confidence level of the intervals */
    STURDY_NSETTINGS
} sturdy_setting;

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
    const char *setting_names[STURDY_NSETTINGS]; /* text: how the caller's users set each
                        setting (the CLI: "--order", "-B", ...), shown where the report
                        advises a change; NULL (the default): the report says it in words */
} sturdy_report_opts;

void sturdy_report_opts_init(sturdy_report_opts *o);

/* Each appends to `out` and returns STURDY_EINTERNAL only when memory ran out, and
 * STURDY_EUSAGE for a result read back from a file. `o` may be NULL (defaults). */
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

/* The marginal means and comparisons as CSV: a header row, then one row per mean
 * ("kind" mean) and per comparison ("kind" comparison) of every response, in the
 * conventions of sturdy_report_csv. */
sturdy_status sturdy_report_csv_comparisons(const sturdy_result *r,
                                            const sturdy_report_opts *o, sturdy_buf *out);

/* One self-contained HTML page (UTF-8): the text report's sections, a table of the tests
 * per response, and figures drawn as inline SVG, each with a title, a text alternative
 * (<title>/<desc>) and its numbers in a table behind a <details> toggle: means with
 * intervals of every main effect and two-factor interaction, the effect sizes with all
 * their intervals, each term's resampled F* on fixed bins with the F density, residual
 * plots, spread by cell and the most influential rows. No script, no external resource
 * and no time stamp: the same result gives the same bytes. STURDY_EUSAGE for a result
 * read back from a file, STURDY_EINTERNAL when memory ran out. */
sturdy_status sturdy_report_html(const sturdy_result *r, const sturdy_report_opts *o,
                                 sturdy_buf *out);

/* Receives one figure as a standalone SVG file's bytes and its file stem `name` (the
 * response and the figure, sanitised to [A-Za-z0-9._-]; the caller adds ".svg").
 * Returns 0 to go on, nonzero to stop. */
typedef int (*sturdy_figure_fn)(void *arg, const char *name, const char *svg, size_t len);

/* Hand every figure of the HTML page to fn, in the page's order. STURDY_EOUTPUT when fn
 * stopped, STURDY_EUSAGE for a result read back, STURDY_EINTERNAL when memory ran out. */
sturdy_status sturdy_report_figures(const sturdy_result *r, sturdy_figure_fn fn, void *arg);

/* --- reading back ----------------------------------------------------------------- */

/* Read a JSON result (contract "version": 1, as sturdy_report_json writes it) back into
 * a result whose accessors (analysis.h) give what the file holds: the settings, the
 * input's name and row counts, the run's counts, the notes, and per response and term
 * the classical table, effect sizes and intervals, resampling p-values, the
 * unequal-variance test, the single-row sensitivity and the resistant test (files of
 * earlier versions without them read as not computed), verdicts and notes. A result read back has no design, so the
 * writers decline it (STURDY_EUSAGE). `name` is used in messages. STURDY_EDATA for text
 * that is not such a result (the message says what is wrong and where). */
sturdy_status sturdy_result_read_json(const char *name, const char *text, size_t len,
                                      sturdy_result **out, char *err);

/* Read a shard part (JSON written with sturdy_report_opts.partial) back: its envelope
 * and its slice's raw material, checked for type and range against the part's own
 * slice (counts within the rearrangements it holds, replicate rows of 5 numbers or
 * null). STURDY_EDATA, naming `name` and the field, when anything does not fit. */
sturdy_status sturdy_part_read_json(const char *name, const char *text, size_t len,
                                    sturdy_part **out, char *err);

typedef struct {
    uint64_t index, count;       /* shard I of N */
    uint64_t data_checksum;
    size_t nargs;
    const char *const *args;     /* the command that wrote it ("check", ...) */
    const char *cwd;             /* its working folder, or NULL */
} sturdy_part_origin;

void sturdy_part_origin_get(const sturdy_part *p, sturdy_part_origin *out);

/* STURDY_OK when parts a and b come from the same analysis split the same way (data
 * checksum, seed, settings, design, shard count); else STURDY_EUSAGE with a message
 * saying how b differs from a. */
sturdy_status sturdy_part_compatible(const sturdy_part *a, const sturdy_part *b, char *err);

/* Format a double for JSON and CSV, round-trip exact: "null" for NaN or infinities;
 * integral values below 1e17 as plain digits ("12"); otherwise the fewest of 15, 16 or
 * 17 significant digits that read back (strtod) to the same double. buf ≥ 32 bytes. */
void sturdy_format_double(double v, char *buf);



#endif
