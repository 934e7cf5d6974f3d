/* rearrange.c — the b-th rearrangement of the rows: random shuffles within exchangeability
 * blocks (Durstenfeld 1964, bounded draws by Lemire 2019), exact enumeration in a fixed
 * order (Lehmer codes), or sign patterns. Depends only on (seed, b), so any split of the
 * work over threads, shards or ranks sees the same rearrangements. */
#include <assert.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "resampling/pcg_inline.h"
#include "resampling/rearrange.h"

uint64_t sturdy_factorial_sat(size_t k)
{
    uint64_t f = 1;
    for (size_t i = 2; i <= k; i++) {
        if (f > UINT64_MAX / i)
            return UINT64_MAX;
        f *= i;
    }
    return f;
}

sturdy_status sturdy_rearranger_init(sturdy_rearranger *a, const sturdy_design *d, int flip,
                                     int exact, uint64_t seed, char *err)
{
    size_t n = d->n;
    assert(d->ngroups <= UINT32_MAX);   /* labels are 32-bit */
    memset(a, 0, sizeof *a);
    a->d = d;
    a->flip = flip;
    a->exact = exact;
    a->seed = seed;
    a->nblk = (d->has_block && !flip) ? d->block.nlevels : 1;
    a->lab0 = sturdy_malloc((n ? n : 1) * sizeof *a->lab0);
    if (!a->lab0 || sturdy_bucket_rows(a->nblk > 1 ? d->block_level : NULL, n, a->nblk,
                                       &a->blk_start, &a->blk_rows, NULL)) {
        sturdy_rearranger_free(a);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t k = 0; k < n; k++)
        a->lab0[k] = (uint32_t)d->group[a->blk_rows[k]];
    return STURDY_OK;
}

void sturdy_rearranger_free(sturdy_rearranger *a)
{
    if (!a)
        return;
    sturdy_free(a->blk_start);
    sturdy_free(a->blk_rows);
    sturdy_free(a->lab0);
    a->blk_start = a->blk_rows = NULL;
    a->lab0 = NULL;
}

/* The b-th permutation in enumeration order: mixed radix over blocks, each block's digit
 * decoded as a Lehmer code (factorial number system); b = 0 is the identity. */
static void unrank(const sturdy_rearranger *a, uint64_t b, uint32_t *lab, uint32_t *pool)
{
    for (size_t k = 0; k < a->nblk; k++) {
        size_t lo = a->blk_start[k], m = a->blk_start[k + 1] - lo;
        uint64_t f = sturdy_factorial_sat(m);
        uint64_t idx = b % f;
        b /= f;
        memcpy(pool, a->lab0 + lo, m * sizeof *pool);
        for (size_t i = 0; i < m; i++) {
            uint64_t fi = sturdy_factorial_sat(m - 1 - i);
            size_t dgt = (size_t)(idx / fi);
            idx %= fi;
            lab[lo + i] = pool[dgt];
            memmove(pool + dgt, pool + dgt + 1, (m - i - 1 - dgt) * sizeof *pool);
        }
    }
    assert(b == 0);     /* b < the number of rearrangements: enumeration is exhaustive */
}

void sturdy_rearrange(const sturdy_rearranger *a, uint64_t b, uint32_t *lab,
                      signed char *sign, uint32_t *pool)
{
    size_t n = a->d->n;
    assert(a->flip ? sign != NULL : lab != NULL && pool != NULL);
    if (a->flip) {
        if (a->exact) {
            assert(n < 64 && (b >> n) == 0);   /* b < 2^n sign patterns */
            for (size_t i = 0; i < n; i++)
                sign[i] = (b >> i) & 1 ? -1 : 1;
        } else {
            sturdy_pcg64 g;
            sturdy_pcg_for(&g, a->seed, STURDY_STREAM_PERMUTE, b);
            sturdy_pcg_signs(&g, sign, n);
        }
        return;
    }
    if (a->exact) {
        unrank(a, b, lab, pool);
        return;
    }
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, a->seed, STURDY_STREAM_PERMUTE, b);
    memcpy(lab, a->lab0, n * sizeof *lab);
    for (size_t k = 0; k < a->nblk; k++) {
        size_t lo = a->blk_start[k];
        pcg_shuffle_u32_inline(&g, lab + lo, a->blk_start[k + 1] - lo);
    }
}
