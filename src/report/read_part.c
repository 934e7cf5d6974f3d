/* read_part.c — shard parts read back: the envelope (shard index and count, ranges,
 * checksums, command), then every term's raw material, checked for type and range against
 * the part's own slice before anyone adds it up; and whether two parts belong to one
 * run. */
#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "core/result.h"
#include "core/jsonread.h"
#include "report/read_util.h"
#include "sturdy/report.h"

static sturdy_status part_fail(char *err, const char *name, const char *what)
{
    return sturdy_fail(err, STURDY_EDATA, "%s: %s", name, what);
}

/* [a, b] of non-negative integers with a ≤ b. */
static int get_range(const jv *sh, const char *key, uint64_t *a, uint64_t *b)
{
    const jv *v = jv_get(sh, key);
    int ok1 = 0, ok2 = 0;
    if (!is_kind(v, JV_ARRAY) || v->n != 2)
        return 0;
    *a = jv_u64(&v->items[0], &ok1);
    *b = jv_u64(&v->items[1], &ok2);
    return ok1 && ok2 && *a <= *b;
}

/* The envelope: shard index and count, ranges, checksum, command and folder. */
static sturdy_status read_envelope(const char *name, const jv *doc, sturdy_part *p,
                                   uint64_t *pr, uint64_t *br, uint64_t *digest, char *err)
{
    uint64_t version = 0;
    const jv *sh = jv_get(doc, "shard"), *args = jv_get(sh, "args"), *cwd = jv_get(sh, "cwd");
    const jv *sum = jv_get(doc, "data_checksum");
    if (!get_u64(doc, "version", &version) || version != 1)
        return part_fail(err, name, "not a sturdy result of version 1");
    if (!sh)
        return part_fail(err, name, "not a shard part (no 'shard' section); parts are written "
                                    "by a run split into shards");
    /* index 0 of 0: the raw material of a whole run written as a part */
    if (!get_u64(sh, "index", &p->index) || !get_u64(sh, "count", &p->count) ||
        (p->count ? p->index < 1 || p->index > p->count : p->index != 0))
        return part_fail(err, name, "the shard section has no valid index/count");
    if (!get_range(sh, "perm_range", &pr[0], &pr[1]) ||
        !get_range(sh, "boot_range", &br[0], &br[1]))
        return part_fail(err, name, "the shard section has no valid ranges");
    char *end = NULL;
    errno = 0;
    if (!is_kind(sum, JV_STRING) || strlen(sum->text) != 16 ||
        (p->data_checksum = strtoull(sum->text, &end, 16), errno) || *end)
        return part_fail(err, name, "its data_checksum is not 16 hexadecimal digits");
    const jv *dg = jv_get(sh, "raw_digest");
    errno = 0;
    if (!is_kind(dg, JV_STRING) || strlen(dg->text) != 16 ||
        (*digest = strtoull(dg->text, &end, 16), errno) || *end)
        return part_fail(err, name, "its shard section has no raw_digest of 16 hexadecimal "
                                    "digits (a part written by an older version? write it "
                                    "again)");
    /* the command may be empty (a part written by an embedding program) */
    if (!is_kind(args, JV_ARRAY) || (cwd && !is_kind(cwd, JV_STRING) &&
                                     !is_kind(cwd, JV_NULL)))
        return part_fail(err, name, "the shard section does not record its command");
    if (!(p->args = sturdy_calloc(args->n + 1, sizeof *p->args)))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t i = 0; i < args->n; i++, p->nargs++)
        if (!is_kind(&args->items[i], JV_STRING))
            return part_fail(err, name, "the recorded command is malformed");
        else if (!(p->args[i] = sturdy_strdup(args->items[i].text)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (is_kind(cwd, JV_STRING) && !(p->cwd = sturdy_strdup(cwd->text)))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    return STURDY_OK;
}

/* One term's raw section into counts[j] (of k per kind) and its replicate rows. */
static sturdy_status read_raw(const char *name, const jv *raw, sturdy_part *p, size_t j,
                              char *err)
{
    static const char *const keys[STURDY_PART_COUNTS] = {
        "exceed", "exceed_fwer", "uv_exceed_wild", "uv_exceed_perm", "exceed_without",
        "exceed_resistant" };
    size_t k = p->s.nresp * p->s.nterms;
    uint64_t np = p->s.perm_end - p->s.perm_begin, nb = p->s.boot_end - p->s.boot_begin;
    char msg[160];
    if (!is_kind(raw, JV_OBJECT))
        return part_fail(err, name, "a term has no 'raw' section");
    for (int q = 0; q < STURDY_PART_COUNTS; q++) {
        uint64_t v = 0;
        if (!get_u64(raw, keys[q], &v) || v > np) {
            snprintf(msg, sizeof msg, "a term's raw '%s' is missing, not a count, or more than "
                                      "the part's %" PRIu64 " rearrangements", keys[q], np);
            return part_fail(err, name, msg);
        }
        p->counts[(size_t)q * k + j] = v;
    }
    /* the F* histogram */
    const jv *fh = jv_get(raw, "f_hist");
    if (!is_kind(fh, JV_ARRAY) || fh->n != STURDY_FHIST_BINS)
        return part_fail(err, name, "a term's raw 'f_hist' is missing or does not hold "
                                    "41 counts");
    uint64_t hsum = 0;
    for (size_t q = 0; q < STURDY_FHIST_BINS; q++) {
        int ok = 0;
        uint64_t v = jv_u64(&fh->items[q], &ok);
        if (!ok || v > np - hsum)
            return part_fail(err, name, "a term's raw 'f_hist' holds something other "
                                        "than counts within the part's rearrangements");
        hsum += v;
        p->f_hist[j * STURDY_FHIST_BINS + q] = v;
    }
    /* the largest F*, descending, with --tail-fit only (null: +∞, an F* without residual) */
    const jv *ft = jv_get(raw, "f_top");
    if (ft || p->f_top) {
        sturdy_status st;
        if (!is_kind(ft, JV_ARRAY) || ft->n > STURDY_TAIL_KEEP || ft->n > np)
            return part_fail(err, name, "a term's raw 'f_top' is missing, or holds more than "
                                        "251 values or than the part's rearrangements");
        if ((st = sturdy_part_alloc_top(p, err)))
            return st;
        for (size_t q = 0; q < ft->n; q++) {
            const jv *x = &ft->items[q];
            double v = is_kind(x, JV_NULL) ? INFINITY : jv_double(x);
            if ((!is_kind(x, JV_NULL) && !is_kind(x, JV_NUMBER)) || !(v >= 0) ||
                (q && !(v <= p->f_top[j * STURDY_TAIL_KEEP + q - 1])))
                return part_fail(err, name, "a term's raw 'f_top' holds something other than "
                                            "non-negative numbers in descending order");
            p->f_top[j * STURDY_TAIL_KEEP + q] = v;
        }
        p->n_top[j] = ft->n;
    }
    const jv *b = jv_get(raw, "boot");
    if (is_kind(b, JV_NULL))
        return STURDY_OK;
    if (!is_kind(b, JV_ARRAY) || b->n != nb)
        return part_fail(err, name, "a term's replicates do not match its range");
    double *dst = p->boot + j * (size_t)nb * STURDY_BOOT_COLS;
    for (size_t q = 0; q < nb; q++) {
        const jv *row = &b->items[q];
        if (!is_kind(row, JV_ARRAY) || row->n != STURDY_BOOT_COLS)
            return part_fail(err, name, "a replicate row does not hold 9 values (5 effect "
                                        "sizes, vᵀu*, ‖u*‖², SSE*, κ*): a part written by "
                                        "another version?");
        for (size_t e = 0; e < STURDY_BOOT_COLS; e++) {
            if (row->items[e].kind != JV_NUMBER && row->items[e].kind != JV_NULL)
                return part_fail(err, name, "a replicate value is neither a number nor null");
            dst[q * STURDY_BOOT_COLS + e] = jv_double(&row->items[e]);
        }
    }
    return STURDY_OK;
}

/* The max-T counts of every response's comparisons (a part written before comparisons
 * existed has none: then the slice carries none). */
static sturdy_status read_cmp_raw(const char *name, const jv *resps, sturdy_part *p, char *err)
{
    uint64_t np = p->s.perm_end - p->s.perm_begin;
    size_t total = 0;
    int any = 0;
    for (size_t ri = 0; ri < resps->n; ri++) {
        const jv *cs = jv_get(&resps->items[ri], "comparisons");
        if (is_kind(cs, JV_ARRAY)) {
            total += cs->n;
            any = 1;
        }
    }
    if (!any)
        return STURDY_OK;
    if (!(p->cmp_counts = sturdy_calloc(total + 1, sizeof *p->cmp_counts)))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    size_t q = 0;
    for (size_t ri = 0; ri < resps->n; ri++) {
        const jv *cs = jv_get(&resps->items[ri], "comparisons");
        for (size_t i = 0; is_kind(cs, JV_ARRAY) && i < cs->n; i++) {
            const jv *raw = jv_get(&cs->items[i], "raw");
            uint64_t v = 0;
            if (!is_kind(raw, JV_OBJECT) || !get_u64(raw, "exceed_maxt", &v) || v > np)
                return part_fail(err, name, "a comparison's raw 'exceed_maxt' is missing, not "
                                            "a count, or more than the part's rearrangements");
            p->cmp_counts[q++] = v;
        }
    }
    p->s.ncomparisons = total;
    p->s.cmp_exceed = p->cmp_counts;
    /* the comparisons' replicate rows: the same number of values in every response */
    uint64_t nb = p->s.boot_end - p->s.boot_begin;
    size_t cols = 0;
    for (size_t ri = 0; ri < resps->n; ri++) {
        const jv *rb = jv_get(&resps->items[ri], "raw_comparisons_boot");
        if (!rb || is_kind(rb, JV_NULL))
            return STURDY_OK;
        if (!is_kind(rb, JV_ARRAY) || rb->n != nb)
            return part_fail(err, name, "a response's comparison replicates do not match its "
                                        "range");
        for (size_t q = 0; q < rb->n; q++) {
            const jv *row = &rb->items[q];
            if (!is_kind(row, JV_ARRAY) || (cols && row->n != cols) || !row->n)
                return part_fail(err, name, "a comparison replicate row has the wrong length");
            cols = row->n;
        }
    }
    if (!nb || !cols)
        return STURDY_OK;
    if (!(p->cmp_boot = sturdy_calloc(resps->n * (size_t)nb * cols, sizeof *p->cmp_boot)))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t ri = 0; ri < resps->n; ri++) {
        const jv *rb = jv_get(&resps->items[ri], "raw_comparisons_boot");
        for (size_t q = 0; q < nb; q++)
            for (size_t e = 0; e < cols; e++) {
                const jv *v = &rb->items[q].items[e];
                if (v->kind != JV_NUMBER && v->kind != JV_NULL)
                    return part_fail(err, name, "a comparison replicate value is neither a "
                                                "number nor null");
                p->cmp_boot[(ri * nb + q) * cols + e] = jv_double(v);
            }
    }
    p->s.cmp_boot_cols = cols;
    p->s.cmp_boot = p->cmp_boot;
    return STURDY_OK;
}

