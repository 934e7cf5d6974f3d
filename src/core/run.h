/* run.h — a run's resolved settings and context, made once by analysis.c and passed to
 * every stage, so that no stage reads its settings out of the result it fills. */
#ifndef STURDY_RUN_H
#define STURDY_RUN_H

#include "sturdy/analysis.h"

typedef struct {
    sturdy_options opts;         /* as validated; boot_scheme resolved (never DEFAULT) */
    int threads;                 /* > 0 */
    sturdy_progress_fn progress; void *progress_arg;
    const volatile int *cancel;
    uint64_t nperm;              /* rearrangements of the whole run */
    int exact;                   /* enumerated exhaustively */
    uint64_t nboot;              /* replicates of the whole run */
    uint64_t perm_begin, perm_end; /* the slice this run computes */
    uint64_t boot_begin, boot_end;
} sturdy_run;

/* Threads a context asks for: its count, or all the OpenMP runtime offers for 0. */
int sturdy_context_threads(const sturdy_context *c);

/* 1 when the caller asked the run to stop. */
static inline int sturdy_run_cancelled(const sturdy_run *run)
{
    return run->cancel && *run->cancel;
}

#endif
