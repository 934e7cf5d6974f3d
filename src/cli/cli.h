/* cli.h — the command-line program's internal interface: option parsing, running a
 * check, writing output files atomically, and the subcommands. Uses libsturdy only
 * through its public headers. */
#ifndef STURDY_CLI_H
#define STURDY_CLI_H

#include <getopt.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "sturdy/sturdy.h"

/* Exit status of a usage error and of `--help`/`--version` handled during parsing. */
#define CLI_EXIT_USAGE 2
#define CLI_DONE (-1)   /* parsing printed help or version: exit 0 */

typedef enum { CLI_FMT_TEXT = 0, CLI_FMT_JSON, CLI_FMT_CSV, CLI_FMT_CSV_COMPARISONS,
               CLI_FMT_HTML } cli_format;

/* A list option (-y A,B -y C): owned copies of the names. */
typedef struct {
    char **items;
    size_t n;
} cli_list;

/* One --levels FACTOR=a,b,c: owned copies. */
typedef struct {
    char *factor;
    cli_list levels;
} cli_level_order;

/* Everything `check` and `demo` take from the command line. */
typedef struct {
    const char *command;         /* "check" or "demo" (for messages) */
    int demo;
    sturdy_options opts;         /* its model spec points into the lists below */
    int threads;                 /* --threads; 0 = all (the run context's count) */
    sturdy_table_opts topts;
    const char *data;            /* DATA.csv or "-" (check), as given and reported */
    const char *data_path;       /* where to read it when not `data` itself (merge reads
                                    the data relative to the shard's folder), or NULL */
    const sturdy_table *table;   /* the data already read (batch: from the bytes its key
                                    digests; owned by the batch), or NULL: read them */
    sturdy_cache *cache;         /* tables kept between the batch's rows (owned by the
                                    batch), or NULL */
    int argc; char **argv;       /* the command's arguments (argv[0] = command), recorded
                                    in shard parts so that merge can repeat the set-up */
    const char *cwd;             /* working folder at parse time (owned), for shards */
    cli_list responses, factors, covariates, missing, term_order;
    int missing_only;            /* --missing-only: the tokens replace the defaults */
    cli_level_order *levels; size_t nlevels;   /* --levels, in the order given */
    cli_list compare;            /* --compare TERMS (when a list) */
    char *control;               /* --control FACTOR=LEVEL, split at '=' (owned) */
    sturdy_level_order *orders;  /* the same for the model spec (points into `levels`) */
    int ascii_terms, csv_bom;    /* CSV presentation */
    cli_format format;
    int format_given;
    const char *out_path;        /* NULL: standard output */
    const char *figures_dir;     /* --figures DIR: each figure as an SVG file, or NULL */
    int quiet;
} cli_check;

/* The long options of `check` (getopt_long's table, ended by a zero entry). */
extern const struct option cli_check_options[];

/* Index in cli_check_options of the option `name` names (without dashes): its exact
 * name, or a prefix of exactly one name, as getopt_long reads the command line. -1:
 * none; -2: ambiguous. *has_arg (may be NULL) gets its getopt has_arg. */
int cli_option_lookup(const char *name, int *has_arg);

/* Parse `argv` (argv[0] is the subcommand name). Returns 0, CLI_DONE after printing
 * help or the version, or CLI_EXIT_USAGE after printing the problem. Free with
 * cli_check_free in every case. */
int cli_check_parse(int argc, char **argv, int demo, cli_check *c);
/* The help of check (demo: of demo), as --help prints it (check_help.c). */
void cli_check_help(FILE *out, int demo);
void cli_check_free(cli_check *c);

/* Load and analyse (under MPI: this rank's slice, combined on rank 0). Returns 0 and
 * the result, or the status with the message in err (nothing printed). */
int cli_check_compute(cli_check *c, sturdy_result **out, char *err);

