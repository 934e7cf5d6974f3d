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
    size_t nt = r->nresp ? r->resp[0].nterms : 0, k = r->nresp * nt;
    /* four counts per term: exceed, exceed_fwer, and the unequal-variance test's two */
    uint64_t *mine_c = calloc(4 * k + 1, sizeof *mine_c), *sum = calloc(4 * k + 1, sizeof *sum);
    int *counts = calloc((size_t)mpi_size_, sizeof *counts);
    int *displs = calloc((size_t)mpi_size_, sizeof *displs);
    int ok = mine_c && sum && counts && displs, all_ok = 0;
    MPI_Allreduce(&ok, &all_ok, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (!all_ok) {
        free(mine_c); free(sum); free(counts); free(displs);
        snprintf(err, STURDY_ERR_LEN, "out of memory while combining the MPI ranks");
        return STURDY_EINTERNAL;
    }
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < nt; t++) {
            mine_c[ri * nt + t] = r->resp[ri].terms[t].exceed;
            mine_c[k + ri * nt + t] = r->resp[ri].terms[t].exceed_fwer;
            mine_c[2 * k + ri * nt + t] = r->resp[ri].terms[t].uv.exceed_wild;
            mine_c[3 * k + ri * nt + t] = r->resp[ri].terms[t].uv.exceed_perm;
        }
    MPI_Reduce(mine_c, sum, (int)(4 * k), MPI_UINT64_T, MPI_SUM, 0, MPI_COMM_WORLD);
    /* every rank's replicate slice, in rank order, lands at its own place on rank 0 */
    for (int q = 0; q < mpi_size_; q++) {
        uint64_t lo = (uint64_t)((sturdy_u128)r->nboot * (uint64_t)q / (uint64_t)mpi_size_);
        uint64_t hi = (uint64_t)((sturdy_u128)r->nboot * (uint64_t)(q + 1) / (uint64_t)mpi_size_);
        counts[q] = (int)((hi - lo) * STURDY_NES);
        displs[q] = (int)(lo * STURDY_NES);
    }
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < nt; t++) {
            double *b = r->resp[ri].terms[t].boot;
            if (!b)
                continue; /* the same terms have replicates on every rank */
            double *slice = b + r->boot_begin * STURDY_NES;
            int n = (int)((r->boot_end - r->boot_begin) * STURDY_NES);
            if (mpi_rank_ == 0)
                MPI_Gatherv(MPI_IN_PLACE, n, MPI_DOUBLE, b, counts, displs, MPI_DOUBLE, 0,
                            MPI_COMM_WORLD);
            else
                MPI_Gatherv(slice, n, MPI_DOUBLE, NULL, NULL, NULL, MPI_DOUBLE, 0,
                            MPI_COMM_WORLD);
        }
    sturdy_status fst = STURDY_OK;
    if (mpi_rank_ == 0) {
        for (size_t ri = 0; ri < r->nresp; ri++)
            for (size_t t = 0; t < nt; t++) {
                r->resp[ri].terms[t].exceed = sum[ri * nt + t];
                r->resp[ri].terms[t].exceed_fwer = sum[k + ri * nt + t];
                r->resp[ri].terms[t].uv.exceed_wild = sum[2 * k + ri * nt + t];
                r->resp[ri].terms[t].uv.exceed_perm = sum[3 * k + ri * nt + t];
            }
        r->perm_done = r->nperm;
        r->boot_done = r->nboot;
        r->opts.shard_index = r->opts.shard_count = 0;
        fst = sturdy_result_finish(r, err);
    }
    free(mine_c); free(sum); free(counts); free(displs);
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

sturdy_status cli_mpi_combine(sturdy_result *r, sturdy_status st, char *err)
{
    (void)r;
    (void)err;
    return st;
}

#endif
