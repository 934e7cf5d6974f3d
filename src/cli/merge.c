/* merge.c — `sturdy merge PART.json...`: combine the parts of a split run (written by
 * `check --shard I/N`) into the result a single run gives, byte for byte.
 *
 * Each part carries the command's arguments, its working folder, a checksum of the
 * data, the settings, and its slice's raw material (exceedance counts and bootstrap
 * replicate values). Merge checks that the parts belong together and cover every slice
 * once, repeats the deterministic set-up from the data (design, fit, classical table,
 * diagnostics), adds the slices and finishes the p-values and intervals. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char merge_help[] =
"Usage: sturdy merge PART.json... [-o FILE] [--format text|json|csv|html|csv-comparisons]\n"
"                    [--data FILE]\n"
"\n"
"Combines the JSON parts written by 'sturdy check --shard I/N' into the result that a\n"
"single run would give, bit for bit. The data are read again from the path the parts\n"
"name (relative paths from the folder the shards ran in); --data gives another place.\n"
"Parts of different data, settings, seeds or splits are refused, as are missing or\n"
"repeated slices.\n"
"\n"
"  -o, --output FILE    write the result here (through a temporary file); default stdout\n"
"      --format F       text, json, csv, html or csv-comparisons (the means and\n"
"                       comparisons, one row each; default text, or as -o FILE.json,\n"
"                       .csv or .html says: the same rule as check)\n"
"      --figures DIR    also write each figure as an SVG file into DIR\n"
"      --data FILE      read the data from FILE instead\n"
"      --threads N      threads for the set-up (default all)\n"
"  -q, --quiet          no remarks on standard error\n"
"\n"
"Example\n"
"  for i in 1 2 3 4; do sturdy check trial.csv -y yield -f a,b --shard $i/4 -o part$i.json; done\n"
"  sturdy merge part*.json -o trial.json\n";

typedef struct {
    const char *path;
    sturdy_part *part;
    sturdy_part_origin origin;
} part;

static int fail(const char *path, const char *what, int code)
{
    /* the message may quote a part's fields */
    char *sp = cli_escaped(path), *sw = cli_escaped(what);
    fprintf(stderr, "sturdy: %s: %s\n", sp ? sp : "?", sw ? sw : "out of memory");
    free(sp);
    free(sw);
    return code;
}

/* Read one part; the library checks its envelope and raw material. */
static int load_part(part *p)
{
    char err[STURDY_ERR_LEN];
    size_t len = 0;
    char *text = cli_read_file(p->path, &len);
    if (!text)
        return fail(p->path, "cannot read the part file", STURDY_EDATA);
    sturdy_status st = sturdy_part_read_json(p->path, text, len, &p->part, err);
    free(text);
    if (st) {
        cli_print_error(NULL, err);
        if (strstr(err, "not a shard part"))
            fputs("sturdy: parts are written by 'sturdy check ... --shard I/N'\n", stderr);
        return (int)st;
    }
    sturdy_part_origin_get(p->part, &p->origin);
    return 0;
}

/* Do parts a and b come from the same analysis? */
static int same_analysis(const part *a, const part *b)
{
    char err[STURDY_ERR_LEN], msg[STURDY_ERR_LEN + 300];
    if (sturdy_part_compatible(a->part, b->part, err) == STURDY_OK)
        return 0;
    snprintf(msg, sizeof msg, "does not belong with %s: %s", a->path, err);
    return fail(b->path, msg, STURDY_EUSAGE);
}

/* The slice of one part, added to r. */
static int add_part(const part *p, sturdy_result *r)
{
    char err[STURDY_ERR_LEN];
    if (sturdy_result_add_slice(r, sturdy_part_slice(p->part), err) != STURDY_OK)
        return fail(p->path, err, STURDY_EDATA);
    return 0;
}