sturdy_status sturdy_part_read_json(const char *name, const char *text, size_t len,
                                    sturdy_part **out, char *err)
{
    *out = NULL;
    sturdy_status st;
    jv *doc = rd_parse(name, text, len, &st, err);
    if (!doc)
        return st;
    sturdy_part env;
    memset(&env, 0, sizeof env);
    uint64_t pr[2] = {0, 0}, br[2] = {0, 0}, digest = 0;
    st = read_envelope(name, doc, &env, pr, br, &digest, err);
    const jv *resps = jv_get(doc, "responses");
    size_t nresp = is_kind(resps, JV_ARRAY) ? resps->n : 0;
    const jv *t0 = nresp ? jv_get(&resps->items[0], "terms") : NULL;
    size_t nt = is_kind(t0, JV_ARRAY) ? t0->n : 0;
    if (!st && (!nresp || !nt))
        st = part_fail(err, name, "it holds no responses or no terms");
    sturdy_part *p = NULL;
    if (!st && !(st = sturdy_part_alloc(nresp, nt, br[1] - br[0], &p, err))) {
        /* the envelope's owned pieces move into the part */
        p->index = env.index; p->count = env.count; p->data_checksum = env.data_checksum;
        p->args = env.args; p->nargs = env.nargs; p->cwd = env.cwd;
        memset(&env, 0, sizeof env);
        p->s.perm_begin = pr[0]; p->s.perm_end = pr[1];
        p->s.boot_begin = br[0]; p->s.boot_end = br[1];
        for (size_t ri = 0; ri < nresp && !st; ri++) {
            const jv *terms = jv_get(&resps->items[ri], "terms");
            if (!is_kind(terms, JV_ARRAY) || terms->n != nt)
                st = part_fail(err, name, "its responses have different terms");
            for (size_t t = 0; t < nt && !st; t++)
                st = read_raw(name, jv_get(&terms->items[t], "raw"), p, ri * nt + t, err);
        }
        if (!st)
            st = read_cmp_raw(name, resps, p, err);
        if (!st && sturdy_part_digest(p) != digest)
            st = part_fail(err, name, "its raw counts or replicates differ from those it was "
                                      "written with (the raw_digest does not match): the part "
                                      "was edited or damaged; compute it again");
    }
    for (size_t i = 0; i < env.nargs; i++)
        sturdy_free(env.args[i]);
    sturdy_free(env.args);
    sturdy_free(env.cwd);
    if (st) {
        sturdy_part_free(p);
        jv_free(doc);
        return st;
    }
    p->doc = doc;
    *out = p;
    return STURDY_OK;
}

