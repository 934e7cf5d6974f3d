/* maxt.h — the comparisons' columns of the permutation engine (maxt.c): single-step
 * max-T over each term's family of pairwise differences (Westfall & Young 1993). */
#ifndef STURDY_MAXT_H
#define STURDY_MAXT_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/fit.h"

typedef struct {
    sturdy_comparison *cmp;      /* where the count goes */
    size_t family;               /* index of its family (response × term) */
    double *z;                   /* K: U·w, the contrast's direction in group space */
    double ww;                   /* ‖w‖² */
    double t2obs;                /* observed t²: pooled SE, or its own (Games–Howell) SE
                                    when het */
    int het;                     /* studentised by its own, cell-variance SE; its t² and
                                    t2obs are then −ln of the two-sided t(df) p */
    double df;                   /* Welch df of a het comparison */
    double vv;                   /* ‖v‖² of its rearranged vector (set by permute.c) */
} sturdy_maxt_member;

typedef struct {
    size_t C;                    /* comparison columns */
    sturdy_maxt_member *cm;
    size_t nfam;                 /* families; members of one family are contiguous */
    size_t *fam_begin;           /* nfam + 1 */
    double dfe;                  /* residual df */
    size_t Csq;                  /* 0, or C when some comparison is het: column C + q of
                                    the gathered block then holds comparison q's squared
                                    values, whose group sums give the cell variances */
    double *Qfix;                /* C × K (sign flipping, set by permute.c): the scaled
                                    group sums of squares, which flips leave unchanged;
                                    Csq is then 0 */
    /* The rearranged vectors in row form (sturdy_maxt_rows): comparison q's value at
     * position k is E[k·nresp + resp(q)] + A[g·Cp + q], g the position's own group, so a
     * rearrangement reads one value per response and row and a K × Cp table that stays in
     * cache, instead of an n × C matrix. */
    size_t Cp;                   /* C rounded up to a multiple of 4 (A's and T's rows) */
    size_t nresp;
    size_t *resp_begin;          /* nresp + 1: comparisons of each response */
    double *E;                   /* n × nresp, positions in block order */
    double *A;                   /* K × Cp: the per-cell part (zero beyond C) */
} sturdy_maxt;

/* The comparisons of every response with a pooled t; the others get the note saying why
 * they have no max-T p. An empty set when no rearrangements are computed. */
sturdy_status sturdy_maxt_init(sturdy_maxt *x, const sturdy_design *d, const sturdy_model *m,
                               const sturdy_run *run, sturdy_result *r, char *err);
void sturdy_maxt_free(sturdy_maxt *x);

/* The n-vector comparison q rearranges (rows in data order): Freedman–Lane, the
 * residuals of the full model with the contrast removed, r + q_c q_cᵀy; ter Braak, the
 * full model's residuals; raw, the centred response. */
void sturdy_maxt_vector(const sturdy_maxt *x, size_t q, const sturdy_design *d,
                        const sturdy_model *m, const sturdy_result *r, sturdy_method method,
                        double *v);

/* Fill E, A and resp_begin for the rearranger's positions (blk_rows: the row at each
 * position, lab0: its group), every comparison's ‖v‖² (vv) and, for sign flips of het
 * comparisons, Qfix: the vectors of sturdy_maxt_vector, the same doubles. */
sturdy_status sturdy_maxt_rows(sturdy_maxt *x, const sturdy_design *d, const sturdy_model *m,
                               const sturdy_result *r, sturdy_method method,
                               const size_t *blk_rows, const uint32_t *lab0, int flip,
                               char *err);

/* Comparison q's value at position k, whose own group is g (from the row form). */
double sturdy_maxt_value(const sturdy_maxt *x, size_t q, size_t k, uint32_t g);

/* Add every comparison's rearranged values to T (K × Cp, by the group each position now
 * carries: lab[k]) and, when T2 is given, their squares; with sign (flips), s_k times
 * the value. In position order, as the terms' gather. */
void sturdy_maxt_gather(const sturdy_maxt *x, size_t n, const uint32_t *lab,
                        const uint32_t *lab0, const signed char *sign, double *T,
                        double *T2);

/* (zᵀs*)² of comparison q for nb rearrangements' group sums S (K × nb) into num. */
void sturdy_maxt_numerators(const sturdy_maxt *x, size_t q, const double *S, size_t K,
                            size_t nb, double *num);

/* t*² from the numerator and the residual SS of the rearranged vector: +∞ when no
 * residual is left but the contrast is not also zero, NaN (never counted) when both are
 * (below zero_rtol·‖v‖²). */
double sturdy_maxt_t2(const sturdy_maxt *x, size_t q, double num, double den,
                      double zero_rtol);

/* t*² of a het comparison q from the scaled group sums S (K) and scaled group sums of
 * squares Q (K) of its rearranged vector: t*² = (zᵀs*)² ÷ Σ_g z_g² s*_g², with s*_g² the
 * within-cell variance (n_g ≥ 2); +∞ / NaN as sturdy_maxt_t2 when no variance is left.
 * sturdy_maxt_count takes it to the p scale (sturdy_maxt_lp at the Welch df). */
double sturdy_maxt_t2_het(const sturdy_maxt *x, size_t q, const double *S, const double *Q,
                          const double *sqrt_count, size_t K, double num, double zero_rtol);

/* −ln p of t² on the p scale of het comparisons: p the two-sided t(df) tail (+∞ for an
 * infinite t², NaN for NaN). */
double sturdy_maxt_lp(double t2, double df);
/* A cheap upper bound of sturdy_maxt_lp(t2, df) over every df (the normal tail's). */
double sturdy_maxt_lp_bound(double t2);
/* *mx = max(*mx, sturdy_maxt_lp(t2, df)), evaluating the t tail only when the bound says
 * it can exceed *mx: the same maximum as evaluating every value. */
void sturdy_maxt_fold_lp(double t2, double df, double *mx);

/* Count, per comparison, the rearrangements whose largest t*² over its family is at
 * least its observed t² (tie rule of the engine); t2 is C × nb, raw t*² for het
 * members too (taken to −ln p here). */
void sturdy_maxt_count(const sturdy_maxt *x, const double *t2, size_t nb, uint64_t *count);

#endif
