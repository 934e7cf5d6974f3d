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
#include "json_read.h"

static const char merge_help[] =
"Usage: sturdy merge PART.json... [-o FILE] [--format text|json|csv] [--data FILE]\n"
"\n"
"Combines the JSON parts written by 'sturdy check --shard I/N' into the result that a\n"
"single run would give, bit for bit. The data are read again from the path the parts\n"
"name (relative paths from the folder the shards ran in); --data gives another place.\n"
"Parts of different data, settings, seeds or splits are refused, as are missing or\n"
"repeated slices.\n"
"\n"
"  -o, --output FILE    write the result here (through a temporary file); default stdout\n"
"      --format F       text, json or csv (default text, or as -o FILE.json/.csv\n"
"                       says: the same rule as check)\n"
"      --data FILE      read the data from FILE instead\n"
"      --threads N      threads for the set-up (default all)\n"
"  -q, --quiet          no remarks on standard error\n"
"\n"
"Example\n"
"  for i in 1 2 3 4; do sturdy check trial.csv -y yield -f a,b --shard $i/4 -o part$i.json; done\n"
"  sturdy merge part*.json -o trial.json\n";

typedef struct {
    const char *path;
    char *text;
    jv *doc;
    uint64_t index, count;
} part;

static int jv_equal(const jv *a, const jv *b)
{
    if (!a || !b)
        return a == b;
    if (a->kind != b->kind || a->n != b->n)
        return 0;
    if ((a->kind == JV_NUMBER || a->kind == JV_STRING) && strcmp(a->text, b->text) != 0)
        return 0;
    for (size_t i = 0; i < a->n; i++) {
        if (a->kind == JV_OBJECT && strcmp(a->keys[i], b->keys[i]) != 0)
            return 0;
        if (!jv_equal(&a->items[i], &b->items[i]))
            return 0;
    }
    return 1;
}

static int fail(const char *path, const char *what, int code)
{
    fprintf(stderr, "sturdy: %s: %s\n", path, what);
    return code;
}

/* Read and check one part's envelope. */
static int load_part(part *p)
{
    char err[256];
    size_t len = 0;
    p->text = cli_read_file(p->path, &len);
    if (!p->text)
        return fail(p->path, "cannot read the part file", STURDY_EDATA);
    p->doc = jv_parse(p->text, len, err, sizeof err);
    if (!p->doc) {
        char msg[320];
        snprintf(msg, sizeof msg, "not valid JSON (%s)", err);
        return fail(p->path, msg, STURDY_EDATA);
    }
    int ok1, ok2;
    const jv *sh = jv_get(p->doc, "shard");
    uint64_t version = jv_u64(jv_get(p->doc, "version"), &ok1);
    if (!ok1 || version != 1)
        return fail(p->path, "not a sturdy result of version 1", STURDY_EDATA);
    if (!sh)
        return fail(p->path, "not a shard part (no 'shard' section); write parts with "
                             "'sturdy check ... --shard I/N'", STURDY_EDATA);
    p->index = jv_u64(jv_get(sh, "index"), &ok1);
    p->count = jv_u64(jv_get(sh, "count"), &ok2);
    if (!ok1 || !ok2 || p->index < 1 || p->index > p->count)
        return fail(p->path, "the shard section has no valid index/count", STURDY_EDATA);
    return 0;
}

