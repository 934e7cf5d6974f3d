/* options.c — the options of `sturdy check` and `sturdy demo`: GNU-style long options,
 * strict number parsing, and the help text. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"

/* Long-only options get codes above the byte range. */
enum {
    OPT_COVARIATES = 256, OPT_BLOCK, OPT_ORDER, OPT_SS, OPT_BOOTSTRAP, OPT_METHOD, OPT_FLIP,
    OPT_SCHEME, OPT_CONF, OPT_ALPHA, OPT_SEED, OPT_THREADS, OPT_SHARD, OPT_FORMAT,
    OPT_DELIMITER, OPT_MISSING, OPT_MAX_LEVELS, OPT_MAX_COLUMNS, OPT_VERSION, OPT_SPREAD,
    OPT_LEVELS, OPT_MERGE_NUMERIC, OPT_MISSING_ONLY, OPT_ASCII_TERMS, OPT_CSV_BOM, OPT_FIGURES, OPT_TERM_ORDER,
    OPT_COMPARE, OPT_CONTROL, OPT_RESISTANT, OPT_MAX_MEMORY, OPT_TAIL_FIT, OPT_STOP_EARLY,
    OPT_MAX_BUILD_WORK
};

/* The one table of `check`'s long options: getopt_long reads the command line with it
 * (accepting unique prefixes), and batch plans name their columns by it the same way
 * (cli_option_lookup). */
const struct option cli_check_options[] = {
    { "response", required_argument, NULL, 'y' },
    { "factors", required_argument, NULL, 'f' },
    { "covariates", required_argument, NULL, OPT_COVARIATES },
    { "block", required_argument, NULL, OPT_BLOCK },
    { "order", required_argument, NULL, OPT_ORDER },
    { "term-order", required_argument, NULL, OPT_TERM_ORDER },
    { "ss", required_argument, NULL, OPT_SS },
    { "permutations", required_argument, NULL, 'B' },
    { "bootstrap", required_argument, NULL, OPT_BOOTSTRAP },
    { "method", required_argument, NULL, OPT_METHOD },
    { "flip", no_argument, NULL, OPT_FLIP },
    { "resistant", no_argument, NULL, OPT_RESISTANT },
    { "tail-fit", no_argument, NULL, OPT_TAIL_FIT },
    { "stop-early", no_argument, NULL, OPT_STOP_EARLY },
    { "bootstrap-scheme", required_argument, NULL, OPT_SCHEME },
    { "spread-scheme", required_argument, NULL, OPT_SPREAD },
    { "conf", required_argument, NULL, OPT_CONF },
    { "alpha", required_argument, NULL, OPT_ALPHA },
    { "seed", required_argument, NULL, OPT_SEED },
    { "threads", required_argument, NULL, OPT_THREADS },
    { "shard", required_argument, NULL, OPT_SHARD },
    { "format", required_argument, NULL, OPT_FORMAT },
    { "output", required_argument, NULL, 'o' },
    { "quiet", no_argument, NULL, 'q' },
    { "delimiter", required_argument, NULL, OPT_DELIMITER },
    { "missing", required_argument, NULL, OPT_MISSING },
    { "missing-only", required_argument, NULL, OPT_MISSING_ONLY },
    { "levels", required_argument, NULL, OPT_LEVELS },
    { "compare", required_argument, NULL, OPT_COMPARE },
    { "control", required_argument, NULL, OPT_CONTROL },
    { "merge-numeric-levels", no_argument, NULL, OPT_MERGE_NUMERIC },
    { "ascii-terms", no_argument, NULL, OPT_ASCII_TERMS },
    { "csv-bom", no_argument, NULL, OPT_CSV_BOM },
    { "figures", required_argument, NULL, OPT_FIGURES },
    { "max-levels", required_argument, NULL, OPT_MAX_LEVELS },
    { "max-columns", required_argument, NULL, OPT_MAX_COLUMNS },
    { "max-memory", required_argument, NULL, OPT_MAX_MEMORY },
    { "max-build-work", required_argument, NULL, OPT_MAX_BUILD_WORK },
    { "help", no_argument, NULL, 'h' },
    { "version", no_argument, NULL, OPT_VERSION },
    { NULL, 0, NULL, 0 }
};

