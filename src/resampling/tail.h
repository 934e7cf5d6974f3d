/* tail.h — p-values below 1/B from a generalised Pareto tail fitted to the largest F*
 * (Knijnenburg, Wessels, Reinders & Shmulevich 2009, Bioinformatics 25:i161), opt-in by
 * --tail-fit (sturdy_options.tail_fit). See tail.c for the procedure and its choices. */
#ifndef STURDY_TAIL_H
#define STURDY_TAIL_H

#include <stddef.h>
#include <stdint.h>

#include "core/result.h"

/* Knijnenburg et al.'s schedule: N_exc starts at 250 and drops by 10 until the
 * goodness-of-fit test accepts; below STURDY_TAIL_NEXC_MIN the fit is not tried. */
#define STURDY_TAIL_NEXC_START 250
#define STURDY_TAIL_NEXC_STEP 10
#define STURDY_TAIL_NEXC_MIN 30
/* The tail is fitted only where it matters: fewer than this many exceedances. */
#define STURDY_TAIL_MAX_EXCEED 10
/* Goodness of fit: Anderson–Darling at this level, p by parametric bootstrap. */
#define STURDY_TAIL_GOF_ALPHA 0.05
#define STURDY_TAIL_GOF_REPS 199

/* Add x to a min-heap of at most STURDY_TAIL_KEEP values (heap[0] the smallest kept). */
void sturdy_tail_push(double *heap, size_t *n, double x);

/* top[0..*ntop) descending; add[0..nadd) in any order (nadd ≤ STURDY_TAIL_KEEP): top
 * becomes the largest STURDY_TAIL_KEEP of both, descending. The result depends only on
 * the two multisets, so any split over threads, shards or ranks gives the same bits. */
void sturdy_tail_merge(double *top, size_t *ntop, const double *add, size_t nadd);

/* Maximum-likelihood fit of a GPD with location 0 to z[0..n) (all ≥ 0, n ≥ 2): shape
 * *xi, scale *sigma, log-likelihood *loglik. 0 on success; 1 when the likelihood has no
 * interior maximum with ξ ≥ −1 (then the outputs are NaN). */
int sturdy_gpd_fit(const double *z, size_t n, double *xi, double *sigma, double *loglik);

/* GPD(ξ, σ) upper tail P(Z > z), z ≥ 0. */
double sturdy_gpd_sf(double z, double xi, double sigma);

/* Anderson–Darling A² of z[0..n) (ascending) against GPD(ξ, σ). */
double sturdy_gpd_ad(const double *z, size_t n, double xi, double sigma);

/* The bootstrap p of A² for n values under the fitted GPD(ξ, σ): the share of
 * STURDY_TAIL_GOF_REPS samples of GPD(ξ, σ), each refitted, whose A² is at least a2,
 * as (1 + count)/(1 + reps). Fixed generators: it depends on its arguments only.
 * work: 2·n doubles. */
double sturdy_gpd_ad_pvalue(size_t n, double xi, double sigma, double a2, double *work);

/* The whole procedure for one term: top[0..ntop) its largest F* (descending), f_obs the
 * observed F, B the rearrangements, exceed its count of F* ≥ F, exact whether they were
 * enumerated. Sets *p (NaN unless fitted) and *fit. */
void sturdy_tail_estimate(const double *top, size_t ntop, double f_obs, uint64_t B,
                          uint64_t exceed, int exact, double *p, sturdy_tail_fit *fit);

/* JSON/report names and one-line reasons of sturdy_tail_status. */
const char *sturdy_tail_status_name(int status);
const char *sturdy_tail_status_reason(int status);

#endif
