/* analysis.h — the whole `check`: options, the run context, the result, and the calls
 * that produce and read it. Part of the stable tier (sturdy.h).
 *
 * sturdy_analyze runs every stage for one table: design, fit, classical table, effect
 * sizes, permutation tests, bootstrap intervals, diagnostics and verdicts. With a shard
 * (--shard I/N) it computes only that slice of the rearrangements and replicates; the
 * slices' raw material (exceedance counts, bootstrap replicate values) is combined by
 * sturdy_result_add_slice and turned into p-values and intervals by sturdy_result_finish,
 * so that any split of the work gives the same bits. */
#ifndef STURDY_ANALYSIS_H
#define STURDY_ANALYSIS_H

#include "common.h"
#include "spec.h"
#include "table.h"

typedef enum {
    STURDY_METHOD_FREEDMAN_LANE = 0, /* Freedman & Lane 1983 */
    STURDY_METHOD_TER_BRAAK = 1,     /* ter Braak 1992 */
    STURDY_METHOD_RAW = 2            /* rearrange the response itself (Manly 1997) */
} sturdy_method;

typedef enum {
    STURDY_BOOT_DEFAULT = -1,        /* residual, or wild with --flip */
    STURDY_BOOT_RESIDUAL = 0,
    STURDY_BOOT_WILD = 1,
    STURDY_BOOT_CELLS = 2
} sturdy_boot_scheme;

/* Resampling of the unequal-variance statistic (its p_perm). The default is none: its
 * approximate-F p is the best calibrated (README table), and resampling it costs several
 * times the permutation test of F. */
typedef enum {
    STURDY_SPREAD_NONE = 0,
    STURDY_SPREAD_WILD = 1,          /* wild bootstrap, Rademacher weights (Davidson &
                                        Flachaire 2008) */
    STURDY_SPREAD_PERMUTATION = 2    /* permutation of the studentised statistic (Janssen
                                        1997; Pauly, Brunner & Konietschke 2015); the
                                        wild bootstrap is computed beside it */
} sturdy_spread_scheme;

/* Which comparisons of marginal means are reported. */
typedef enum {
    STURDY_COMPARE_SIGNIFICANT = 0, /* terms significant by the F-test or the resampling
                                       test at alpha (default) */
    STURDY_COMPARE_ALL = 1,
    STURDY_COMPARE_NONE = 2,         /* none, and none computed (JSON: empty lists) */
    STURDY_COMPARE_LIST = 3          /* the terms named in compare_terms */
} sturdy_compare_mode;

/* Progress callback: called from one thread at a time, at most every few milliseconds. */
typedef void (*sturdy_progress_fn)(void *arg, uint64_t done, uint64_t total);

/* Tables that runs sharing it keep instead of building them each time: the studentized
 * range's tail for each number of means k (the comparisons' intervals and adjusted p),
 * which a nightly batch of one design would otherwise build again in every analysis.
 * Its tables hold the very values a run builds for itself, so the results are the same
 * bits with or without it. One run at a time may use it. */
typedef struct sturdy_cache sturdy_cache;
sturdy_cache *sturdy_cache_new(void);   /* NULL: out of memory */
void sturdy_cache_free(sturdy_cache *c);

/* How a run may use the machine, separate from what it computes (the options): the
 * same options give the same bits under any context. Resolved once at the start of a
 * run and passed down to every stage. */
typedef struct {
    int threads;                 /* OpenMP threads; 0 = all the runtime offers */
    sturdy_progress_fn progress; /* NULL: none */
    void *progress_arg;
    const volatile int *cancel;  /* polled between blocks of rearrangements and
                                    replicates; nonzero stops the run with
                                    STURDY_ECANCELLED (NULL: never) */
    sturdy_cache *cache;         /* tables kept between runs (NULL: the run keeps its
                                    own while it lasts) */
} sturdy_context;

/* Defaults: all threads, no progress, no cancellation. */
void sturdy_context_init(sturdy_context *c);