int cli_usage_error(const char *command, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    char *msg = n >= 0 ? malloc((size_t)n + 1) : NULL, *hinted = NULL;
    if (msg) {
        va_start(ap, fmt);
        vsnprintf(msg, (size_t)n + 1, fmt, ap);
        va_end(ap);
        hinted = cli_option_hints(msg);
    }
    char *safe = msg ? cli_escaped(hinted ? hinted : msg) : NULL;   /* values from data */
    fprintf(stderr, "sturdy: %s\ntry 'sturdy %s --help'\n",
            safe ? safe : "out of memory", command ? command : "");
    free(safe);
    free(hinted);
    free(msg);
    return CLI_EXIT_USAGE;
}

int cli_parse_u64(const char *s, uint64_t *v)
{
    if (!s || *s < '0' || *s > '9') return 0;   /* strtoull would accept "-1" and " 1" */
    char *end;
    errno = 0;
    unsigned long long x = strtoull(s, &end, 10);
    if (errno || *end) return 0;
    *v = (uint64_t)x;
    return 1;
}

int cli_parse_size(const char *s, uint64_t *v)
{
    if (!s || *s < '0' || *s > '9') return 0;
    char *end;
    errno = 0;
    unsigned long long x = strtoull(s, &end, 10);
    if (errno) return 0;
    static const char units[] = "KMGT";
    const char *u = *end ? strchr(units, *end) : NULL;
    if (*end && !u) return 0;
    if (u) {
        end++;
        if (!strcmp(end, "iB") || !strcmp(end, "B")) end += strlen(end);
        for (int k = 0; k <= u - units; k++) {
            if (x > UINT64_MAX / 1024) return 0;
            x *= 1024;
        }
    }
    if (*end) return 0;
    *v = (uint64_t)x;
    return 1;
}

int cli_parse_double(const char *s, double *v)
{
    if (!s || !*s || *s == ' ' || *s == '\t') return 0;
    char *end;
    errno = 0;
    double x = strtod(s, &end);
    if (errno == ERANGE || *end || x != x || x - x != 0) return 0;   /* NaN or infinite */
    *v = x;
    return 1;
}

int cli_list_add(cli_list *l, const char *text, int keep_empty)
{
    const char *p = text;
    for (;;) {
        size_t len = strcspn(p, ",");
        /* blanks around a name are not part of it ("-f a, b"), as in the table's header */
        size_t a = 0, b = len;
        while (a < b && (p[a] == ' ' || p[a] == '\t')) a++;
        while (b > a && (p[b - 1] == ' ' || p[b - 1] == '\t')) b--;
        if (a == b && !keep_empty) return -1;
        char **items = realloc(l->items, (l->n + 1) * sizeof *items);
        if (!items) return -2;
        l->items = items;
        char *item = malloc(b - a + 1);
        if (!item) return -2;
        memcpy(item, p + a, b - a);
        item[b - a] = '\0';
        l->items[l->n++] = item;
        if (!p[len]) return 0;
        p += len + 1;
    }
}

void cli_list_free(cli_list *l)
{
    for (size_t i = 0; i < l->n; i++) free(l->items[i]);
    free(l->items);
    l->items = NULL;
    l->n = 0;
}

void cli_check_free(cli_check *c)
{
    if (c->argv)
        for (int i = 0; i < c->argc; i++)
            free(c->argv[i]);
    free(c->argv);
    free((char *)c->cwd);
    cli_list_free(&c->responses);
    cli_list_free(&c->factors);
    cli_list_free(&c->covariates);
    cli_list_free(&c->missing);
    for (size_t k = 0; k < c->nlevels; k++) {
        free(c->levels[k].factor);
        cli_list_free(&c->levels[k].levels);
    }
    free(c->levels);
    cli_list_free(&c->term_order);
    cli_list_free(&c->compare);
    free(c->control);
    free(c->orders);
}