/* The check the parts came from, set up again from their recorded arguments. */
static int setup_check(const part *p, cli_check *c)
{
    size_t nargs = p->origin.nargs;
    if (nargs < 1)
        return fail(p->path, "the shard section does not record its command", STURDY_EDATA);
    char **argv = calloc(nargs + 1, sizeof *argv);
    if (!argv)
        return fail(p->path, "out of memory", STURDY_EINTERNAL);
    for (size_t i = 0; i < nargs; i++)
        argv[i] = (char *)p->origin.args[i];
    const char *cmd = argv[0] ? argv[0] : "";
    int demo = !strcmp(cmd, "demo");
    if (!demo && strcmp(cmd, "check") != 0) {
        free(argv);
        return fail(p->path, "the recorded command is neither check nor demo", STURDY_EDATA);
    }
    for (size_t i = 0; i < nargs; i++)
        if (!argv[i]) {
            free(argv);
            return fail(p->path, "the recorded command is malformed", STURDY_EDATA);
        }
    int rc = cli_check_parse((int)nargs, argv, demo, c);
    free(argv);
    if (rc)
        return rc == CLI_DONE ? fail(p->path, "the recorded command only asks for help",
                                     STURDY_EDATA) : rc;
    return 0;
}

typedef struct {
    const char *out_path, *data;
    const char *figures_dir;     /* --figures DIR, or NULL */
    cli_format format;
    uint64_t threads;
    int quiet;
} merge_args;