typedef struct {
    sturdy_model_spec model;
    int ss_type;                 /* 1, 2, 3; default 3 */
    uint64_t permutations;       /* B; default 9999; 0 = none */
    uint64_t bootstrap;          /* default 2000; 0 = none */
    sturdy_method method;        /* default Freedman–Lane */
    int flip;                    /* sign-flipping instead of permuting */
    sturdy_boot_scheme boot_scheme;
    sturdy_spread_scheme spread_scheme; /* default none */
    double conf;                 /* default 0.95 */
    double alpha;                /* default 0.05 */
    uint64_t seed;               /* default STURDY_DEFAULT_SEED */
    uint64_t shard_index;        /* 1-based; 0 with shard_count 0 = the whole run */
    uint64_t shard_count;
    /* which terms' pairwise comparisons are reported (compare.c computes them for
       every main effect and two-factor interaction) */
    sturdy_compare_mode compare_mode;
    const char *const *compare_terms; size_t ncompare_terms; /* LIST: labels as in
                                    sturdy_model_spec.term_order */
    const char *control_factor, *control_level; /* compare the factor's levels with this
                                    one only (NULL: all pairs) */
    int resample;                /* 1 (default): compute the slice's rearrangements and
                                    replicates; 0: leave the raw material empty, to be
                                    filled by sturdy_result_add_slice (merging shards) */
    int resistant;               /* 1: also the outlier-resistant test of every term (Huber
                                    M-estimation, drop in dispersion; default 0) */
    int stop_early;              /* 1: sequential stopping of the permutation tests
                                    (Besag & Clifford 1991, h = STURDY_STOP_EARLY_H, and
                                    a decision rule at alpha with risk
                                    STURDY_STOP_EARLY_RISK; whole runs only, not with
                                    shards; default 0) */
    int tail_fit;                /* 1: also p_tail, a generalised Pareto tail fitted to
                                    the largest F* where fewer than 10 reach F (Knijnenburg
                                    et al. 2009; default 0) */
} sturdy_options;

#define STURDY_DEFAULT_SEED 20261201u
/* --stop-early: a term's permutation test stops at its h-th rearrangement at least as
 * extreme as the data, with p = h/L (L: that rearrangement's 1-based index); README. */
#define STURDY_STOP_EARLY_H 20
/* --stop-early: a term whose p is clearly below alpha stops at a checkpoint once the
 * one-sided Clopper–Pearson bound of its p, at level 1 − (this risk)/(checkpoints before
 * B), is below alpha; a term with true p ≥ alpha is stopped that way with probability at
 * most this (resampling/sequential.c; README). */
#define STURDY_STOP_EARLY_RISK 1e-3
/* Cells-scheme bootstrap shrinks within-cell variance by (n_c − 1)/n_c; below this many
 * rows per cell the bias is large enough to warn (DESIGN.md, measured coverage 0.74). */
#define STURDY_CELLS_WARN_ROWS 10

void sturdy_options_init(sturdy_options *o);

/* Check ranges and combinations; STURDY_EUSAGE with a message naming the setting (by
 * its field name in this struct). */
sturdy_status sturdy_options_validate(const sturdy_options *o, char *err);

/* Effect sizes, in this order everywhere. */
enum {
    STURDY_ES_ETA2 = 0, STURDY_ES_PARTIAL_ETA2, STURDY_ES_OMEGA2, STURDY_ES_PARTIAL_OMEGA2,
    STURDY_ES_COHENS_F, STURDY_NES
};
/* A bootstrap replicate's row of raw material (sturdy_slice.boot, a part's "boot" rows):
 * STURDY_BOOT_COLS doubles, the STURDY_NES effect sizes in the order above, then the
 * replicate's pieces of the test-inversion intervals: vᵀu*, ‖u*‖², SSE* and κ*, with
 * v = Qᵀy the observed projection on the term's orthonormal basis Q, u* = Qᵀe* that of
 * the resampled errors, SSE* the replicate's error SS and κ* the excess kurtosis of the
 * replicate's residuals (the studentized test inversion's studentizer). */
#define STURDY_BOOT_COLS (STURDY_NES + 4)

/* The resampling null distribution of a term's F as counts on fixed bins, for figures:
 * STURDY_FHIST_BINS − 1 equal bins on [0, top) and a last one for F* ≥ top, where top
 * depends only on the observed F and the degrees of freedom (sturdy_fhist_top in the
 * library), so every slice counts on the same edges and slices add up exactly. */
