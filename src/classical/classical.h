/* classical.h — the classical stage's interface: the F-test table with effect sizes and the
 * noncentral-F interval, and the unequal-variance tests' classical references. */
#ifndef STURDY_CLASSICAL_H
#define STURDY_CLASSICAL_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/fit.h"

/* Classical table of response r: SS, df, F, p, effect sizes and the noncentral-F
 * interval per term; error and total; fitted values and residuals; cell means/SDs.
 * `threads` (> 0) bounds the threads of the per-term interval searches. */
sturdy_status sturdy_anova_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                    double conf, int threads, sturdy_response_result *out,
                                    char *err);

/* Effect sizes from a term's SS and df and the error and total SS and df. Entries that
 * cannot be computed are NaN. */
void sturdy_effect_sizes(double ss, double df, double sse, double dfe, double sst, double n,
                         double es[STURDY_NES]);

/* Unequal-variance tests (unequal.c). 1 when the test uses HC3 (covariates, a block, or
 * rows as groups), 0 when it uses the cell variances (factor-only). */
int sturdy_uv_uses_hc3(const sturdy_design *d);

/* Classical part for every term of response r (needs the term's F and the model):
 * W, Johansen's approximate F or F(df, residual df), the ANOVA-type statistic. */
sturdy_status sturdy_uv_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                 sturdy_response_result *out, char *err);

/* p-values of the unequal-variance test's resampling counts in a finished run. */
sturdy_status sturdy_uv_finish(const sturdy_result *r, sturdy_term_result *t, char *err);

/* Marginal means and pairwise comparisons (compare.c). */
typedef struct {
    double conf;                 /* level of every interval */
    int spread_differs;          /* the spread rule fired: Games–Howell where it applies */
    size_t control_factor;       /* compare this factor's levels with control_level only;
                                    (size_t)-1: all pairs */
    size_t control_level;
} sturdy_compare_setup;

/* Fill out->means (every factor term, each level combination), out->comparisons (main
 * effects: pairs of levels; two-factor terms: simple effects) and a zeroed
 * out->compare_shown for response r. Needs the classical table (error MS and df, cell
 * SDs) already in `out`. */
sturdy_status sturdy_compare_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                      const sturdy_compare_setup *cs,
                                      sturdy_response_result *out, char *err);

/* The classical simultaneous intervals and adjusted p-values of the response's
 * comparisons (Tukey–Kramer or Games–Howell, from the studentized range at level conf).
 * Deferred to the finish of a run: the range's integrals are the costly part of the
 * comparisons, and a shard part does not need them. */
/* Simultaneous intervals and range-based adjusted p of every comparison, on `threads`
 * threads; nonzero when out of memory (nothing is then half-filled that a report reads:
 * the run fails). */
struct sturdy_cache;
int sturdy_compare_adjust(sturdy_response_result *rr, double conf, int threads,
                          struct sturdy_cache *cache);
/* The outlier-resistant statistic (huber.c). Huber's tuning constant: 95% efficiency at
 * the normal for a location (Huber 1981, §4.6); the conventional default. */
#define STURDY_HUBER_C STURDY_RS_TUNING

/* Workspace of the Huber fits for n rows, K groups and bases of at most rmax columns,
 * one per thread. */
typedef struct {
    double *W, *P, *mu, *mu_red, *mu_new, *A, *b, *e, *isq;
    signed char *pat;
} sturdy_huber_work;

sturdy_status sturdy_huber_work_alloc(size_t n, size_t K, size_t rmax, sturdy_huber_work *w,
                                      char *err);
void sturdy_huber_work_free(sturdy_huber_work *w);

/* Least-squares fitted group values (mu, K) of values y in groups g on basis U (K × r);
 * inv_sqrt: 1/√n_g. */
void sturdy_huber_ls(const double *y, const uint32_t *g, size_t n, const double *U, size_t K,
                     size_t r, const double *inv_sqrt, sturdy_huber_work *w, double *mu);

/* Huber M-fit with the fixed scale sigma on basis U, starting from mu (K fitted group
 * values, replaced by the fit's). Returns the iterations used, negated when the limit was
 * reached. */
int sturdy_huber_fit(const double *y, const uint32_t *g, size_t n, const double *U, size_t K,
                     size_t r, const double *inv_sqrt, double sigma, sturdy_huber_work *w,
                     double *mu);

typedef struct {
    double stat, drop, lambda, scale;
    int it_full, it_red;
} sturdy_rs_stat;

/* The drop-in-dispersion statistic of a term for values y in groups g, given an
 * explicit K × rred basis Ured of the term's reduced model (sturdy_model_reduced_basis)
 * (w->mu and w->mu_red hold the full and the reduced fit afterwards). 0 when it cannot be
 * computed (zero scale, no row inside the clipping, no residual df): out->stat is then
 * NaN. */
int sturdy_rs_statistic(const double *y, const uint32_t *g, size_t n, const sturdy_model *m,
                        const double *Ured, size_t rred, sturdy_huber_work *w,
                        sturdy_rs_stat *out);

/* The statistic of every testable term of response r on the data (t->rs), or the note
 * saying why it is absent. */
sturdy_status sturdy_rs_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                 sturdy_response_result *out, char *err);

/* The fixed bins of a term's resampled F* (fhist.c): the upper edge of the last finite
 * bin, from the observed F and the degrees of freedom only (never from the replicates),
 * so that every slice of a run counts on the same edges. NaN when f is not finite. */
double sturdy_fhist_top(double f, double df1, double df2);

/* The bin of F* = fstar on those edges: 0 … STURDY_FHIST_BINS − 1 (the last: ≥ top). */
size_t sturdy_fhist_bin(double fstar, double top);

/* The F(df1, df2) density at x (0 outside its support; NaN for bad df). */
double sturdy_f_density(double x, double df1, double df2);

#endif
