/* mpi.c — splitting one check over MPI ranks (Open MPI; `make MPI=1`). Each rank
 * computes an even slice of the rearrangements and replicates with sturdy_analyze's
 * shard mechanism; rank 0 sums the exceedance counts, gathers the replicates into
 * place and finishes the result, which is then byte for byte what one process gives.
 * Without MPI these functions describe a single rank. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

#ifdef STURDY_MPI
#include <mpi.h>

static int mpi_on, mpi_rank_, mpi_size_ = 1;

int cli_mpi_init(int *argc, char ***argv)
{
    if (MPI_Init(argc, argv) != MPI_SUCCESS)
        return -1;
    mpi_on = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &mpi_rank_);
    MPI_Comm_size(MPI_COMM_WORLD, &mpi_size_);
    return 0;
}

void cli_mpi_finalize(void)
{
    if (mpi_on)
        MPI_Finalize();
    mpi_on = 0;
}

int cli_mpi_rank(void) { return mpi_rank_; }
int cli_mpi_size(void) { return mpi_size_; }

int cli_mpi_agree(int rc)
{
    int all = rc;
    if (mpi_on && mpi_size_ > 1)
        MPI_Allreduce(&rc, &all, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    return all;
}

/* Every rank's (perm_begin, perm_end, boot_begin, boot_end) into all[4 × size]. */
static void gather_ranges(const sturdy_result *r, uint64_t *all)
{
    sturdy_run_info info;
    sturdy_result_info(r, &info);
    uint64_t mine[4] = { info.perm_begin, info.perm_end, info.boot_begin, info.boot_end };
    MPI_Allgather(mine, 4, MPI_UINT64_T, all, 4, MPI_UINT64_T, MPI_COMM_WORLD);
}

/* --tail-fit: top[0..*n) descending becomes the largest STURDY_TAIL_KEEP of it and
 * add[0..nadd), descending (the library's merge, redone here on a rank's values: the
 * largest values of a multiset are the same in any order of arrival). */
static int cmp_desc(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x < y) - (x > y);
}

static void merge_top(double *top, size_t *n, const double *add, size_t nadd)
{
    double buf[2 * STURDY_TAIL_KEEP];
    if (nadd > STURDY_TAIL_KEEP)
        nadd = STURDY_TAIL_KEEP;
    memcpy(buf, top, *n * sizeof *buf);
    memcpy(buf + *n, add, nadd * sizeof *buf);
    size_t m = *n + nadd;
    qsort(buf, m, sizeof *buf, cmp_desc);
    *n = m < STURDY_TAIL_KEEP ? m : STURDY_TAIL_KEEP;
    memcpy(top, buf, *n * sizeof *buf);
}

/* Rank 0 adds the slices of ranks 1..N-1 (contiguous, in rank order) as one slice: the
 * counts summed, the replicates gathered into place. */