#define STURDY_FHIST_BINS 41

/* --tail-fit: F* values each term keeps for its tail fit, the 250 largest and the next
 * one below them (Knijnenburg et al. 2009 start at N_exc = 250 exceedances). */
#define STURDY_TAIL_KEEP 251

/* JSON names of the effect sizes, indexed as above. */
extern const char *const sturdy_es_names[STURDY_NES];

typedef enum {
    STURDY_VERDICT_NONE = 0,         /* not available (no p or no p_perm) */
    STURDY_VERDICT_BOTH,
    STURDY_VERDICT_NEITHER,
    STURDY_VERDICT_CLASSICAL_ONLY,
    STURDY_VERDICT_RESAMPLING_ONLY
} sturdy_verdict;

/* "both", "neither", "classical-only", "resampling-only", or NULL for NONE. */
const char *sturdy_verdict_name(sturdy_verdict v);

/* The result of a run, or of reading one back (sturdy_result_read_json). Opaque: read it
 * through the accessors below; every string and number belongs to the result and lives
 * until sturdy_result_free. An absent number is NaN, and a note says why. */
typedef struct sturdy_result sturdy_result;

/* Run the analysis of `t` with options `o` under context `ctx` (NULL: defaults). A model
 * where no term can be tested (e.g. no residual degrees of freedom) is not an error here:
 * the result holds the table with the reasons, and sturdy_result_tested_terms says that
 * nothing was tested (the CLI then exits STURDY_EMODEL). *out owned by the caller. */
sturdy_status sturdy_analyze(const sturdy_table *t, const sturdy_options *o,
                             const sturdy_context *ctx, sturdy_result **out, char *err);

void sturdy_result_free(sturdy_result *r);   /* accepts NULL */

/* --- reading a result ------------------------------------------------------------ */

/* The settings the run used (for a result read back: those its file records; the model
 * spec then names responses, factors, covariates and block only). Never NULL. */
const sturdy_options *sturdy_result_options(const sturdy_result *r);

typedef struct {
    const char *input;           /* the table's source name (NULL when unknown) */
    size_t rows_read, rows_used;
    uint64_t nperm;              /* rearrangements of the whole run */
    int exact;                   /* they were enumerated exhaustively */
    uint64_t nboot;              /* bootstrap replicates of the whole run */
    uint64_t perm_begin, perm_end, boot_begin, boot_end; /* this run's slice */
    int finished;                /* p-values and intervals are computed */
    uint64_t data_checksum;      /* FNV-1a of the used columns' text (0 when unknown) */
} sturdy_run_info;

void sturdy_result_info(const sturdy_result *r, sturdy_run_info *out);

/* Run-wide notes (warnings), in order; NULL past the end. */
size_t sturdy_result_nnotes(const sturdy_result *r);
const char *sturdy_result_note(const sturdy_result *r, size_t i);

/* Responses and terms. Every response has the same terms, in the table's order. */
size_t sturdy_result_nresponses(const sturdy_result *r);
const char *sturdy_result_response(const sturdy_result *r, size_t resp);  /* its name */
size_t sturdy_result_nterms(const sturdy_result *r);
const char *sturdy_result_term(const sturdy_result *r, size_t term);      /* "A×B" */

/* Numbers of one term of one response. */
typedef enum {
    STURDY_TV_DF = 0, STURDY_TV_SS, STURDY_TV_MS, STURDY_TV_F, STURDY_TV_P,
    STURDY_TV_P_PERM,            /* resampling p of the run's method */
    STURDY_TV_P_PERM_LO, STURDY_TV_P_PERM_HI, /* its 99% Monte Carlo interval */
    STURDY_TV_P_PERM_FWER,       /* family-wise (min-p over the family) */
    STURDY_TV_P_PERM_HOLM,       /* Holm-adjusted */
    STURDY_TV_UV_STAT,           /* unequal-variance test: approximate F */
    STURDY_TV_UV_DF1, STURDY_TV_UV_DF2, STURDY_TV_UV_P,
    STURDY_TV_UV_P_PERM,         /* its resampled p (when asked for) */
    STURDY_TV_ATS_P,             /* ANOVA-type statistic, Box's approximation */
    STURDY_TV_SENS_ROWS,         /* single rows: the fewest rows (≤ 3, greedy) whose removal
                                    changes the F-test's conclusion (NaN: none found) */
    STURDY_TV_SENS_P_WITHOUT,    /* the F-test p without those rows */
    STURDY_TV_SENS_P_PERM_WITHOUT, /* the resampled p without them */
    STURDY_TV_RS_STAT,           /* outlier-resistant statistic (options.resistant) */
    STURDY_TV_RS_P_PERM,         /* its resampled p */
    STURDY_TV_P_TAIL,            /* p from the fitted F* tail (options.tail_fit) */
    STURDY_TV_COUNT
} sturdy_term_value;

