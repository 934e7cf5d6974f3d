/* permute_ctx.h — the permutation engine's state, shared by permute.c (the rearrangements
 * and their counts) and permute_setup.c (the members, their vectors, the paths and the
 * per-thread workspaces). Private to those two files. */
#ifndef STURDY_PERMUTE_CTX_H
#define STURDY_PERMUTE_CTX_H

#include "core/core.h"
#include "resampling/cellcount.h"
#include "resampling/maxt.h"
#include "resampling/maxt_pairs.h"
#include "resampling/rearrange.h"
#include "resampling/resampling.h"
#include "resampling/sequential.h"

/* Work per thread and block is bounded by this many bytes of group sums. */
#define PERM_BLOCK_BYTES (16u << 20)
#define PERM_BLOCK_MAX 64
/* A rearranged vector whose residual part is below this fraction of ‖v‖² has no residual
 * variation left (it happens with sign flips of tiny cells): its F* is +∞ when the term
 * part is not also that small, and undefined (never counted) when it is. 1e-12 is far
 * above the rounding of the norms (≈1e-15·‖v‖²) and far below any real residual. */
#define PERM_ZERO_RTOL 1e-12

typedef struct {
    size_t resp, term;
    const double *U;     /* K × df basis of the term's hypothesis space */
    size_t df;
    double vv;           /* ‖v‖² */
    double c;            /* count b when num* ≥ c·den*:  c = F_obs·df/df_error·(1−tol) */
    double to_f;         /* df_error/df: F* = to_f · num* / den* */
    double top;          /* upper edge of F*'s fixed bins (fhist.c); NaN: none */
} member;

typedef struct {
    const sturdy_design *d;
    const sturdy_model *m;
    size_t M;            /* members */
    size_t Mp;           /* M + C rounded up to a multiple of 4: rows of V and of the
                            group sums are padded with zeros so the gather adds whole
                            groups of 4, which the compiler turns into vector adds */
    sturdy_maxt maxt;    /* C comparison columns after the M members (maxt.c) */
    member *mem;
    double *V;           /* n × M row-major: the vectors to rearrange, rows in block
                            order (position k holds row ra.blk_rows[k]) */
    double *thr;         /* M × M: thr[t·M + j] = c-factor of member t at p_j */
    int flip;
    sturdy_rearranger ra; /* rows in block order and the rearrangements */
    sturdy_cellcount *cc; /* the group sums from cell counts (cellcount.c); NULL: gather */
    sturdy_maxt_pairs *mp; /* the comparisons' t*² from the pair table (maxt_pairs.c);
                              NULL: from their gathered group sums */
    size_t nb;           /* rearrangements per dgemm block */
    int tail;            /* --tail-fit: keep each member's largest F* (tail.c) */
} perm_ctx;

typedef struct {
    uint32_t *lab, *pool;
    signed char *sign;
    double *tmp;         /* K × M: group sums of one rearrangement, row-major */
    double *S;           /* M blocks of K × nb */
    double *C;           /* max(df, rank) × nb */
    double *num, *den;   /* M × nb */
    uint64_t *exceed, *fwer;
    uint64_t *cexceed;   /* C: max-T counts of the comparisons */
    uint64_t *hist;      /* M × STURDY_FHIST_BINS: F* on the fixed bins */
    double *t2;          /* C × nb: t*² of the comparisons */
    double *T, *T2;      /* K × Cp: the comparisons' group sums (and of squares) of one
                            rearrangement (maxt.c) */
    double *top;         /* --tail-fit: M min-heaps of STURDY_TAIL_KEEP largest F* */
    size_t *ntop;        /* their sizes */
    sturdy_seq_thread *seq; /* --stop-early: the exceedances' indices (sequential.c);
                            NULL without it (not owned) */
    sturdy_cellcount_work *ccw;
    sturdy_maxt_pairs_work *mpw;
} perm_work;

/* Choose the members (every response and term with an F) and their vectors, the
 * comparisons' columns, the path of the group sums (gather or cell counts) and of the
 * comparisons' statistics (gather or pair table), the min-p thresholds and the block size
 * (permute_setup.c). */
sturdy_status sturdy_perm_setup(perm_ctx *c, const sturdy_run *run, sturdy_result *r,
                                char *err);

/* One workspace per thread (permute_setup.c): *nthreads may come back smaller, and c->nb
 * too, where an address-space limit leaves less room. */
sturdy_status sturdy_perm_workspaces(perm_ctx *c, int *nthreads, perm_work **out, char *err);
void sturdy_perm_work_free(perm_work *w);

#endif
