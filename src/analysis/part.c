/* part.c — a slice's raw material as an object of its own: copied out of a run (to send
 * to another process) or read from a shard's file (report/read.c), then added to a
 * result with sturdy_result_add_slice. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "core/result.h"
#include "core/jsonread.h"

sturdy_status sturdy_part_alloc(size_t nresp, size_t nterms, uint64_t nb, sturdy_part **out,
                                char *err)
{
    *out = NULL;
    size_t k = nresp * nterms;
    if (nb > SIZE_MAX / STURDY_BOOT_COLS / sizeof(double) / (k ? k : 1))
        return sturdy_fail(err, STURDY_EINTERNAL, "the part is too large for memory");
    sturdy_part *p = sturdy_calloc(1, sizeof *p);
    if (!p)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    size_t nv = k * (size_t)nb * STURDY_BOOT_COLS;
    p->counts = sturdy_calloc(STURDY_PART_COUNTS * k + 1, sizeof *p->counts);
    p->boot = sturdy_malloc((nv + 1) * sizeof *p->boot);
    p->f_hist = sturdy_calloc(k * STURDY_FHIST_BINS + 1, sizeof *p->f_hist);
    if (!p->counts || !p->boot || !p->f_hist) {
        sturdy_part_free(p);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t i = 0; i < nv; i++)
        p->boot[i] = NAN;
    p->s.nresp = nresp;
    p->s.nterms = nterms;
    p->s.exceed = p->counts;
    p->s.exceed_fwer = p->counts + k;
    p->s.uv_exceed_wild = p->counts + 2 * k;
    p->s.uv_exceed_perm = p->counts + 3 * k;
    p->s.exceed_without = p->counts + 4 * k;
    p->s.exceed_resistant = p->counts + 5 * k;
    p->s.boot = p->boot;
    p->s.f_hist = p->f_hist;
    *out = p;
    return STURDY_OK;
}

sturdy_status sturdy_part_alloc_top(sturdy_part *p, char *err)
{
    size_t k = p->s.nresp * p->s.nterms;
    if (p->f_top)
        return STURDY_OK;
    p->f_top = sturdy_calloc(k * STURDY_TAIL_KEEP + 1, sizeof *p->f_top);
    p->n_top = sturdy_calloc(k + 1, sizeof *p->n_top);
    if (!p->f_top || !p->n_top)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    p->s.f_top = p->f_top;
    p->s.n_top = p->n_top;
    return STURDY_OK;
}

sturdy_status sturdy_result_part(const sturdy_result *r, sturdy_part **out, char *err)
{
    size_t nt = r->nresp ? r->resp[0].nterms : 0, k = r->nresp * nt;
    uint64_t nb = r->boot_end - r->boot_begin;
    sturdy_status st = sturdy_part_alloc(r->nresp, nt, nb, out, err);
    if (st)
        return st;
    sturdy_part *p = *out;
    p->s.perm_begin = r->perm_begin;
    p->s.perm_end = r->perm_end;
    p->s.boot_begin = r->boot_begin;
    p->s.boot_end = r->boot_end;
    p->index = r->opts.shard_index;
    p->count = r->opts.shard_count;
    p->data_checksum = r->data_checksum;
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < nt; t++) {
            const sturdy_term_result *tr = &r->resp[ri].terms[t];
            size_t j = ri * nt + t;
            p->counts[j] = tr->exceed;
            p->counts[k + j] = tr->exceed_fwer;
            p->counts[2 * k + j] = tr->uv.exceed_wild;
            p->counts[3 * k + j] = tr->uv.exceed_perm;
            p->counts[4 * k + j] = tr->sens.exceed_without;
            p->counts[5 * k + j] = tr->rs.exceed;
            memcpy(p->f_hist + j * STURDY_FHIST_BINS, tr->f_hist, sizeof tr->f_hist);
            if (tr->boot && nb)
                memcpy(p->boot + j * nb * STURDY_BOOT_COLS,
                       tr->boot + r->boot_begin * STURDY_BOOT_COLS,
                       nb * STURDY_BOOT_COLS * sizeof *p->boot);
        }
    if (r->opts.tail_fit) {           /* the largest F* of each term (--tail-fit) */
        if ((st = sturdy_part_alloc_top(p, err))) {
            sturdy_part_free(p);
            *out = NULL;
            return st;
        }
        for (size_t ri = 0; ri < r->nresp; ri++)
            for (size_t t = 0; t < nt; t++) {
                const sturdy_term_result *tr = &r->resp[ri].terms[t];
                size_t j = ri * nt + t;
                p->n_top[j] = tr->n_top;
                memcpy(p->f_top + j * STURDY_TAIL_KEEP, tr->f_top,
                       tr->n_top * sizeof *p->f_top);
            }
    }
    size_t nc = 0;
    for (size_t ri = 0; ri < r->nresp; ri++)
        nc += r->resp[ri].ncomparisons;
    if (!(p->cmp_counts = sturdy_calloc(nc + 1, sizeof *p->cmp_counts))) {
        sturdy_part_free(p);
        *out = NULL;
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t ri = 0, q = 0; ri < r->nresp; ri++)
        for (size_t i = 0; i < r->resp[ri].ncomparisons; i++)
            p->cmp_counts[q++] = r->resp[ri].comparisons[i].exceed_maxt;
    p->s.ncomparisons = nc;
    p->s.cmp_exceed = p->cmp_counts;
    size_t cols = r->nresp ? r->resp[0].nfamilies + r->resp[0].nmeans : 0;
    if (r->nresp && r->resp[0].cmp_boot && cols) {   /* also for an empty range (MPI) */
        if (!(p->cmp_boot = sturdy_malloc((r->nresp * nb * cols + 1) * sizeof *p->cmp_boot))) {
            sturdy_part_free(p);
            *out = NULL;
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        }
        for (size_t ri = 0; ri < r->nresp; ri++)
            memcpy(p->cmp_boot + ri * nb * cols, r->resp[ri].cmp_boot + r->boot_begin * cols,
                   nb * cols * sizeof *p->cmp_boot);
        p->s.cmp_boot_cols = cols;
        p->s.cmp_boot = p->cmp_boot;
    }
    return STURDY_OK;
}