/* NaN when absent (see sturdy_term_note) or out of range. */
double sturdy_term_get(const sturdy_result *r, size_t resp, size_t term, sturdy_term_value v);

/* Effect size `es` (STURDY_ES_*) of a term; NaN when absent. */
double sturdy_term_effect(const sturdy_result *r, size_t resp, size_t term, int es);

typedef enum {
    STURDY_CI_NONE = -1,         /* no interval (a recommendation that has none) */
    STURDY_CI_PERCENTILE = 0,    /* bootstrap percentile */
    STURDY_CI_BCA = 1,           /* bootstrap BCa (Efron 1987) */
    STURDY_CI_NONCENTRAL_F = 2,  /* Steiger (2004): an interval for the noncentrality λ,
                                    as partial η² = λ/(λ+N) (N rows used), Cohen's
                                    f = √(λ/N) and partial ω² (the same population
                                    quantity as partial η²); not for η², ω² */
    STURDY_CI_TEST_INVERSION = 3,/* the noncentral-F interval with the bootstrap's
                                    distribution of F in place of the normal theory's
                                    (the same three effect sizes) */
    STURDY_CI_STUDENTIZED = 4    /* studentized test inversion: the test inversion of
                                    ln(SS/MSE) studentized with the residuals' kurtosis,
                                    unequal tails (a 1 − (1 − conf)/10 lower and a
                                    1 − 9(1 − conf)/10 upper bound; the same three) */
} sturdy_ci_method;

/* Percentile and BCa intervals are declined (NaN, with the bootstrap note) below this
 * many residual degrees of freedom: at 4–8 residual df they covered 51–89% at a
 * nominal 95% (the project's coverage study of η²-type effect sizes). */
#define STURDY_BOOT_MIN_DF_ERROR 10
/* The test inversion is recommended from this many residual degrees of freedom (below,
 * the residual pool is a handful of values; untested). */
#define STURDY_TI_MIN_DF_ERROR 4
/* The studentized test inversion is recommended from this many residual degrees of
 * freedom (it estimates the errors' kurtosis from the residuals) and when its lower
 * tail holds at least STURDY_STI_MIN_TAIL replicates (B ≥ 2000 at 95%). */
#define STURDY_STI_MIN_DF_ERROR 10
#define STURDY_STI_MIN_TAIL 10

/* Interval of effect size `es` by `method` at the run's confidence level; 1 and the
 * ends when present, else 0 (and lo = hi = NaN). Percentile and BCa ends are clamped to
 * the effect size's range (η², partial η² in [0, 1]; ω², partial ω² in [0, 1] as
 * population quantities; f ≥ 0), and the interval note says when that happened. */
int sturdy_term_interval(const sturdy_result *r, size_t resp, size_t term, int es,
                         sturdy_ci_method method, double *lo, double *hi);

/* The recommended interval of effect size `es`: *method (STURDY_CI_NONE when there is
 * none) and its ends (NaN when none). Partial η², Cohen's f and partial ω², under the
 * residual bootstrap scheme: the studentized test inversion with at least
 * STURDY_STI_MIN_DF_ERROR residual df and STURDY_STI_MIN_TAIL replicates in its lower
 * tail, else the test inversion with at least STURDY_TI_MIN_DF_ERROR residual df; else
 * (and under the other schemes) the noncentral-F interval; η², ω²: BCa from
 * STURDY_BOOT_MIN_DF_ERROR residual df, else none. Returns the one-line reason (owned
 * by r), NULL when resp, term or es is out of range. */