int cli_option_lookup(const char *name, int *has_arg)
{
    size_t len = strlen(name);
    int exact = -1, prefix = -1, nprefix = 0;
    if (!len) return -1;
    for (int k = 0; cli_check_options[k].name; k++) {
        const char *o = cli_check_options[k].name;
        if (strncmp(o, name, len)) continue;
        if (!o[len]) exact = k;
        else if (nprefix++ == 0) prefix = k;
    }
    int found = exact >= 0 ? exact : nprefix == 1 ? prefix : nprefix ? -2 : -1;
    if (found >= 0 && has_arg) *has_arg = cli_check_options[found].has_arg;
    return found;
}

/* Option value helpers: each returns 0 or prints a usage error and returns 2. */
static int want_u64(const cli_check *c, const char *opt, const char *arg, uint64_t min,
                    uint64_t *v)
{
    if (!cli_parse_u64(arg, v))
        return cli_usage_error(c->command, "%s wants a whole number, not '%s'", opt, arg);
    if (*v < min)
        return cli_usage_error(c->command, "%s must be at least %llu (got %s)", opt,
                               (unsigned long long)min, arg);
    return 0;
}

static int want_level(const cli_check *c, const char *opt, const char *arg,
                      const char *example, double *v)
{
    if (!cli_parse_double(arg, v) || !(*v > 0 && *v < 1))
        return cli_usage_error(c->command, "%s wants a number strictly between 0 and 1 "
                               "(e.g. %s), not '%s'", opt, example, arg);
    return 0;
}

static int want_list(const cli_check *c, cli_list *l, const char *opt, const char *arg,
                     int keep_empty)
{
    int rc = cli_list_add(l, arg, keep_empty);
    if (rc == -1)
        return cli_usage_error(c->command, "%s has an empty name in '%s'", opt, arg);
    if (rc == -2) {
        fputs("sturdy: out of memory\n", stderr);
        return STURDY_EINTERNAL;
    }
    return 0;
}

static int parse_shard(const cli_check *c, const char *arg, uint64_t *i, uint64_t *n)
{
    const char *slash = strchr(arg, '/');
    char head[32];
    size_t len = slash ? (size_t)(slash - arg) : 0;
    if (!slash || len == 0 || len >= sizeof head) goto bad;
    memcpy(head, arg, len);
    head[len] = '\0';
    if (!cli_parse_u64(head, i) || !cli_parse_u64(slash + 1, n)) goto bad;
    if (*n < 1 || *i < 1 || *i > *n)
        return cli_usage_error(c->command, "--shard I/N needs 1 ≤ I ≤ N (got '%s')", arg);
    return 0;
bad:
    return cli_usage_error(c->command, "--shard wants I/N, e.g. 3/8, not '%s'", arg);
}

static int parse_delimiter(const cli_check *c, const char *arg, char *d)
{
    if (strcmp(arg, "tab") == 0 || strcmp(arg, "\\t") == 0) { *d = '\t'; return 0; }
    if (strlen(arg) != 1 || arg[0] == '"' || arg[0] == '\n' || arg[0] == '\r')
        return cli_usage_error(c->command, "--delimiter wants one character other than a "
                               "quote or line break (or 'tab'), not '%s'", arg);
    *d = arg[0];
    return 0;
}

int cli_format_of_path(const char *path)
{
    size_t n = strlen(path);
    if (n > 5 && strcmp(path + n - 5, ".json") == 0) return CLI_FMT_JSON;
    if (n > 4 && strcmp(path + n - 4, ".csv") == 0) return CLI_FMT_CSV;
    if (n > 5 && strcmp(path + n - 5, ".html") == 0) return CLI_FMT_HTML;
    if (n > 4 && strcmp(path + n - 4, ".htm") == 0) return CLI_FMT_HTML;
    return -1;
}

