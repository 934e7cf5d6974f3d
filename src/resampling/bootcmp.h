/* bootcmp.h — bootstrap intervals of the marginal means and max-|t| simultaneous
 * intervals of the comparisons (bootcmp.c), from the effect-size bootstrap's replicates. */
#ifndef STURDY_BOOTCMP_H
#define STURDY_BOOTCMP_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/design.h"
#include "sturdy/fit.h"

/* Columns of a replicate row of resp->cmp_boot: the families, then the means. */
static inline size_t sturdy_bootcmp_cols(const sturdy_response_result *resp)
{
    return resp->nfamilies + resp->nmeans;
}

/* Allocate every response's cmp_boot (NaN) for run->nboot replicates, or set the note
 * saying why there are none. */
sturdy_status sturdy_bootcmp_alloc(const sturdy_run *run, const sturdy_model *m,
                                   sturdy_result *r, char *err);

/* Doubles of a replicate's workspace beyond rank + 2K: the sums of its sweeps (after
 * sturdy_bootcmp_alloc). */
size_t sturdy_bootcmp_work(const sturdy_result *r);

/* Fill row b of resp->cmp_boot from the replicate's resampled errors: their scaled group
 * sums sr (K) and residual SS sse. Families studentised by their own SE (Games–Howell
 * comparisons) use a wild resample of the response's residuals instead, with the signs
 * of sturdy_pcg_for(seed, STURDY_STREAM_WILD_TEST, b) into `sign` (n). `work` has room
 * for rank + 2K + sturdy_bootcmp_work(r) doubles. Called from the bootstrap's replicate
 * loop (bootstrap.c); touches row b only. */
void sturdy_bootcmp_replicate(const sturdy_design *d, const sturdy_model *m,
                              sturdy_response_result *resp, uint64_t seed, uint64_t b,
                              const double *sr, double sse, signed char *sign, double *work);

/* Intervals of a finished run: means' percentile intervals, comparisons' max-|t|
 * simultaneous intervals at the run's level and their single-step max-T adjusted p
 * (p_boot_adjusted) from the same replicate maxima. */
sturdy_status sturdy_bootcmp_finish(sturdy_result *r, char *err);

#endif