const char *sturdy_term_recommended(const sturdy_result *r, size_t resp, size_t term, int es,
                                    sturdy_ci_method *method, double *lo, double *hi);

typedef enum {
    STURDY_NOTE_CLASSICAL = 0,   /* why F and p are absent */
    STURDY_NOTE_RESAMPLING,      /* why the resampling p is absent */
    STURDY_NOTE_BOOTSTRAP,       /* why the bootstrap intervals are absent */
    STURDY_NOTE_UNEQUAL,         /* why the unequal-variance test is absent */
    STURDY_NOTE_VERDICT,         /* the verdict's one-line reason */
    STURDY_NOTE_INTERVALS        /* intervals clamped to the parameter's range, or that
                                    exclude their own estimate */
} sturdy_note_kind;

/* NULL when there is nothing to say. */
const char *sturdy_term_note(const sturdy_result *r, size_t resp, size_t term,
                             sturdy_note_kind kind);

sturdy_verdict sturdy_term_verdict(const sturdy_result *r, size_t resp, size_t term);

/* Error and total rows of a response's table, and its main checks. */
typedef enum {
    STURDY_RV_DF_ERROR = 0, STURDY_RV_SS_ERROR, STURDY_RV_MS_ERROR,
    STURDY_RV_DF_TOTAL, STURDY_RV_SS_TOTAL,
    STURDY_RV_NORMALITY_P,       /* Shapiro–Wilk on the studentized residuals */
    STURDY_RV_SPREAD_P,          /* Brown–Forsythe (modified, without structural zeros) */
    STURDY_RV_VARIANCE_RATIO,    /* largest / smallest cell variance */
    STURDY_RV_OUTLIERS,          /* rows flagged as outliers */
    STURDY_RV_COUNT
} sturdy_response_value;

double sturdy_response_get(const sturdy_result *r, size_t resp, sturdy_response_value v);

/* Why the response's table has no error row (e.g. no residual degrees of freedom), or
 * NULL. */
const char *sturdy_response_note(const sturdy_result *r, size_t resp);

/* Number of terms, over every response, that have an F-test (a finite F). A run where
 * this is 0 tested nothing that was asked: the CLI then exits STURDY_EMODEL. */
size_t sturdy_result_tested_terms(const sturdy_result *r);

/* Why nothing could be tested: the first response's residual note, else the first term's
 * note; never NULL (the string belongs to r). */
const char *sturdy_result_untested_reason(const sturdy_result *r);

/* --- marginal means and comparisons ---------------------------------------------- */

/* A least-squares marginal mean of a factor term at one combination of its levels:
 * equal weights over the other factors' and the block's levels, covariates at their
 * means, in the response's units. Strings belong to the result. */
typedef struct {
    const char *term;            /* "A×B" */
    size_t nfactors;             /* the term's factors, in the design's order */
    const char *factors[STURDY_MAX_FACTORS], *levels[STURDY_MAX_FACTORS];
    double estimate, se, df;     /* NaN when not estimable (note) */
    double ci_lo, ci_hi;         /* classical t interval at the run's level */
    const char *note;            /* why the numbers are absent, else NULL */
} sturdy_mean_info;

/* One difference of two marginal means, mean(level) − mean(versus) of `factor`, within
 * by_factor = by_level for a simple effect of a two-factor term. The family of the
 * simultaneous intervals and adjusted p-values is the set of comparisons of one term. */
typedef struct {
    const char *term, *factor, *level, *versus;
    const char *by_factor, *by_level;   /* NULL unless a simple effect */
    const char *adjustment;      /* "tukey-kramer", "games-howell" or "dunnett" */
    double estimate, se, df, t, p;      /* unadjusted t test (Welch df for Games–Howell) */
    double hedges_g;             /* estimate / pooled residual SD × (1 − 3/(4·df_error − 1)) */
    double ci_lo, ci_hi;         /* unadjusted interval */
    double sim_lo, sim_hi, p_adjusted;  /* classical simultaneous interval, adjusted p */
    double p_perm_adjusted;      /* single-step max-T over the family (NaN: none) */
    double boot_sim_lo, boot_sim_hi;    /* max-|t| bootstrap simultaneous interval */
    double p_boot_adjusted;      /* single-step max-T from the same bootstrap replicates:
                                    the band's inverse (NaN: none) */
    int reported;                /* the term is among those the report shows */
    const char *note, *perm_note;
} sturdy_comparison_info;