/* --levels 'F=a,b,c' (several separated by ';'): each order parsed into c->levels. */
static int parse_levels(cli_check *c, const char *arg)
{
    const char *p = arg;
    for (;;) {
        size_t len = strcspn(p, ";");
        const char *eq = memchr(p, '=', len);
        size_t a = 0, b = eq ? (size_t)(eq - p) : 0;
        while (a < b && (p[a] == ' ' || p[a] == '\t')) a++;
        while (b > a && (p[b - 1] == ' ' || p[b - 1] == '\t')) b--;
        if (!eq || a == b)
            return cli_usage_error(c->command, "--levels wants FACTOR=LEVEL,LEVEL,... (several "
                                   "separated by ';'), not '%s'", arg);
        cli_level_order *lv = realloc(c->levels, (c->nlevels + 1) * sizeof *lv);
        if (!lv) { fputs("sturdy: out of memory\n", stderr); return STURDY_EINTERNAL; }
        c->levels = lv;
        lv = &c->levels[c->nlevels];
        memset(lv, 0, sizeof *lv);
        if (!(lv->factor = strndup(p + a, b - a))) {
            fputs("sturdy: out of memory\n", stderr);
            return STURDY_EINTERNAL;
        }
        c->nlevels++;
        char *list = strndup(eq + 1, len - (size_t)(eq + 1 - p));
        if (!list) { fputs("sturdy: out of memory\n", stderr); return STURDY_EINTERNAL; }
        int rc = want_list(c, &lv->levels, "--levels", list, 0);
        free(list);
        if (rc) return rc;
        if (!p[len]) return 0;
        p += len + 1;
    }
}

/* Options that describe the data make no sense for the built-in demo. */
static int demo_forbids(int opt)
{
    return opt == 'y' || opt == 'f' || opt == OPT_COVARIATES || opt == OPT_BLOCK ||
           opt == OPT_DELIMITER || opt == OPT_MISSING || opt == OPT_MISSING_ONLY;
}

/* One option; returns 0 or an exit status. This stays one switch, one case per option
 * of cli_check_options, although it runs past 80 lines: each case is a line or two, and
 * the switch reads as the table from option to setting that it is; helpers per case
 * would scatter that table. */
