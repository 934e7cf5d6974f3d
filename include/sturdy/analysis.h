/* analysis.h — the whole `check`: options, the result, and the calls that produce it.
 *
 * sturdy_analyze runs every stage for one table: design, fit, classical table, effect
 * sizes, permutation tests, bootstrap intervals, diagnostics and verdicts. With a shard
 * (--shard I/N) it computes only that slice of the rearrangements and replicates; the
 * slices' raw material (exceedance counts, bootstrap replicate values) is combined by
 * sturdy_result_add_slice and turned into p-values and intervals by sturdy_result_finish,
 * so that any split of the work gives the same bits. */
#ifndef STURDY_ANALYSIS_H
#define STURDY_ANALYSIS_H

#include "design.h"

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

/* "none", "wild-bootstrap" or "permutation" (the JSON names); never NULL. */
const char *sturdy_spread_scheme_name(sturdy_spread_scheme s);

/* Progress callback: called from one thread at a time, at most every few milliseconds. */
typedef void (*sturdy_progress_fn)(void *ctx, uint64_t done, uint64_t total);

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
    int threads;                 /* 0 = all available */
    uint64_t shard_index;        /* 1-based; 0 with shard_count 0 = the whole run */
    uint64_t shard_count;
    int resample;                /* 1 (default): compute the slice's rearrangements and
                                    replicates; 0: leave the raw material empty, to be
                                    filled by sturdy_result_add_slice (merging shards) */
    sturdy_progress_fn progress; void *progress_ctx;
} sturdy_options;

#define STURDY_DEFAULT_SEED 20261201u
/* Cells-scheme bootstrap shrinks within-cell variance by (n_c − 1)/n_c; below this many
 * rows per cell the bias is large enough to warn (DESIGN.md, measured coverage 0.74). */
#define STURDY_CELLS_WARN_ROWS 10

void sturdy_options_init(sturdy_options *o);

/* Check ranges and combinations; STURDY_EUSAGE with a message naming the option. */
sturdy_status sturdy_options_validate(const sturdy_options *o, char *err);

/* Effect sizes, in this order everywhere. */
enum {
    STURDY_ES_ETA2 = 0, STURDY_ES_PARTIAL_ETA2, STURDY_ES_OMEGA2, STURDY_ES_PARTIAL_OMEGA2,
    STURDY_ES_COHENS_F, STURDY_NES
};
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

/* A number that may be absent: NaN in the double fields below means "null", and the
 * matching *_note (owned string) says why. */
typedef struct { double lo, hi; } sturdy_pair;

/* The term's test that holds its level when cell variances differ: the Welch–James
 * Wald-type statistic W = zᵀ(U_tᵀ Ω U_t)⁻¹z with a heteroscedasticity-consistent Ω (cell
 * variances for factor-only models, HC3 otherwise), referred to Johansen's (1980)
 * approximate F (factor-only) or to F(df, residual df); its resampling p-values; and the
 * ANOVA-type statistic with Box's approximation (Brunner, Dette & Munk 1997). */
typedef struct {
    double wald;                 /* W, on the χ² scale */
    double stat, df1, df2, p;    /* approximate F = W / c (Johansen) or W / df1 */
    int johansen;                /* 1: Johansen's reference; 0: F(df1, residual df) */
    double ats, ats_df1, ats_df2, ats_p; /* NaN unless factor-only */
    uint64_t exceed_wild;        /* wild replicates with W* ≥ W */
    uint64_t exceed_perm;        /* rearrangements with W* ≥ W (permutation scheme) */
    double p_wild, p_permuted;   /* the two resampling p-values (NaN: not computed) */
    double p_perm;               /* the run's scheme's p (one of the two) */
    sturdy_pair p_perm_ci;       /* 99% Clopper–Pearson of p_perm */
    char *note;                  /* why W (and everything) is absent, else NULL */
    char *perm_note;             /* why p_perm is absent, else NULL */
} sturdy_uv_result;

typedef struct {
    char *label;                 /* "A×B" */
    sturdy_term_kind kind;
    size_t nfactors; char **factors; /* names (owned) */
    /* classical */
    double df, ss, ms, f, p;
    char *note;                  /* why f/p (and effect sizes) are absent, else NULL */
    double es[STURDY_NES];
    sturdy_pair ncf;             /* noncentral-F interval for partial η² */
    /* permutation */
    uint64_t exceed;             /* rearrangements with F* ≥ F (tie rule in permute.c) */
    uint64_t exceed_fwer;        /* rearrangements whose min-p over the family ≤ this p */
    double p_perm, p_perm_fwer, p_perm_holm;
    sturdy_pair p_perm_ci;       /* 99% Clopper–Pearson on exceed */
    char *perm_note;
    /* bootstrap */
    double *boot;                /* nboot × STURDY_NES row-major replicate values, indexed
                                    over the whole run; only the slices computed or added
                                    so far are filled (owned; NULL when the term has none) */
    double accel[STURDY_NES];    /* BCa acceleration from the jackknife (NaN: none) */
    sturdy_pair ci_pct[STURDY_NES], ci_bca[STURDY_NES];
    char *boot_note;
    /* verdict */
    sturdy_verdict verdict;
    char *verdict_reason;        /* one line, or NULL */
    int straddles;               /* the p_perm interval contains alpha */
    sturdy_uv_result uv;         /* unequal-variance test */
} sturdy_term_result;