/* Do parts a and b come from the same analysis? */
static int same_analysis(const part *a, const part *b)
{
    char msg[512];
    const jv *sa = jv_get(a->doc, "settings"), *sb = jv_get(b->doc, "settings");
    const char *ca = jv_str(jv_get(a->doc, "data_checksum"));
    const char *cb = jv_str(jv_get(b->doc, "data_checksum"));
    if (!ca || !cb || strcmp(ca, cb) != 0) {
        snprintf(msg, sizeof msg, "does not belong with %s: it was computed on different "
                                  "data (checksum %s, not %s)", a->path, cb ? cb : "none",
                 ca ? ca : "none");
        return fail(b->path, msg, STURDY_EUSAGE);
    }
    const jv *seed_a = jv_get(sa, "seed"), *seed_b = jv_get(sb, "seed");
    if (!jv_equal(seed_a, seed_b)) {
        snprintf(msg, sizeof msg, "does not belong with %s: seed %s, not %s", a->path,
                 seed_b && seed_b->text ? seed_b->text : "?",
                 seed_a && seed_a->text ? seed_a->text : "?");
        return fail(b->path, msg, STURDY_EUSAGE);
    }
    if (!jv_equal(sa, sb) || !jv_equal(jv_get(a->doc, "design"), jv_get(b->doc, "design"))) {
        snprintf(msg, sizeof msg, "does not belong with %s: different settings or model",
                 a->path);
        return fail(b->path, msg, STURDY_EUSAGE);
    }
    if (a->count != b->count) {
        snprintf(msg, sizeof msg, "does not belong with %s: split into %llu parts, not %llu",
                 a->path, (unsigned long long)b->count, (unsigned long long)a->count);
        return fail(b->path, msg, STURDY_EUSAGE);
    }
    return 0;
}

/* The slice of one part, added to r. */
static int add_part(const part *p, sturdy_result *r)
{
    const jv *sh = jv_get(p->doc, "shard");
    const jv *pr = jv_get(sh, "perm_range"), *br = jv_get(sh, "boot_range");
    int ok[4];
    sturdy_slice s;
    memset(&s, 0, sizeof s);
    s.perm_begin = jv_u64(jv_at(pr, 0), &ok[0]);
    s.perm_end = jv_u64(jv_at(pr, 1), &ok[1]);
    s.boot_begin = jv_u64(jv_at(br, 0), &ok[2]);
    s.boot_end = jv_u64(jv_at(br, 1), &ok[3]);
    if (!ok[0] || !ok[1] || !ok[2] || !ok[3] || s.boot_end < s.boot_begin)
        return fail(p->path, "the shard section has no valid ranges", STURDY_EDATA);
    const jv *resps = jv_get(p->doc, "responses");
    size_t nt = r->nresp ? r->resp[0].nterms : 0, nb = (size_t)(s.boot_end - s.boot_begin);
    if (!resps || resps->kind != JV_ARRAY || resps->n != r->nresp)
        return fail(p->path, "its responses do not match the data", STURDY_EDATA);
    s.nresp = r->nresp;
    s.nterms = nt;
    uint64_t *cnt = calloc(4 * r->nresp * nt + 1, sizeof *cnt);
    double *boot = malloc((r->nresp * nt * nb * STURDY_NES + 1) * sizeof *boot);
    if (!cnt || !boot) {
        free(cnt); free(boot);
        return fail(p->path, "out of memory", STURDY_EINTERNAL);
    }
    int rc = 0;
    for (size_t ri = 0; ri < r->nresp && !rc; ri++) {
        const jv *terms = jv_get(jv_at(resps, ri), "terms");
        if (!terms || terms->kind != JV_ARRAY || terms->n != nt) {
            rc = fail(p->path, "its terms do not match the model", STURDY_EDATA);
            break;
        }
        for (size_t t = 0; t < nt && !rc; t++) {
            const jv *raw = jv_get(jv_at(terms, t), "raw");
            size_t k = ri * nt + t;
            int okc;
            if (!raw) {
                rc = fail(p->path, "a term has no 'raw' section", STURDY_EDATA);
                break;
            }
            cnt[k] = jv_u64(jv_get(raw, "exceed"), &okc);
            cnt[r->nresp * nt + k] = jv_u64(jv_get(raw, "exceed_fwer"), &okc);
            cnt[2 * r->nresp * nt + k] = jv_u64(jv_get(raw, "uv_exceed_wild"), &okc);
            cnt[3 * r->nresp * nt + k] = jv_u64(jv_get(raw, "uv_exceed_perm"), &okc);
            const jv *b = jv_get(raw, "boot");
            double *dst = boot + k * nb * STURDY_NES;
            for (size_t q = 0; q < nb * STURDY_NES; q++)
                dst[q] = NAN;
            if (!b || b->kind == JV_NULL)
                continue;
            if (b->kind != JV_ARRAY || b->n != nb) {
                rc = fail(p->path, "a term's replicates do not match its range", STURDY_EDATA);
                break;
            }
            for (size_t q = 0; q < nb; q++) {
                const jv *row = jv_at(b, q);
                if (!row || row->kind != JV_ARRAY || row->n != STURDY_NES) {
                    rc = fail(p->path, "a replicate row does not hold 5 effect sizes",
                              STURDY_EDATA);
                    break;
                }
                for (size_t e = 0; e < STURDY_NES; e++)
                    dst[q * STURDY_NES + e] = jv_double(jv_at(row, e));
            }
        }
    }
    if (!rc) {
        char err[STURDY_ERR_LEN];
        s.exceed = cnt;
        s.exceed_fwer = cnt + r->nresp * nt;
        s.uv_exceed_wild = cnt + 2 * r->nresp * nt;
        s.uv_exceed_perm = cnt + 3 * r->nresp * nt;
        s.boot = boot;
        if (sturdy_result_add_slice(r, &s, err) != STURDY_OK)
            rc = fail(p->path, err, STURDY_EDATA);
    }
    free(cnt);
    free(boot);
    return rc;
}