static sturdy_status combine_rest(sturdy_result *r, const sturdy_slice *own,
                                  const uint64_t *ranges, char *err)
{
    size_t nt = own->nterms, k = own->nresp * nt;
    uint64_t p0 = ranges[1], b0 = ranges[3];
    uint64_t p1 = ranges[4 * (mpi_size_ - 1) + 1], b1 = ranges[4 * (mpi_size_ - 1) + 3];
    uint64_t nb = b1 - b0;
    int root = mpi_rank_ == 0;
    size_t nc = own->cmp_exceed ? own->ncomparisons : 0;   /* max-T counts after them */
    size_t nh = own->f_hist ? k * STURDY_FHIST_BINS : 0; /* F* histograms last */
    uint64_t *mine_c = calloc(6 * k + nc + nh + 1, sizeof *mine_c);
    uint64_t *sum = calloc(6 * k + nc + nh + 1, sizeof *sum);
    double *boot = root ? malloc((k * nb * STURDY_BOOT_COLS + 1) * sizeof *boot) : NULL;
    int *counts = calloc((size_t)mpi_size_, sizeof *counts);
    int *displs = calloc((size_t)mpi_size_, sizeof *displs);
    /* --tail-fit: each rank's largest F* per term as doubles (the count, then the values) */
    size_t per = own->f_top ? k * (STURDY_TAIL_KEEP + 1) : 0;
    double *mine_t = per ? calloc(per, sizeof *mine_t) : NULL;
    double *all_t = per && root ? calloc(per * (size_t)mpi_size_, sizeof *all_t) : NULL;
    double *rest_top = per && root ? calloc(k * STURDY_TAIL_KEEP + 1, sizeof *rest_top) : NULL;
    size_t *rest_n = per && root ? calloc(k + 1, sizeof *rest_n) : NULL;
    int ok = mine_c && sum && counts && displs && (boot || !root) &&
             (!per || (mine_t && (!root || (all_t && rest_top && rest_n)))), all_ok = 0;
    MPI_Allreduce(&ok, &all_ok, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    sturdy_status st = STURDY_OK;
    if (!all_ok) {
        snprintf(err, STURDY_ERR_LEN, "out of memory while combining the MPI ranks");
        st = STURDY_EINTERNAL;
        goto done;
    }
    if (!root) /* rank 0's own counts are in r already */
        for (size_t j = 0; j < k; j++) {
            mine_c[j] = own->exceed[j];
            mine_c[k + j] = own->exceed_fwer[j];
            mine_c[2 * k + j] = own->uv_exceed_wild ? own->uv_exceed_wild[j] : 0;
            mine_c[3 * k + j] = own->uv_exceed_perm ? own->uv_exceed_perm[j] : 0;
            mine_c[4 * k + j] = own->exceed_without ? own->exceed_without[j] : 0;
            mine_c[5 * k + j] = own->exceed_resistant ? own->exceed_resistant[j] : 0;
        }
    if (!root)
        for (size_t q = 0; q < nc; q++)
            mine_c[6 * k + q] = own->cmp_exceed[q];
    if (!root)
        for (size_t q = 0; q < nh; q++)
            mine_c[6 * k + nc + q] = own->f_hist[q];
    MPI_Reduce(mine_c, sum, (int)(6 * k + nc + nh), MPI_UINT64_T, MPI_SUM, 0, MPI_COMM_WORLD);
    for (int q = 0; q < mpi_size_; q++) {
        uint64_t lo = ranges[4 * q + 2], hi = ranges[4 * q + 3];
        counts[q] = q == 0 ? 0 : (int)((hi - lo) * STURDY_BOOT_COLS);
        displs[q] = q == 0 ? 0 : (int)((lo - b0) * STURDY_BOOT_COLS);
    }
    uint64_t own_nb = own->boot_end - own->boot_begin;
    for (size_t j = 0; j < k; j++) {
        const double *src = own->boot + j * own_nb * STURDY_BOOT_COLS;
        MPI_Gatherv(root ? MPI_IN_PLACE : (void *)src, root ? 0 : (int)(own_nb * STURDY_BOOT_COLS),
                    MPI_DOUBLE, root ? boot + j * nb * STURDY_BOOT_COLS : NULL, counts, displs,
                    MPI_DOUBLE, 0, MPI_COMM_WORLD);
    }
    /* the comparisons' replicate rows, per response (every rank has the same cols) */
    size_t cols = own->cmp_boot ? own->cmp_boot_cols : 0;
    double *cb = root && cols ? malloc((own->nresp * nb * cols + 1) * sizeof *cb) : NULL;
    int cok = !(root && cols) || cb, call_ok = 0;
    MPI_Allreduce(&cok, &call_ok, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (!call_ok) {
        snprintf(err, STURDY_ERR_LEN, "out of memory while combining the MPI ranks");
        st = STURDY_EINTERNAL;
        free(cb);
        goto done;
    }
    for (int q = 0; cols && q < mpi_size_; q++) {
        uint64_t lo = ranges[4 * q + 2], hi = ranges[4 * q + 3];
        counts[q] = q == 0 ? 0 : (int)((hi - lo) * cols);
        displs[q] = q == 0 ? 0 : (int)((lo - b0) * cols);
    }
    for (size_t ri = 0; cols && ri < own->nresp; ri++) {
        const double *src = own->cmp_boot + ri * own_nb * cols;
        MPI_Gatherv(root ? MPI_IN_PLACE : (void *)src, root ? 0 : (int)(own_nb * cols),
                    MPI_DOUBLE, root ? cb + ri * nb * cols : NULL, counts, displs,
                    MPI_DOUBLE, 0, MPI_COMM_WORLD);
    }
    if (per) {
        for (size_t j = 0; j < k; j++) {
            mine_t[j * (STURDY_TAIL_KEEP + 1)] = (double)own->n_top[j];
            memcpy(mine_t + j * (STURDY_TAIL_KEEP + 1) + 1, own->f_top + j * STURDY_TAIL_KEEP,
                   own->n_top[j] * sizeof *mine_t);
        }
        MPI_Gather(mine_t, (int)per, MPI_DOUBLE, all_t, (int)per, MPI_DOUBLE, 0,
                   MPI_COMM_WORLD);
        for (int q = 1; root && q < mpi_size_; q++)   /* rank 0's own are in r already */
            for (size_t j = 0; j < k; j++) {
                const double *src = all_t + (size_t)q * per + j * (STURDY_TAIL_KEEP + 1);
                merge_top(rest_top + j * STURDY_TAIL_KEEP, &rest_n[j], src + 1,
                          (size_t)src[0]);
            }
    }
    if (root) {
        sturdy_slice rest = { .perm_begin = p0, .perm_end = p1, .boot_begin = b0,
                              .boot_end = b1, .nresp = own->nresp, .nterms = nt,
                              .exceed = sum, .exceed_fwer = sum + k,
                              .uv_exceed_wild = sum + 2 * k, .uv_exceed_perm = sum + 3 * k,
                              .boot = boot, .exceed_without = sum + 4 * k,
                              .exceed_resistant = sum + 5 * k, .ncomparisons = nc,
                              .cmp_exceed = nc ? sum + 6 * k : NULL,
                              .cmp_boot_cols = cols, .cmp_boot = cb,
                              .f_hist = nh ? sum + 6 * k + nc : NULL,
                              .f_top = per ? rest_top : NULL,
                              .n_top = per ? rest_n : NULL };
        if (!(st = sturdy_result_add_slice(r, &rest, err)))
            st = sturdy_result_finish(r, err);
    }
    free(cb);
done:
    free(mine_c); free(sum); free(boot); free(counts); free(displs);
    free(mine_t); free(all_t); free(rest_top); free(rest_n);
    return st;
}

sturdy_status cli_mpi_combine(sturdy_result *r, sturdy_status st, char *err)
{
    /* one failing rank fails every rank: agree on the worst status first */
    int mine = (int)st, worst = 0;
    MPI_Allreduce(&mine, &worst, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    if (worst) {
        if (!st)
            snprintf(err, STURDY_ERR_LEN, "another MPI rank failed (status %d); no result "
                                          "was written", worst);
        return st ? st : (sturdy_status)worst;
    }
    sturdy_part *own = NULL;
    uint64_t *ranges = calloc(4 * (size_t)mpi_size_, sizeof *ranges);
    int ok = ranges && sturdy_result_part(r, &own, err) == STURDY_OK, all_ok = 0;
    MPI_Allreduce(&ok, &all_ok, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    sturdy_status fst = STURDY_OK;
    if (!all_ok) {
        snprintf(err, STURDY_ERR_LEN, "out of memory while combining the MPI ranks");
        fst = STURDY_EINTERNAL;
    } else {
        gather_ranges(r, ranges);
        fst = combine_rest(r, sturdy_part_slice(own), ranges, err);
    }
    sturdy_part_free(own);
    free(ranges);
    return fst;
}

#else

int cli_mpi_init(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    return 0;
}

void cli_mpi_finalize(void) {}
int cli_mpi_rank(void) { return 0; }
int cli_mpi_size(void) { return 1; }
int cli_mpi_agree(int rc) { return rc; }

sturdy_status cli_mpi_combine(sturdy_result *r, sturdy_status st, char *err)
{
    (void)r;
    (void)err;
    return st;
}

#endif