void sturdy_part_origin_get(const sturdy_part *p, sturdy_part_origin *out)
{
    memset(out, 0, sizeof *out);
    if (!p)
        return;
    out->index = p->index;
    out->count = p->count;
    out->data_checksum = p->data_checksum;
    out->nargs = p->nargs;
    out->args = (const char *const *)p->args;
    out->cwd = p->cwd;
}

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

sturdy_status sturdy_part_compatible(const sturdy_part *a, const sturdy_part *b, char *err)
{
    const jv *da = a->doc, *db = b->doc;
    const jv *sa = jv_get(da, "settings"), *sb = jv_get(db, "settings");
    if (a->data_checksum != b->data_checksum)
        return sturdy_fail(err, STURDY_EUSAGE, "it was computed on different data (checksum "
                                               "%016" PRIx64 ", not %016" PRIx64 ")",
                           b->data_checksum, a->data_checksum);
    const jv *seed_a = jv_get(sa, "seed"), *seed_b = jv_get(sb, "seed");
    if (!jv_equal(seed_a, seed_b))
        return sturdy_fail(err, STURDY_EUSAGE, "seed %s, not %s",
                           seed_b && seed_b->text ? seed_b->text : "?",
                           seed_a && seed_a->text ? seed_a->text : "?");
    if (!jv_equal(sa, sb) || !jv_equal(jv_get(da, "design"), jv_get(db, "design")))
        return sturdy_fail(err, STURDY_EUSAGE, "different settings or model");
    if (a->count != b->count)
        return sturdy_fail(err, STURDY_EUSAGE, "split into %" PRIu64 " parts, not %" PRIu64,
                           b->count, a->count);
    return STURDY_OK;
}