/* Counts and entries; a result read back (sturdy_result_read_json) gives those its file
 * holds, with the strings owned by the result. An entry call returns 0 and leaves *out
 * untouched when resp or i is out of range. */
size_t sturdy_result_nmeans(const sturdy_result *r, size_t resp);
int sturdy_result_mean(const sturdy_result *r, size_t resp, size_t i, sturdy_mean_info *out);
size_t sturdy_result_ncomparisons(const sturdy_result *r, size_t resp);
int sturdy_result_comparison(const sturdy_result *r, size_t resp, size_t i,
                             sturdy_comparison_info *out);

/* --- splitting a run: parts ------------------------------------------------------ */

/* The raw material of one slice of an analysis, as a shard's partial result carries it:
 * rearrangements [perm_begin, perm_end) and replicates [boot_begin, boot_end). */
typedef struct {
    uint64_t perm_begin, perm_end, boot_begin, boot_end;
    size_t nresp, nterms;
    const uint64_t *exceed, *exceed_fwer; /* nresp × nterms, row-major */
    const uint64_t *uv_exceed_wild, *uv_exceed_perm; /* the same, for the unequal-variance
                                    test over the rearrangement range (may be NULL: 0) */
    const double *boot;          /* nresp × nterms × (boot_end − boot_begin) ×
                                    STURDY_BOOT_COLS;
                                    entries of terms without replicates are ignored */
    size_t ncomparisons;         /* comparisons of all responses, in order (0 with NULL:
                                    none carried) */
    const uint64_t *cmp_exceed;  /* their max-T counts over the rearrangement range */
    size_t cmp_boot_cols;        /* the comparisons' replicate values per response and
                                    replicate (0 with NULL: none carried) */
    const double *cmp_boot;      /* nresp × (boot_end − boot_begin) × cmp_boot_cols */
    const uint64_t *exceed_without; /* nresp × nterms: rearrangements of the data without
                                    the term's deciding rows (its single-row sensitivity)
                                    with F* ≥ F (may be NULL: 0) */
    const uint64_t *exceed_resistant; /* the same, for the outlier-resistant statistic
                                    (may be NULL: 0) */
    const uint64_t *f_hist;      /* nresp × nterms × STURDY_FHIST_BINS: the slice's F* on
                                    the fixed bins (may be NULL: none carried) */
    const double *f_top;         /* --tail-fit: nresp × nterms × STURDY_TAIL_KEEP: each
                                    term's largest F* of the slice,
                                    n_top[k] of them, in any order (+∞ allowed; NULL:
                                    none carried) */
    const size_t *n_top;         /* nresp × nterms (with f_top) */
} sturdy_slice;

/* Add a slice's raw material to `r` (built by sturdy_analyze of the same data and
 * settings, with resample = 0 or another slice). STURDY_EUSAGE when its shape or ranges
 * do not fit, or a count exceeds its range. The caller makes sure slices do not overlap;
 * sturdy_result_finish checks that they add up. */
sturdy_status sturdy_result_add_slice(sturdy_result *r, const sturdy_slice *s, char *err);

/* A copy of the raw material this run computed (its own slice), for sending to another
 * process. *out owned by the caller (sturdy_part_free). */
typedef struct sturdy_part sturdy_part;
sturdy_status sturdy_result_part(const sturdy_result *r, sturdy_part **out, char *err);

/* Read-only view of a part's raw material (valid while the part lives). */
const sturdy_slice *sturdy_part_slice(const sturdy_part *p);

void sturdy_part_free(sturdy_part *p);   /* accepts NULL */

/* Turn the raw material into p-values, intervals and verdicts once every slice is in.
 * STURDY_EUSAGE when rearrangements or replicates are missing. */
sturdy_status sturdy_result_finish(sturdy_result *r, char *err);

#endif
