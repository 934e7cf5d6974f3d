/* maxt_pairs.h — the comparisons' rearranged statistics from each rearrangement's table
 * of (original cell, new cell) pairs (private to the permutation engine, permute.c and
 * permute_setup.c; see maxt_pairs.c). */
#ifndef STURDY_MAXT_PAIRS_H
#define STURDY_MAXT_PAIRS_H

#include <stddef.h>
#include <stdint.h>

#include "resampling/maxt.h"

typedef struct sturdy_maxt_pairs sturdy_maxt_pairs;
typedef struct sturdy_maxt_pairs_work sturdy_maxt_pairs_work;

/* Decide whether the comparisons' t*² come from the pair table: never with sign flips or
 * when the full model does not span group space (rank < K); otherwise by the cost model,
 * or forced by STURDY_PERM_PATH (cellcount.h): "pairs" takes this path wherever it
 * holds, "gather" and "cells" never. x must have its row form (sturdy_maxt_rows); lab0[k]
 * is position k's own group and count[g] the rows of group g. On STURDY_OK, *out is the
 * set-up, or NULL when the gather stays. */
sturdy_status sturdy_maxt_pairs_init(sturdy_maxt_pairs **out, const sturdy_maxt *x,
                                     size_t n, size_t K, size_t rank, const uint32_t *lab0,
                                     int flip, char *err);
void sturdy_maxt_pairs_free(sturdy_maxt_pairs *p);

/* Bytes of one thread's workspace. */
double sturdy_maxt_pairs_work_bytes(const sturdy_maxt_pairs *p);
sturdy_maxt_pairs_work *sturdy_maxt_pairs_work_alloc(const sturdy_maxt_pairs *p);
void sturdy_maxt_pairs_work_free(sturdy_maxt_pairs_work *w);

/* t*² of every comparison (as sturdy_maxt_t2 / sturdy_maxt_t2_het give them from the
 * gathered group sums, the same up to rounding) under the rearrangement lab, into
 * t2[q·nb + bb]. */
void sturdy_maxt_pairs_t2(const sturdy_maxt_pairs *p, sturdy_maxt_pairs_work *w,
                          const sturdy_maxt *x, const uint32_t *lab, double zero_rtol,
                          double *t2, size_t nb, size_t bb);

#endif