static int apply_option(cli_check *c, int opt, const char *arg, const char *spelled)
{
    sturdy_options *o = &c->opts;
    uint64_t u;
    if (c->demo && demo_forbids(opt))
        return cli_usage_error(c->command, "%s does not apply to demo: its data are built "
                               "in (use 'sturdy check examples/demo.csv' to vary them)",
                               spelled);
    switch (opt) {
    case 'y': return want_list(c, &c->responses, "--response", arg, 0);
    case 'f': return want_list(c, &c->factors, "--factors", arg, 0);
    case OPT_COVARIATES: return want_list(c, &c->covariates, "--covariates", arg, 0);
    case OPT_TERM_ORDER: return want_list(c, &c->term_order, "--term-order", arg, 0);
    case OPT_MISSING: return want_list(c, &c->missing, "--missing", arg, 1);
    case OPT_MISSING_ONLY:
        c->missing_only = 1;
        return want_list(c, &c->missing, "--missing-only", arg, 1);
    case OPT_LEVELS: return parse_levels(c, arg);
    case OPT_COMPARE:
        cli_list_free(&c->compare);
        if (!strcmp(arg, "all") || !strcmp(arg, "none")) {
            o->compare_mode = !strcmp(arg, "all") ? STURDY_COMPARE_ALL : STURDY_COMPARE_NONE;
            return 0;
        }
        o->compare_mode = STURDY_COMPARE_LIST;
        return want_list(c, &c->compare, "--compare", arg, 0);
    case OPT_CONTROL: {
        const char *eq = strchr(arg, '=');
        if (!eq || eq == arg || !eq[1])
            return cli_usage_error(c->command, "--control wants FACTOR=LEVEL, not '%s'", arg);
        free(c->control);
        if (!(c->control = strdup(arg))) {
            fputs("sturdy: out of memory\n", stderr);
            return STURDY_EINTERNAL;
        }
        c->control[eq - arg] = '\0';
        o->control_factor = c->control;
        o->control_level = c->control + (eq - arg) + 1;
        return 0;
    }
    case OPT_MERGE_NUMERIC: o->model.merge_numeric_levels = 1; return 0;
    case OPT_ASCII_TERMS: c->ascii_terms = 1; return 0;
    case OPT_CSV_BOM: c->csv_bom = 1; return 0;
    case OPT_FIGURES:
        if (!*arg) return cli_usage_error(c->command, "--figures wants a folder name");
        c->figures_dir = arg;
        return 0;
    case OPT_BLOCK:
        if (!*arg) return cli_usage_error(c->command, "--block wants a column name");
        o->model.block = arg;
        return 0;
    case OPT_ORDER:
        if (want_u64(c, "--order", arg, 1, &u)) return CLI_EXIT_USAGE;
        o->model.order = u > STURDY_MAX_FACTORS ? STURDY_MAX_FACTORS : (int)u;
        return 0;
    case OPT_SS:
        if (strcmp(arg, "1") && strcmp(arg, "2") && strcmp(arg, "3"))
            return cli_usage_error(c->command, "--ss wants 1, 2 or 3, not '%s'", arg);
        o->ss_type = arg[0] - '0';
        return 0;
    case 'B': return want_u64(c, "--permutations", arg, 0, &o->permutations);
    case OPT_BOOTSTRAP: return want_u64(c, "--bootstrap", arg, 0, &o->bootstrap);
    case OPT_METHOD:
        if (!sturdy_method_parse(arg, &o->method))
            return cli_usage_error(c->command, "--method wants freedman-lane, ter-braak or "
                                   "raw, not '%s'", arg);
        return 0;
    case OPT_FLIP: o->flip = 1; return 0;
    case OPT_RESISTANT: o->resistant = 1; return 0;
    case OPT_TAIL_FIT: o->tail_fit = 1; return 0;
    case OPT_STOP_EARLY: o->stop_early = 1; return 0;
    case OPT_SCHEME:
        if (!sturdy_boot_scheme_parse(arg, &o->boot_scheme))
            return cli_usage_error(c->command, "--bootstrap-scheme wants residual, wild or "
                                   "cells, not '%s'", arg);
        return 0;
    case OPT_SPREAD:
        if (!sturdy_spread_scheme_parse(arg, &o->spread_scheme))
            return cli_usage_error(c->command, "--spread-scheme wants none, wild or "
                                   "permutation, not '%s'", arg);
        return 0;
    case OPT_CONF: return want_level(c, "--conf", arg, "0.95", &o->conf);
    case OPT_ALPHA: return want_level(c, "--alpha", arg, "0.05", &o->alpha);
    case OPT_SEED: return want_u64(c, "--seed", arg, 0, &o->seed);
    case OPT_THREADS:
        if (want_u64(c, "--threads", arg, 0, &u)) return CLI_EXIT_USAGE;
        if (u > 4096)
            return cli_usage_error(c->command, "--threads %s is more than 4096", arg);
        c->threads = (int)u;
        return 0;
    case OPT_SHARD: return parse_shard(c, arg, &o->shard_index, &o->shard_count);
    case OPT_FORMAT:
        if (!strcmp(arg, "text")) c->format = CLI_FMT_TEXT;
        else if (!strcmp(arg, "json")) c->format = CLI_FMT_JSON;
        else if (!strcmp(arg, "csv")) c->format = CLI_FMT_CSV;
        else if (!strcmp(arg, "csv-comparisons")) c->format = CLI_FMT_CSV_COMPARISONS;
        else if (!strcmp(arg, "html")) c->format = CLI_FMT_HTML;
        else return cli_usage_error(c->command, "--format wants text, json, csv, csv-comparisons or html, not '%s'",
                                    arg);
        c->format_given = 1;
        return 0;
    case 'o':
        if (!*arg) return cli_usage_error(c->command, "--output wants a file name");
        c->out_path = strcmp(arg, "-") ? arg : NULL;
        return 0;
    case 'q': c->quiet = 1; return 0;
    case OPT_DELIMITER: return parse_delimiter(c, arg, &c->topts.delimiter);
    case OPT_MAX_LEVELS:
        if (want_u64(c, "--max-levels", arg, 1, &u)) return CLI_EXIT_USAGE;
        o->model.max_levels = (size_t)u;
        return 0;
    case OPT_MAX_COLUMNS:
        if (want_u64(c, "--max-columns", arg, 1, &u)) return CLI_EXIT_USAGE;
        o->model.max_columns = (size_t)u;
        return 0;
    case OPT_MAX_MEMORY:
        if (!cli_parse_size(arg, &u) || u == 0 || u > SIZE_MAX)
            return cli_usage_error(c->command, "--max-memory wants a size of at least one "
                                   "byte, in bytes or with K, M, G or T (e.g. 4G), not '%s'",
                                   arg);
        o->model.max_memory = (size_t)u;
        return 0;
    case OPT_MAX_BUILD_WORK: {
        char *end = NULL;
        errno = 0;
        double ops = strtod(arg, &end);
        if (end == arg || *end || errno || !(ops >= 1) || !isfinite(ops))
            return cli_usage_error(c->command, "--max-build-work wants a number of "
                                   "floating-point operations of at least 1 (e.g. 1e14), "
                                   "not '%s'", arg);
        o->model.max_build_ops = ops;
        return 0;
    }
    }
    return cli_usage_error(c->command, "unhandled option %s", spelled);
}