/* Render the result in the chosen format (shard parts carry args and cwd). */
int cli_render(const cli_check *c, const sturdy_result *r, sturdy_buf *out);

/* Load, analyse, render and write; returns the exit status. */
int cli_check_run(cli_check *c);

/* MPI (built with `make MPI=1`; otherwise one rank of one). cli_mpi_combine sums the
 * ranks' counts and gathers their replicates on rank 0, which finishes the result; any
 * rank's failure fails all ranks, with the first failing status. */
int cli_mpi_init(int *argc, char ***argv);
void cli_mpi_finalize(void);
int cli_mpi_rank(void);
int cli_mpi_size(void);
sturdy_status cli_mpi_combine(sturdy_result *r, sturdy_status st, char *err);
/* The largest of every rank's rc (a collective call: every rank makes it), so that a
 * step only rank 0 takes can stop all ranks together. */
int cli_mpi_agree(int rc);

/* Print "sturdy: <message>" and "try 'sturdy <command> --help'" to stderr, the message
 * with the options it concerns named (cli_option_hints); returns 2. */
int cli_usage_error(const char *command, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* A copy of the library message `msg` with the command-line option named after each
 * phrase that names a setting ("the order of terms given (--term-order)"), or NULL when
 * memory ran out. The caller frees it. hints.c. */
char *cli_option_hints(const char *msg);

/* Print "sturdy: PREFIX MESSAGE" to stderr, the library message with its options named
 * (cli_option_hints) and escaped (cli_escaped); prefix may be NULL. hints.c. */
void cli_print_error(const char *prefix, const char *msg);

/* A copy of `text` safe to show on a terminal (the caller frees it; NULL when memory ran
 * out): control characters (C0 and DEL) and bytes that are not UTF-8 as \xHH, the C1
 * controls U+0080 to U+009F as \u00HH, everything else as it is. Every text that can
 * hold data (level, factor, column and file names, plan fields, fields of parts,
 * library messages quoting them) passes through it before it reaches standard error or
 * a batch summary, so data cannot move the cursor, retitle the window or ring the
 * bell. hints.c. */
char *cli_escaped(const char *text);

/* Strict parsers for option values: the whole text must be the number. Return 1 on
 * success. u64: decimal digits only (no sign, no blanks); double: finite. */
int cli_parse_u64(const char *s, uint64_t *v);
/* A size: bytes, or a whole number with K, M, G or T (also KiB/KB, …), powers of 1024;
 * 0 when malformed or beyond 2^64 − 1. */
int cli_parse_size(const char *s, uint64_t *v);
int cli_parse_double(const char *s, double *v);

/* Split "a,b,c" and append the parts to `l`; keep_empty keeps empty parts (for
 * --missing), else an empty part is an error. Returns 0, or -1 on an empty part, or
 * -2 when memory ran out. */
int cli_list_add(cli_list *l, const char *text, int keep_empty);
void cli_list_free(cli_list *l);

/* Write `len` bytes to `path`, or to standard output when path is NULL or "-". A file is
 * written to "PATH.tmp.XXXXXX" in the same folder, synced and renamed over PATH, so a
 * reader never sees a partial result; on failure the temporary file is removed. A path
 * that is a symbolic link to a file (or to nowhere) is refused; devices and pipes, also
 * through a link, are written in place. Returns 0, or STURDY_EOUTPUT after printing a
 * message naming the file. */
int cli_write_output(const char *path, const char *data, size_t len);

/* Install handlers for SIGINT, SIGTERM and SIGHUP (those not ignored) that remove the
 * temporary file cli_write_output is writing, if any, and then end the process by the
 * same signal. SIGKILL cannot be caught: it may leave a PATH.tmp.XXXXXX (never a partial
 * PATH). output.c. */
void cli_cleanup_on_signals(void);

/* 1 when paths a and b name the same existing file (device and inode), else 0. */
int cli_same_file(const char *a, const char *b);

/* The whole file at `path` in a malloc-ed buffer (not NUL-terminated), its size in
 * *len; NULL when it cannot be read. */
char *cli_read_file(const char *path, size_t *len);

/* SHA-256 (sha256.c): init, add bytes, then the 64 hex digits and a NUL. */
#define CLI_SHA256_HEX 65
typedef struct {
    uint32_t h[8];
    uint64_t len;
    unsigned char block[64];
    size_t fill;
    int accel;                   /* 1: the processor's SHA instructions (sha256.c) */
} cli_sha256;
void cli_sha256_init(cli_sha256 *s);
void cli_sha256_add(cli_sha256 *s, const void *data, size_t len);
void cli_sha256_hex(cli_sha256 *s, char hex[CLI_SHA256_HEX]);

/* Monotonic clock in seconds, for rates and progress. */
double cli_now(void);

/* The built-in dataset of `sturdy demo` (demo_data.c) and its model. */
extern const char sturdy_demo_csv[];
extern const size_t sturdy_demo_csv_len;
#define CLI_DEMO_NAME "demo (built in)"
#define CLI_DEMO_RESPONSE "build_min"
#define CLI_DEMO_FACTORS "runner,cache,tests"

/* Subcommands implemented elsewhere: argv[0] is the subcommand name. */
int sturdy_cli_merge(int argc, char **argv);
int sturdy_cli_batch(int argc, char **argv);

/* batch */

/* Write each figure of the HTML report into folder `dir` (made when missing) as
 * "<name>.svg", each file atomically; returns 0 or STURDY_EOUTPUT after printing why.
 * figures_out.c. */
int cli_write_figures(const char *dir, const sturdy_result *r);

/* The format a file name's extension asks for (.json, .csv, .html), or -1. options.c. */
int cli_format_of_path(const char *path);

/* a, b and c joined in a new string (the caller frees it), or NULL when memory ran out. */
char *cli_str_cat3(const char *a, const char *b, const char *c);

/* One analysis of a batch as the summary reports it. */
typedef struct {
    int exit_code;
    char *message;               /* failure message, or NULL */
    size_t terms, tested, disagree; /* terms of the model; those with an F-test */
    int compared;                /* an earlier result was found and compared */
    size_t changed;
    sturdy_buf changes;          /* "  NAME / response / term: old → new\n" lines */
    int resumed;                 /* the result in place was kept (--resume) */
    double seconds;              /* time computing it in this run (index.html only) */
    sturdy_buf verdicts;         /* index.html's list of the result's verdicts (empty
                                    without a result) */
} cli_batch_outcome;

/* The results folder (batch_dir.c). The default: the plan's path without ".csv", plus
 * ".results" (malloc-ed; NULL when memory ran out). */
char *cli_batch_default_dir(const char *plan);
/* Create `dir` unless it is a folder already; 0, or STURDY_EOUTPUT after a message. */
int cli_batch_make_dir(const char *dir);
/* Take the advisory lock on dir/.sturdy-batch.lock (flock, not waiting) and record this
 * process's id in it; *lock_fd gets the descriptor, whose closing (or the process's end)
 * releases the lock. Returns 0, or STURDY_EOUTPUT after a message naming the holder when
 * another process has it. A file system without flock: a warning, 0, *lock_fd left. */
int cli_batch_lock(const char *dir, int *lock_fd);
/* Remove the temporary files a killed run left in dir: NAME.json.tmp.XXXXXX and
 * .NAME.key.tmp.XXXXXX of the n plan names, and the summaries'; each removal is
 * reported on standard error unless quiet. Call it only under the lock. */
void cli_batch_remove_stale(const char *dir, const char *const *names, size_t n, int quiet);

/* A JSON result file read back (sturdy_result_free), or NULL when it is absent or not a
 * result. */
sturdy_result *cli_batch_read_result(const char *path);

/* What a batch result depends on (batch_results.c): digests of the program's version
 * and the row's `check` arguments (--threads left out), and of the data file's bytes
 * (ok = 0 when it is not a regular file or could not be read). */
typedef struct {
    char settings[CLI_SHA256_HEX], data[CLI_SHA256_HEX];
    int ok;
} cli_batch_key;
/* Fills k. The data file is read once: *bytes gets the bytes digested (malloc-ed, *len
 * of them; NULL when !k->ok) for the analysis to parse, so that the digest and the
 * analysis see the same data even if the file changes meanwhile. */
int cli_batch_key_make(cli_batch_key *k, char *const *argv, int argc, const char *data_file,
                       char **bytes, size_t *len);

/* The table of the data last parsed in a batch (batch_data.c), kept for the rows that
 * follow: plans often run many analyses of one file (responses, settings). */
typedef struct {
    char *name;                  /* the data as the plan names it (messages quote it) */
    char digest[CLI_SHA256_HEX]; /* of the bytes parsed */
    char delimiter;
    char **missing;              /* the table options' missing tokens (copied) */
    size_t nmissing;
    int missing_default;         /* topts.missing was NULL: the defaults */
    sturdy_table *table;
} cli_batch_data;

/* The table for data `name` whose bytes (`len` of them, digest `digest`) were just read,
 * under table options `o`: the held one when name, digest and options are equal, else
 * the bytes parsed (and held in place of the last). NULL when they do not parse or memory
 * runs out: the analysis then reads the file itself and reports why. */
const sturdy_table *cli_batch_data_table(cli_batch_data *d, const char *name,
                                         const char *digest, const char *bytes, size_t len,
                                         const sturdy_table_opts *o);
void cli_batch_data_free(cli_batch_data *d);

/* The text of the key file DIR/.NAME.key for a result of these bytes (the two digests
 * above and the result's own), malloc-ed; NULL when the data could not be read or memory
 * ran out. */
char *cli_batch_key_text(const cli_batch_key *k, const char *result, size_t len);

/* The result at out_path when its key file says it was computed from this key (same
 * version, arguments and data bytes) and the result's bytes are those the key names.
 * Returns the result read back (sturdy_result_free) or NULL. */
sturdy_result *cli_batch_resumable(const cli_batch_key *k, const char *out_path,
                                   const char *key_path);

/* Adds the result's terms, tested terms and classical/resampling disagreements to oc.
 * A result with no tested term makes the row "untested": exit_code STURDY_EMODEL and a
 * message saying why (as `check` exits). Returns 1 then, else 0. */
int cli_batch_tally(const sturdy_result *r, cli_batch_outcome *oc);

/* index.html's list of r's verdicts per response and term, appended to b
 * (batch_index.c). */
void cli_batch_verdicts(sturdy_buf *b, const sturdy_result *r);

/* Records in oc every verdict that differs between an earlier result `old` (nothing
 * when NULL) and `now`, terms present in only one of them included. */
void cli_batch_compare(const char *name, const sturdy_result *old, const sturdy_result *now,
                       cli_batch_outcome *oc);

/* Writes dir/summary.csv and dir/summary.txt for the n analyses named `names`; old_dir
 * (or NULL) is the --compare folder. Returns 0, or STURDY_EOUTPUT after a message. */
int cli_batch_write_summary(const char *plan_path, const char *dir, const char *old_dir,
                            const char *const *names, const cli_batch_outcome *oc,
                            size_t n);

/* Writes dir/index.html: one row per analysis with its verdicts (read from
 * dir/NAME.json), the changes against old_dir, its time, and links to NAME.html (when
 * present) and NAME.json. Returns 0, or STURDY_EOUTPUT after a message. batch_index.c. */
int cli_batch_write_index(const char *plan_path, const char *dir, const char *old_dir,
                          const char *const *names, const cli_batch_outcome *oc, size_t n);

#endif