/* --- the raw section's digest -------------------------------------------------------- */

typedef struct { uint64_t h; } fnv;

static void fnv_u64(fnv *f, uint64_t v)
{
    for (int i = 0; i < 8; i++) {          /* little-endian bytes, whatever the machine */
        f->h ^= (v >> (8 * i)) & 0xFF;
        f->h *= 1099511628211ULL;
    }
}

/* A replicate value as the file holds it: every non-finite value is written as null and
 * read back as NaN, and −0 may be written as 0, so both hash as one value each. */
static void fnv_double(fnv *f, double x)
{
    uint64_t bits;
    if (!isfinite(x)) {
        bits = 0x7FF8000000000000ULL;
    } else {
        if (x == 0.0) x = 0.0;
        memcpy(&bits, &x, sizeof bits);
    }
    fnv_u64(f, bits);
}

uint64_t sturdy_part_digest(const sturdy_part *p)
{
    const sturdy_slice *s = &p->s;
    size_t k = s->nresp * s->nterms;
    uint64_t nb = s->boot_end - s->boot_begin;
    fnv f = { 14695981039346656037ULL };
    fnv_u64(&f, 0x7374757264793031ULL);    /* the digest's own version */
    fnv_u64(&f, p->index);
    fnv_u64(&f, p->count);
    fnv_u64(&f, p->data_checksum);
    fnv_u64(&f, s->perm_begin);
    fnv_u64(&f, s->perm_end);
    fnv_u64(&f, s->boot_begin);
    fnv_u64(&f, s->boot_end);
    fnv_u64(&f, s->nresp);
    fnv_u64(&f, s->nterms);
    for (size_t i = 0; i < STURDY_PART_COUNTS * k; i++)
        fnv_u64(&f, p->counts[i]);
    for (size_t i = 0; i < k * STURDY_FHIST_BINS; i++)
        fnv_u64(&f, p->f_hist[i]);
    for (size_t i = 0; i < k * (size_t)nb * STURDY_BOOT_COLS; i++)
        fnv_double(&f, p->boot[i]);
    /* the largest F* (--tail-fit), only when carried: other parts' digests unchanged */
    for (size_t i = 0; p->f_top && i < k; i++) {
        fnv_u64(&f, 0x746F70ULL + p->n_top[i]);
        for (size_t q = 0; q < p->n_top[i]; q++)
            fnv_double(&f, p->f_top[i * STURDY_TAIL_KEEP + q]);
    }
    fnv_u64(&f, s->ncomparisons);
    for (size_t i = 0; p->cmp_counts && i < s->ncomparisons; i++)
        fnv_u64(&f, p->cmp_counts[i]);
    /* a part of no replicates carries no comparison columns in its file */
    size_t cols = nb && p->cmp_boot ? s->cmp_boot_cols : 0;
    fnv_u64(&f, cols);
    for (size_t i = 0; i < s->nresp * (size_t)nb * cols; i++)
        fnv_double(&f, p->cmp_boot[i]);
    return f.h;
}

const sturdy_slice *sturdy_part_slice(const sturdy_part *p)
{
    return p ? &p->s : NULL;
}

void sturdy_part_free(sturdy_part *p)
{
    if (!p)
        return;
    sturdy_free(p->counts);
    sturdy_free(p->f_hist);
    sturdy_free(p->f_top);
    sturdy_free(p->n_top);
    sturdy_free(p->cmp_counts);
    sturdy_free(p->cmp_boot);
    sturdy_free(p->boot);
    for (size_t i = 0; i < p->nargs; i++)
        sturdy_free(p->args[i]);
    sturdy_free(p->args);
    sturdy_free(p->cwd);
    jv_free(p->doc);
    sturdy_free(p);
}