/* Checks that need all options, and the model spec pointing into the lists. */
static int finish(cli_check *c)
{
    sturdy_options *o = &c->opts;
    if (c->demo) {
        if (want_list(c, &c->responses, "--response", CLI_DEMO_RESPONSE, 0) ||
            want_list(c, &c->factors, "--factors", CLI_DEMO_FACTORS, 0))
            return STURDY_EINTERNAL;
    } else {
        if (!c->responses.n)
            return cli_usage_error(c->command, "name the response column(s) with -y");
        if (!c->factors.n)
            return cli_usage_error(c->command, "name the factor column(s) with -f");
        if (c->factors.n > STURDY_MAX_FACTORS)
            return cli_usage_error(c->command, "at most %d factors (got %zu)",
                                   STURDY_MAX_FACTORS, c->factors.n);
    }
    o->model.responses = (const char *const *)c->responses.items;
    o->model.nresponses = c->responses.n;
    o->model.factors = (const char *const *)c->factors.items;
    o->model.nfactors = c->factors.n;
    o->model.covariates = (const char *const *)c->covariates.items;
    o->model.ncovariates = c->covariates.n;
    o->compare_terms = (const char *const *)c->compare.items;
    o->ncompare_terms = c->compare.n;
    o->model.term_order = (const char *const *)c->term_order.items;
    o->model.nterm_order = c->term_order.n;
    /* --missing adds to the defaults; --missing-only replaces them */
    if (c->missing.n || c->missing_only) {
        if (!c->missing_only &&
            (want_list(c, &c->missing, "--missing", "", 1) ||
             want_list(c, &c->missing, "--missing", "NA", 1)))
            return STURDY_EINTERNAL;
        c->topts.missing = (const char *const *)c->missing.items;
        c->topts.nmissing = c->missing.n;
    }
    if (c->nlevels) {
        if (!(c->orders = calloc(c->nlevels, sizeof *c->orders))) {
            fputs("sturdy: out of memory\n", stderr);
            return STURDY_EINTERNAL;
        }
        for (size_t k = 0; k < c->nlevels; k++) {
            c->orders[k].factor = c->levels[k].factor;
            c->orders[k].levels = (const char *const *)c->levels[k].levels.items;
            c->orders[k].nlevels = c->levels[k].levels.n;
        }
        o->model.level_orders = c->orders;
        o->model.nlevel_orders = c->nlevels;
    }
    if (!c->format_given && c->out_path && cli_format_of_path(c->out_path) >= 0)
        c->format = (cli_format)cli_format_of_path(c->out_path);
    if ((c->ascii_terms || c->csv_bom) && (o->shard_count || (c->format != CLI_FMT_CSV &&
                                                        c->format != CLI_FMT_CSV_COMPARISONS)))
        return cli_usage_error(c->command, "%s applies to CSV output: add --format csv (or "
                               "-o FILE.csv)", c->ascii_terms ? "--ascii-terms" : "--csv-bom");
    if (o->shard_count) {
        /* a part is raw material for 'sturdy merge' (hundreds of KB of JSON), never
         * something to read on a terminal; into a pipe or file it is fine */
        if (!c->out_path && isatty(STDOUT_FILENO))
            return cli_usage_error(c->command, "--shard writes a JSON part for 'sturdy "
                                   "merge', not a report: give -o FILE.json (or redirect "
                                   "standard output)");
        if (c->format_given && c->format != CLI_FMT_JSON)
            return cli_usage_error(c->command, "--shard writes JSON for 'sturdy merge'; "
                                   "leave out --format or use --format json");
        c->format = CLI_FMT_JSON;
        if (c->figures_dir)
            return cli_usage_error(c->command, "--figures needs the whole run: a shard has "
                                   "only part of it (give --figures to 'sturdy merge')");
    }
    return 0;
}

