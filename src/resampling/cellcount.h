/* cellcount.h — the group sums of the permutation engine's columns from the cell-count
 * table of each rearrangement (private to the permutation engine, permute.c and
 * permute_setup.c; see cellcount.c). */
#ifndef STURDY_CELLCOUNT_H
#define STURDY_CELLCOUNT_H

#include <stddef.h>
#include <stdint.h>

#include "core/core.h"

typedef struct sturdy_cellcount sturdy_cellcount;
typedef struct sturdy_cellcount_work sturdy_cellcount_work;

/* The environment variable that forces a path (tests and benchmarks): "cells" uses the
 * cell-count path wherever its algebra holds, "gather" never; "pairs" never either, and
 * takes the comparisons' statistics from the pair table wherever it holds
 * (maxt_pairs.c), which "cells" and "gather" never do ("pairs-dense" and "pairs-sparse"
 * also force how it builds its product table); unset or anything else: the cost
 * models decide. */
#define STURDY_PERM_PATH_ENV "STURDY_PERM_PATH"

/* What STURDY_PERM_PATH asks for (cellcount.c and maxt_pairs.c read it here). */
typedef enum {
    STURDY_PATH_AUTO,            /* unset or anything else */
    STURDY_PATH_GATHER,
    STURDY_PATH_CELLS,
    STURDY_PATH_PAIRS,
    STURDY_PATH_PAIRS_DENSE,
    STURDY_PATH_PAIRS_SPARSE
} sturdy_perm_path;
sturdy_perm_path sturdy_perm_path_forced(void);

/* Expected number of distinct original cells h that a uniform permutation sends to new
 * cell g, Σ_h (1 − exp(−n_h n_g / n)) (count[h] rows in cell h): the entries of column g
 * of the (original cell, new cell) table, and by symmetry of row g. The cost models of
 * the cell counts and of the pair table (maxt_pairs.c) read it. */
double sturdy_expected_met(const size_t *count, size_t K, size_t n, size_t g);

/* Decide whether the cell-count path computes the group sums of the columns of V
 * (n × Mp, rows in position order, lab0[k] the group of position k, K groups): columns
 * [0, nlin) are vectors to rearrange, columns [nlin, nlin + nsq) the squares of columns
 * [nlin − nsq, nlin) (nsq = 0 with flips), the rest zero padding. On STURDY_OK, *out is
 * the path's set-up, or NULL when the row gather stays (cheaper by the cost model,
 * forced, or the columns do not have the form the path needs). */
sturdy_status sturdy_cellcount_init(sturdy_cellcount **out, const double *V, size_t n,
                                    size_t Mp, size_t nlin, size_t nsq, const uint32_t *lab0,
                                    size_t K, int flip, char *err);
void sturdy_cellcount_free(sturdy_cellcount *cc);

/* Bytes of one thread's workspace. */
double sturdy_cellcount_work_bytes(const sturdy_cellcount *cc);
sturdy_cellcount_work *sturdy_cellcount_work_alloc(const sturdy_cellcount *cc);
void sturdy_cellcount_work_free(sturdy_cellcount_work *w);

/* Add the unscaled group sums of every column under one rearrangement to tmp (K × Mp,
 * row-major, zero on entry): lab (n labels, see sturdy_rearrange) or, with flips, sign. */
void sturdy_cellcount_sums(const sturdy_cellcount *cc, sturdy_cellcount_work *w,
                           const uint32_t *lab, const signed char *sign, double *tmp);

#endif