/* The check the parts came from, set up again from their recorded arguments. */
static int setup_check(const part *p, cli_check *c)
{
    const jv *sh = jv_get(p->doc, "shard"), *args = jv_get(sh, "args");
    if (!args || args->kind != JV_ARRAY || args->n < 1)
        return fail(p->path, "the shard section does not record its command", STURDY_EDATA);
    char **argv = calloc(args->n + 1, sizeof *argv);
    if (!argv)
        return fail(p->path, "out of memory", STURDY_EINTERNAL);
    for (size_t i = 0; i < args->n; i++)
        argv[i] = (char *)jv_str(jv_at(args, i));
    const char *cmd = argv[0] ? argv[0] : "";
    int demo = !strcmp(cmd, "demo");
    if (!demo && strcmp(cmd, "check") != 0) {
        free(argv);
        return fail(p->path, "the recorded command is neither check nor demo", STURDY_EDATA);
    }
    for (size_t i = 0; i < args->n; i++)
        if (!argv[i]) {
            free(argv);
            return fail(p->path, "the recorded command is malformed", STURDY_EDATA);
        }
    int rc = cli_check_parse((int)args->n, argv, demo, c);
    free(argv);
    if (rc)
        return rc == CLI_DONE ? fail(p->path, "the recorded command only asks for help",
                                     STURDY_EDATA) : rc;
    return 0;
}