int cli_check_parse(int argc, char **argv, int demo, cli_check *c)
{
    memset(c, 0, sizeof *c);
    c->command = demo ? "demo" : "check";
    c->demo = demo;
    sturdy_options_init(&c->opts);
    sturdy_table_opts_init(&c->topts);
    c->format = CLI_FMT_TEXT;
    /* a copy of the arguments before getopt reorders them, and the working folder, for
       shard parts (merge repeats the set-up from them) */
    c->argv = calloc((size_t)argc + 1, sizeof *c->argv);
    c->cwd = getcwd(NULL, 0);
    if (!c->argv || !c->cwd) {
        fputs("sturdy: out of memory\n", stderr);
        return STURDY_EINTERNAL;
    }
    for (c->argc = 0; c->argc < argc; c->argc++)
        if (!(c->argv[c->argc] = strdup(argv[c->argc]))) {
            fputs("sturdy: out of memory\n", stderr);
            return STURDY_EINTERNAL;
        }
    opterr = 0;      /* our own messages */
    optind = 1;
    int opt, rc;
    while ((opt = getopt_long(argc, argv, ":y:f:B:o:qh", cli_check_options, NULL)) != -1) {
        const char *spelled = argv[optind - 1];
        if (opt == 'h') {
            cli_check_help(stdout, demo);
            return CLI_DONE;
        }
        if (opt == OPT_VERSION) { puts("sturdy " STURDY_VERSION); return CLI_DONE; }
        if (opt == '?') {
            if (optopt) return cli_usage_error(c->command, "unknown option '-%c'", optopt);
            return cli_usage_error(c->command, "unknown or ambiguous option '%s'", spelled);
        }
        if (opt == ':')
            return cli_usage_error(c->command, "option '%s' needs a value", spelled);
        /* "--opt=value" spells itself in one word; "-B 99" in two */
        if (optarg && spelled == optarg && optind >= 2) spelled = argv[optind - 2];
        if ((rc = apply_option(c, opt, optarg, spelled))) return rc;
    }
    int npos = argc - optind;
    if (demo && npos > 0)
        return cli_usage_error(c->command, "demo takes no file (got '%s')", argv[optind]);
    if (!demo) {
        if (npos == 0) return cli_usage_error(c->command, "name the data file (or '-')");
        if (npos > 1)
            return cli_usage_error(c->command, "one data file only (got '%s' and '%s')",
                                   argv[optind], argv[optind + 1]);
        c->data = argv[optind];
    }
    return finish(c);
}