typedef struct {
    size_t row, line, cell;      /* 1-based data row, file line, cell index */
    double studentized;          /* externally studentized residual (the one tested) */
    double internal;             /* internally studentized residual */
    double leverage;             /* the row's leverage */
} sturdy_outlier;

typedef struct {
    double sw_w, sw_p; char *sw_note;
    double skewness, excess_kurtosis;
    double bf_f, bf_df1, bf_df2, bf_p; char *bf_note;
    double bfm_f, bfm_df1, bfm_df2, bfm_p; char *bfm_note; /* without structural zeros */
    double variance_ratio; char *vr_note;   /* largest / smallest cell variance */
    size_t noutliers; sturdy_outlier *outliers;
    int spread_differs;          /* the rule of unequal.c: cell spreads differ enough
                                    that the unequal-variance test leads the report */
    char *spread_reason;         /* one line saying why (owned), or NULL */
    double *studentized;         /* n externally studentized residuals (owned) */
    double *leverage;            /* n */
} sturdy_diagnostics;

typedef struct {
    char *name;
    size_t nterms; sturdy_term_result *terms;
    double df_error, ss_error, ms_error;
    double df_total, ss_total;
    char *error_note;            /* e.g. no residual degrees of freedom */
    double *cell_mean, *cell_sd; /* per non-empty cell (sd NaN for a single row) */
    sturdy_diagnostics diag;
    double *fitted, *residual;   /* n each (owned), on the response's own scale */
} sturdy_response_result;

typedef struct {
    sturdy_options opts;         /* a copy; its string pointers refer to the design */
    sturdy_design *design;       /* owned */
    int ss_type;
    sturdy_method method;
    sturdy_boot_scheme boot_scheme;  /* resolved (never DEFAULT) */
    sturdy_spread_scheme spread_scheme;
    int uv_hc3;                  /* the unequal-variance test uses HC3 (covariates or a
                                    block), not the cell variances */
    int exact;                   /* rearrangements were enumerated exhaustively */
    uint64_t nperm;              /* rearrangements in the whole run (enumeration: all) */
    uint64_t nboot;              /* bootstrap replicates in the whole run */
    uint64_t perm_begin, perm_end; /* the slice computed by this run */
    uint64_t boot_begin, boot_end;
    uint64_t perm_done, boot_done; /* rearrangements / replicates filled in so far */
    int finished;                /* p-values and intervals computed (not a bare shard) */
    size_t nresp; sturdy_response_result *resp;
    size_t nnotes; char **notes; /* run-wide remarks (warnings) for the report */
    uint64_t data_checksum;      /* FNV-1a of the used columns' text, to match shards */
} sturdy_result;

/* Run the analysis of `t` with options `o`. A model where no term can be tested (e.g. no
 * residual degrees of freedom) is not an error here: the result holds the table with the
 * reasons, and sturdy_result_tested_terms says that nothing was tested (the CLI then
 * exits STURDY_EMODEL). *out owned by the caller. */
sturdy_status sturdy_analyze(const sturdy_table *t, const sturdy_options *o,
                             sturdy_result **out, char *err);

/* The raw material of one slice of an analysis, as a shard's partial result carries it:
 * rearrangements [perm_begin, perm_end) and replicates [boot_begin, boot_end). */
typedef struct {
    uint64_t perm_begin, perm_end, boot_begin, boot_end;
    size_t nresp, nterms;
    const uint64_t *exceed, *exceed_fwer; /* nresp × nterms, row-major */
    const uint64_t *uv_exceed_wild, *uv_exceed_perm; /* the same, for the unequal-variance
                                    test over the rearrangement range (may be NULL: 0) */
    const double *boot;          /* nresp × nterms × (boot_end − boot_begin) × STURDY_NES;
                                    entries of terms without replicates are ignored */
} sturdy_slice;

/* Add a slice's raw material to `r` (built by sturdy_analyze of the same data and
 * settings). STURDY_EUSAGE when its shape or ranges do not fit. The caller makes sure
 * slices do not overlap; sturdy_result_finish checks that they add up. */
sturdy_status sturdy_result_add_slice(sturdy_result *r, const sturdy_slice *s, char *err);

/* Turn the raw material into p-values, intervals and verdicts once every slice is in.
 * STURDY_EUSAGE when rearrangements or replicates are missing. */
sturdy_status sturdy_result_finish(sturdy_result *r, char *err);

/* Number of terms, over every response, that have an F-test (a finite F). A run where
 * this is 0 tested nothing that was asked: the CLI then exits STURDY_EMODEL. */
size_t sturdy_result_tested_terms(const sturdy_result *r);

/* Why nothing could be tested: the first response's residual note, else the first term's
 * note; never NULL (the string belongs to r). */
const char *sturdy_result_untested_reason(const sturdy_result *r);

void sturdy_result_free(sturdy_result *r);

#endif
