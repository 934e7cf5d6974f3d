/* batch_plan.c — the plan of `sturdy batch`: its columns (the required ones and `check`
 * options by name or unique prefix, none of the whole batch's), safe and distinct
 * analysis names, every problem reported with the plan's file, line and column before
 * anything runs. */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "batch.h"

static const char *const required_cols[] = { "name", "data", "response", "factors" };
/* Other plan columns are `check` long options, named as on the command line: the full
 * name or a prefix of exactly one (cli_option_lookup, the table getopt_long reads). These
 * belong to the batch as a whole, or to CSV output, which a batch does not write. */
static const char *const batch_cols[] = { "threads", "shard", "format", "output", "quiet",
                                           "help", "version", "ascii-terms", "csv-bom" };
#define NBATCH_COLS (sizeof batch_cols / sizeof *batch_cols)

const char *batch_required_col(size_t k)
{
    return k < NREQUIRED ? required_cols[k] : "?";
}

static int plan_error(const batch *b, size_t line, long col, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
static int plan_error(const batch *b, size_t line, long col, const char *fmt, ...)
{
    char what[STURDY_ERR_LEN];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    /* the plan's fields and headers are data: escaped before they reach the terminal */
    char *sp = cli_escaped(b->plan_path), *sw = cli_escaped(what);
    char *sc = col >= 0 ? cli_escaped(sturdy_table_column(b->plan, (size_t)col)) : NULL;
    fprintf(stderr, "sturdy: %s: line %zu", sp ? sp : "?", line);
    if (col >= 0) fprintf(stderr, ", column %ld ('%s')", col + 1, sc ? sc : "?");
    fprintf(stderr, ": %s\nnothing was run\n", sw ? sw : "out of memory");
    free(sp);
    free(sw);
    free(sc);
    return STURDY_EDATA;
}

/* File line of the header: the loader skips blank lines (and a byte-order mark). */
static size_t header_line(const char *path)
{
    FILE *f = fopen(path, "rb");
    size_t line = 1;
    unsigned char bom[3];
    int ch, prev = 0;
    if (!f) return line;
    if (fread(bom, 1, 3, f) != 3 || bom[0] != 0xEF || bom[1] != 0xBB || bom[2] != 0xBF)
        rewind(f);
    /* LF, CRLF and a lone CR each end a line, as the loader counts them */
    for (; (ch = getc(f)) != EOF && (ch == '\n' || ch == ' ' || ch == '\t' || ch == '\r');
         prev = ch)
        line += ch == '\r' || (ch == '\n' && prev != '\r');
    fclose(f);
    return line;
}

static int name_is_safe(const char *s)
{
    if (!*s || *s == '.' || strlen(s) > BATCH_NAME_MAX) return 0;
    for (; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') || (*s >= '0' && *s <= '9') ||
              *s == '.' || *s == '_' || *s == '-'))
            return 0;
    return 1;
}

const char *batch_cell(const batch *b, long col, size_t row)
{
    return col < 0 ? "" : sturdy_table_field(b->plan, row, (size_t)col);
}

int batch_plan_load(batch *b)
{
    char err[STURDY_ERR_LEN] = "";
    static const char *const nothing_missing[1] = { NULL };
    sturdy_table_opts to;
    sturdy_table_opts_init(&to);
    to.missing = nothing_missing;   /* every field as written; empty = not given */
    to.nmissing = 0;
    if (sturdy_table_load(b->plan_path, &to, &b->plan, err)) {
        char *safe = cli_escaped(err);
        fprintf(stderr, "sturdy: %s\nnothing was run\n", safe ? safe : "out of memory");
        free(safe);
        return STURDY_EDATA;
    }
    const sturdy_table *t = b->plan;
    size_t hline = header_line(b->plan_path);
    for (size_t k = 0; k < NREQUIRED; k++) b->req[k] = -1;
    for (size_t k = 0; k < MAX_CHECK_OPTIONS; k++) b->opt[k] = -1;
    for (size_t j = 0; j < sturdy_table_ncols(t); j++) {
        const char *h = sturdy_table_column(t, j);
        long *slot = NULL;
        int k = -1;
        if (!strcmp(h, "name")) slot = &b->req[COL_NAME];
        else if (!strcmp(h, "data")) slot = &b->req[COL_DATA];
        else if ((k = cli_option_lookup(h, NULL)) == -2) {
            char opts[256] = "";
            for (int i = 0; cli_check_options[i].name; i++)
                if (!strncmp(cli_check_options[i].name, h, strlen(h)) &&
                    strlen(opts) + strlen(cli_check_options[i].name) + 3 < sizeof opts)
                    snprintf(opts + strlen(opts), sizeof opts - strlen(opts), "%s%s",
                             opts[0] ? ", " : "", cli_check_options[i].name);
            return plan_error(b, hline, (long)j, "'%s' is the start of several option names "
                              "(%s); spell it out", h, opts);
        } else if (k < 0 || k >= MAX_CHECK_OPTIONS) {
            return plan_error(b, hline, (long)j, "unknown column (see 'sturdy batch --help' "
                              "for the plan columns)");
        } else {
            const char *full = cli_check_options[k].name;
            for (size_t i = 0; i < NBATCH_COLS; i++)
                if (!strcmp(full, batch_cols[i]))
                    return plan_error(b, hline, (long)j, "'%s' is an option of the whole "
                                      "batch and cannot be set per analysis", full);
            slot = !strcmp(full, "response") ? &b->req[COL_RESPONSE]
                   : !strcmp(full, "factors") ? &b->req[COL_FACTORS] : &b->opt[k];
        }
        if (*slot >= 0)
            return plan_error(b, hline, (long)j, "this column and column %ld ('%s') set the "
                              "same thing", *slot + 1, sturdy_table_column(t, (size_t)*slot));
        *slot = (long)j;
    }
    for (size_t k = 0; k < NREQUIRED; k++)
        if (b->req[k] < 0)
            return plan_error(b, hline, -1, "the required column '%s' is missing",
                              required_cols[k]);
    for (size_t i = 0; i < sturdy_table_nrows(t); i++) {
        const char *name = batch_cell(b, b->req[COL_NAME], i);
        if (!name_is_safe(name))
            return plan_error(b, sturdy_table_line(t, i), b->req[COL_NAME], "'%s' is not a "
                              "safe name: use letters, digits, '.', '_' and '-', not a leading "
                              "'.', at most %d characters", name, BATCH_NAME_MAX);
        for (size_t k = 0; k < i; k++)
            if (!strcmp(batch_cell(b, b->req[COL_NAME], k), name))
                return plan_error(b, sturdy_table_line(t, i), b->req[COL_NAME], "the name "
                                  "'%s' is already used on line %zu", name,
                                  sturdy_table_line(t, k));
    }
    return 0;
}
