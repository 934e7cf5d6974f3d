/* rearrange.h — the b-th rearrangement of the rows (private): shared by the permutation
 * tests of F (permute.c) and of the unequal-variance statistic (unequal.c), so that both
 * use the same rearrangements for a seed. */
#ifndef STURDY_REARRANGE_H
#define STURDY_REARRANGE_H

#include <stdint.h>

#include "sturdy/design.h"

typedef struct {
    const sturdy_design *d;
    int flip, exact;
    uint64_t seed;
    /* exchangeability blocks: rows listed block by block (one block without a block
     * factor, and with sign flips, which never move a row) */
    size_t nblk;
    size_t *blk_start;   /* nblk + 1 */
    size_t *blk_rows;    /* n: the row at each position */
    uint32_t *lab0;      /* n: group of the row at each position */
} sturdy_rearranger;

/* Lay out the rows block by block. On failure frees what it made. */
sturdy_status sturdy_rearranger_init(sturdy_rearranger *a, const sturdy_design *d, int flip,
                                     int exact, uint64_t seed, char *err);
void sturdy_rearranger_free(sturdy_rearranger *a);

/* Rearrangement b, as the group labels of the positions (`lab`, n: a permutation of lab0
 * within each block — the value at position k goes to group lab[k]) or, with flips, as
 * signs (`sign`, n, in position order). `pool` is n scratch labels. With `exact`, the
 * b-th rearrangement in enumeration order; else drawn from sturdy_pcg_for(seed,
 * STURDY_STREAM_PERMUTE, b). */
void sturdy_rearrange(const sturdy_rearranger *a, uint64_t b, uint32_t *lab,
                      signed char *sign, uint32_t *pool);

/* n!, saturating at UINT64_MAX. */
uint64_t sturdy_factorial_sat(size_t k);

#endif
