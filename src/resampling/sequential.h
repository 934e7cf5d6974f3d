/* sequential.h — opt-in sequential stopping of the permutation tests (sequential.c):
 * Besag & Clifford's (1991) sequential Monte Carlo p-value, a decision rule for terms
 * whose p is clearly below α, and the whole run's stopping, decided only at fixed
 * checkpoints of the global rearrangement sequence. */
#ifndef STURDY_SEQUENTIAL_H
#define STURDY_SEQUENTIAL_H

#include <stddef.h>
#include <stdint.h>

#include "core/result.h"   /* STURDY_SEQ_*: how a member stopped */

/* The next checkpoint after c (< B) of a run of B rearrangements: 128, 256, …, 1024, then
 * steps of the largest power of two ≤ c/8 (at most 12.5% past the point where the last
 * term stopped), never past B. Depends on c and B alone, never on threads or blocks. */
uint64_t sturdy_seq_next_checkpoint(uint64_t c, uint64_t B);

/* One thread's record of the current round: per member, the smallest (at most h) global
 * indices of its exceedances in the round, sorted. */
typedef struct {
    size_t M;
    unsigned h;
    uint64_t *pos;               /* M × h */
    unsigned *npos;              /* M */
} sturdy_seq_thread;

/* Record that rearrangement b of member j exceeds (called in any order of b). */
static inline void sturdy_seq_note(sturdy_seq_thread *s, size_t j, uint64_t b)
{
    uint64_t *p = s->pos + j * s->h;
    unsigned n = s->npos[j];
    if (n == s->h) {
        if (b >= p[n - 1])
            return;
        n--;                     /* the largest drops out */
    }
    unsigned k = n;
    while (k > 0 && p[k - 1] > b) {
        p[k] = p[k - 1];
        k--;
    }
    p[k] = b;
    s->npos[j] = n + 1;
}

/* The number of checkpoints strictly before B (those at which the decision rule is
 * applied; at B the run ends anyway). */
uint64_t sturdy_seq_ncheckpoints(uint64_t B);

/* The run's state: per member the exceedances before the last checkpoint and, once it
 * stopped, L, how and with how many exceedances. */
typedef struct {
    size_t M;
    unsigned h;
    double alpha;                /* the decision rule's level; 0: no decision rule */
    double eps;                  /* its risk at each checkpoint: the run's risk
                                    STURDY_STOP_EARLY_RISK over the checkpoints before B */
    uint64_t B;
    uint64_t *count;             /* M: exceedances among [0, last checkpoint) */
    uint64_t *stop;              /* M: L, or 0 while running */
    uint64_t *xstop;             /* M: exceedances behind p once stopped (h, or e at L) */
    unsigned char *rule;         /* M: STURDY_SEQ_* (core/result.h) */
    size_t left;                 /* members still running */
    uint64_t *merge;             /* nt × h: the threads' records of one member */
} sturdy_seq;

/* For M members, nt threads and a run of B rearrangements; alpha > 0 adds the decision
 * rule at that level. 0 on success, -1 when out of memory (nothing to free then). */
int sturdy_seq_init(sturdy_seq *s, size_t M, unsigned h, int nt, double alpha, uint64_t B);
void sturdy_seq_free(sturdy_seq *s);
int sturdy_seq_thread_init(sturdy_seq_thread *t, size_t M, unsigned h);
void sturdy_seq_thread_free(sturdy_seq_thread *t);

/* The checkpoint at rearrangement `at`: total[j] = member j's exceedances over [0, at)
 * summed over the threads, whose records ts[0..nt) cover the round just done. Stops the
 * members whose h-th exceedance fell in the round (L its index + 1), then, before B, those
 * whose p ≤ α is settled (L = at): the one-sided Clopper–Pearson upper bound of their
 * exceedance probability at level 1 − eps is below α. Clears the records for the next
 * round. */
void sturdy_seq_checkpoint(sturdy_seq *s, uint64_t at, const uint64_t *total,
                           sturdy_seq_thread *ts, int nt);

#endif