int sturdy_cli_merge(int argc, char **argv)
{
    static const struct option opts[] = {
        { "output", required_argument, NULL, 'o' },
        { "format", required_argument, NULL, 'F' },
        { "data", required_argument, NULL, 'D' },
        { "threads", required_argument, NULL, 'T' },
        { "quiet", no_argument, NULL, 'q' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 }
    };
    const char *out_path = NULL, *data = NULL;
    cli_format format = CLI_FMT_TEXT;
    int format_given = 0;
    uint64_t threads = 0;
    int quiet = 0, opt;
    opterr = 0;
    optind = 1;
    while ((opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (opt) {
        case 'h': fputs(merge_help, stdout); return 0;
        case 'o': out_path = optarg; break;
        case 'D': data = optarg; break;
        case 'q': quiet = 1; break;
        case 'T':
            if (!cli_parse_u64(optarg, &threads) || threads > 4096)
                return cli_usage_error("merge", "--threads wants a count, not '%s'", optarg);
            break;
        case 'F':
            if (!strcmp(optarg, "text")) format = CLI_FMT_TEXT;
            else if (!strcmp(optarg, "json")) format = CLI_FMT_JSON;
            else if (!strcmp(optarg, "csv")) format = CLI_FMT_CSV;
            else return cli_usage_error("merge", "--format wants text, json or csv, not '%s'",
                                        optarg);
            format_given = 1;
            break;
        default:
            return cli_usage_error("merge", "bad or incomplete option '%s'", argv[optind - 1]);
        }
    }
    /* as for check: text unless --format or the output file's extension says otherwise */
    if (!format_given && out_path && cli_format_of_path(out_path) >= 0)
        format = (cli_format)cli_format_of_path(out_path);
    int nparts = argc - optind;
    if (nparts < 1)
        return cli_usage_error("merge", "name the part files to merge");
    part *parts = calloc((size_t)nparts, sizeof *parts);
    if (!parts)
        return fail("merge", "out of memory", STURDY_EINTERNAL);
    int rc = 0;
    for (int i = 0; i < nparts && !rc; i++) {
        parts[i].path = argv[optind + i];
        rc = load_part(&parts[i]);
        if (!rc && i > 0)
            rc = same_analysis(&parts[0], &parts[i]);
        for (int j = 0; j < i && !rc; j++)
            if (parts[j].index == parts[i].index) {
                char msg[256];
                snprintf(msg, sizeof msg, "repeats slice %llu/%llu of %s",
                         (unsigned long long)parts[i].index,
                         (unsigned long long)parts[i].count, parts[j].path);
                rc = fail(parts[i].path, msg, STURDY_EUSAGE);
            }
    }
    if (!rc && (uint64_t)nparts != parts[0].count) {
        /* name the first missing slice */
        for (uint64_t want = 1; want <= parts[0].count; want++) {
            int have = 0;
            for (int i = 0; i < nparts; i++)
                have |= parts[i].index == want;
            if (!have) {
                fprintf(stderr, "sturdy: merge: slice %llu/%llu is missing (the parts given "
                                "cover %d of %llu)\n", (unsigned long long)want,
                        (unsigned long long)parts[0].count, nparts,
                        (unsigned long long)parts[0].count);
                break;
            }
        }
        rc = STURDY_EUSAGE;
    }
    cli_check c;
    memset(&c, 0, sizeof c);
    if (!rc)
        rc = setup_check(&parts[0], &c);
    char *joined = NULL;
    if (!rc) {
        c.opts.shard_index = c.opts.shard_count = 0;
        c.opts.resample = 0;
        c.opts.threads = (int)threads;
        c.out_path = out_path;
        c.format = format;
        c.quiet = quiet;
        if (!c.demo) {
            const char *cwd = jv_str(jv_get(jv_get(parts[0].doc, "shard"), "cwd"));
            if (data) {
                c.data_path = data;
            } else if (!strcmp(c.data, "-")) {
                rc = fail(parts[0].path, "the shards read standard input; give the data "
                                         "again with --data FILE", STURDY_EUSAGE);
            } else if (c.data[0] != '/' && cwd) {
                size_t len = strlen(cwd) + strlen(c.data) + 2;
                joined = malloc(len);
                if (!joined)
                    rc = fail("merge", "out of memory", STURDY_EINTERNAL);
                else
                    snprintf(joined, len, "%s/%s", cwd, c.data);
                c.data_path = joined;
            }
        }
    }
    sturdy_result *r = NULL;
    if (!rc) {
        char err[STURDY_ERR_LEN] = "";
        rc = cli_check_compute(&c, &r, err);
        if (rc)
            fprintf(stderr, "sturdy: merge: %s\n", err);
    }
    if (!rc) {
        char sum[32];
        snprintf(sum, sizeof sum, "%016llx", (unsigned long long)r->data_checksum);
        const char *want = jv_str(jv_get(parts[0].doc, "data_checksum"));
        if (!want || strcmp(want, sum) != 0)
            rc = fail(c.data_path ? c.data_path : c.data,
                      "these data differ from the data the parts were computed on "
                      "(checksum mismatch)", STURDY_EDATA);
    }
    for (int i = 0; i < nparts && !rc; i++)
        rc = add_part(&parts[i], r);
    if (!rc) {
        char err[STURDY_ERR_LEN] = "";
        if (sturdy_result_finish(r, err) != STURDY_OK)
            rc = fail("merge", err, STURDY_EUSAGE);
    }
    if (!rc) {
        sturdy_buf out;
        sturdy_buf_init(&out);
        if (cli_render(&c, r, &out) != STURDY_OK || !out.data)
            rc = fail("merge", "out of memory while writing the result", STURDY_EINTERNAL);
        else
            rc = cli_write_output(out_path, out.data, out.len);
        sturdy_buf_free(&out);
    }
    sturdy_result_free(r);
    cli_check_free(&c);
    free(joined);
    for (int i = 0; i < nparts; i++) {
        free(parts[i].text);
        jv_free(parts[i].doc);
    }
    free(parts);
    return rc;
}