/* The options; 0 and optind at the first part, CLI_DONE after --help, or an exit status. */
static int parse_args(int argc, char **argv, merge_args *m)
{
    static const struct option opts[] = {
        { "output", required_argument, NULL, 'o' },
        { "format", required_argument, NULL, 'F' },
        { "data", required_argument, NULL, 'D' },
        { "figures", required_argument, NULL, 'G' },
        { "threads", required_argument, NULL, 'T' },
        { "quiet", no_argument, NULL, 'q' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 }
    };
    int format_given = 0, opt;
    memset(m, 0, sizeof *m);
    m->format = CLI_FMT_TEXT;
    opterr = 0;
    optind = 1;
    while ((opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (opt) {
        case 'h': fputs(merge_help, stdout); return CLI_DONE;
        case 'o': m->out_path = optarg; break;
        case 'D': m->data = optarg; break;
        case 'G': m->figures_dir = optarg; break;
        case 'q': m->quiet = 1; break;
        case 'T':
            if (!cli_parse_u64(optarg, &m->threads) || m->threads > 4096)
                return cli_usage_error("merge", "--threads wants a count, not '%s'", optarg);
            break;
        case 'F':
            if (!strcmp(optarg, "text")) m->format = CLI_FMT_TEXT;
            else if (!strcmp(optarg, "json")) m->format = CLI_FMT_JSON;
            else if (!strcmp(optarg, "csv")) m->format = CLI_FMT_CSV;
            else if (!strcmp(optarg, "html")) m->format = CLI_FMT_HTML;
            else if (!strcmp(optarg, "csv-comparisons")) m->format = CLI_FMT_CSV_COMPARISONS;
            else return cli_usage_error("merge", "--format wants text, json, csv, html or "
                                        "csv-comparisons, not '%s'",
                                        optarg);
            format_given = 1;
            break;
        default:
            return cli_usage_error("merge", "bad or incomplete option '%s'", argv[optind - 1]);
        }
    }
    /* as for check: text unless --format or the output file's extension says otherwise */
    if (!format_given && m->out_path && cli_format_of_path(m->out_path) >= 0)
        m->format = (cli_format)cli_format_of_path(m->out_path);
    if (optind >= argc)
        return cli_usage_error("merge", "name the part files to merge");
    return 0;
}

/* Read every part; they must come from one analysis and hold each slice once. */
static int load_parts(part *parts, int nparts)
{
    int rc = 0;
    for (int i = 0; i < nparts && !rc; i++) {
        rc = load_part(&parts[i]);
        if (!rc && i > 0)
            rc = same_analysis(&parts[0], &parts[i]);
        for (int j = 0; j < i && !rc; j++)
            if (parts[j].origin.index == parts[i].origin.index) {
                char msg[256];
                snprintf(msg, sizeof msg, "repeats slice %llu/%llu of %s",
                         (unsigned long long)parts[i].origin.index,
                         (unsigned long long)parts[i].origin.count, parts[j].path);
                rc = fail(parts[i].path, msg, STURDY_EUSAGE);
            }
    }
    uint64_t count = parts[0].origin.count;
    if (rc || (uint64_t)nparts == count)
        return rc;
    for (uint64_t want = 1; want <= count; want++) {   /* name the first missing slice */
        int have = 0;
        for (int i = 0; i < nparts; i++)
            have |= parts[i].origin.index == want;
        if (!have) {
            fprintf(stderr, "sturdy: merge: slice %llu/%llu is missing (the parts given "
                            "cover %d of %llu)\n", (unsigned long long)want,
                    (unsigned long long)count, nparts, (unsigned long long)count);
            break;
        }
    }
    return STURDY_EUSAGE;
}

/* Where to read the data: --data, or the recorded path relative to the shards' folder
 * (*joined, owned, when it had to be joined). */
static int locate_data(const part *p0, const merge_args *m, cli_check *c, char **joined)
{
    const char *cwd = p0->origin.cwd;
    if (c->demo)
        return 0;
    if (m->data) {
        c->data_path = m->data;
    } else if (!strcmp(c->data, "-")) {
        return fail(p0->path, "the shards read standard input; give the data again with "
                              "--data FILE", STURDY_EUSAGE);
    } else if (c->data[0] != '/' && cwd) {
        size_t len = strlen(cwd) + strlen(c->data) + 2;
        if (!(*joined = malloc(len)))
            return fail("merge", "out of memory", STURDY_EINTERNAL);
        snprintf(*joined, len, "%s/%s", cwd, c->data);
        c->data_path = *joined;
    }
    return 0;
}

/* The set-up repeated on the data, the parts added, the result finished and written. */
static int combine(cli_check *c, const part *parts, int nparts, const char *out_path)
{
    sturdy_result *r = NULL;
    char err[STURDY_ERR_LEN] = "";
    int rc = cli_check_compute(c, &r, err);
    if (rc)
        cli_print_error("merge: ", err);
    if (!rc) {
        sturdy_run_info info;
        sturdy_result_info(r, &info);
        if (info.data_checksum != parts[0].origin.data_checksum)
            rc = fail(c->data_path ? c->data_path : c->data,
                      "these data differ from the data the parts were computed on "
                      "(checksum mismatch)", STURDY_EDATA);
    }
    for (int i = 0; i < nparts && !rc; i++)
        rc = add_part(&parts[i], r);
    if (!rc && sturdy_result_finish(r, err) != STURDY_OK)
        rc = fail("merge", err, STURDY_EUSAGE);
    if (!rc) {
        sturdy_buf out;
        sturdy_buf_init(&out);
        if (cli_render(c, r, &out) != STURDY_OK || !out.data)
            rc = fail("merge", "out of memory while writing the result", STURDY_EINTERNAL);
        else
            rc = cli_write_output(out_path, out.data, out.len);
        sturdy_buf_free(&out);
        if (!rc && c->figures_dir)
            rc = cli_write_figures(c->figures_dir, r);
    }
    sturdy_result_free(r);
    return rc;
}

int sturdy_cli_merge(int argc, char **argv)
{
    merge_args m;
    int rc = parse_args(argc, argv, &m);
    if (rc)
        return rc == CLI_DONE ? 0 : rc;
    int nparts = argc - optind;
    part *parts = calloc((size_t)nparts, sizeof *parts);
    if (!parts)
        return fail("merge", "out of memory", STURDY_EINTERNAL);
    for (int i = 0; i < nparts; i++)
        parts[i].path = argv[optind + i];
    rc = load_parts(parts, nparts);
    cli_check c;
    memset(&c, 0, sizeof c);
    char *joined = NULL;
    if (!rc)
        rc = setup_check(&parts[0], &c);
    if (!rc) {
        c.opts.shard_index = c.opts.shard_count = 0;
        c.opts.resample = 0;
        c.threads = (int)m.threads;
        c.out_path = m.out_path;
        c.format = m.format;
        c.figures_dir = m.figures_dir;
        c.quiet = m.quiet;
        rc = locate_data(&parts[0], &m, &c, &joined);
    }
    for (int i = 0; i < nparts && !rc && m.out_path; i++)
        if (cli_same_file(m.out_path, parts[i].path))
            rc = cli_usage_error("merge", "-o '%s' is the part %s itself; the result would "
                                 "replace it: name another file", m.out_path, parts[i].path);
    if (!rc && m.out_path && cli_same_file(m.out_path, c.data_path ? c.data_path : c.data))
        rc = cli_usage_error("merge", "-o '%s' is the data file itself; the result would "
                             "replace the data: name another file", m.out_path);
    if (!rc)
        rc = combine(&c, parts, nparts, m.out_path);
    cli_check_free(&c);
    free(joined);
    for (int i = 0; i < nparts; i++)
        sturdy_part_free(parts[i].part);
    free(parts);
    return rc;
}
