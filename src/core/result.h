/* result.h — the layout of a result, shared by the stages that fill it, the writers and
 * the readers (the public header keeps sturdy_result opaque). */
#ifndef STURDY_RESULT_H
#define STURDY_RESULT_H

#include "sturdy/analysis.h"
#include "sturdy/advanced.h"

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

/* One row in the single-row sensitivity of a term (checks/influence.c). */
typedef struct {
    size_t index;                /* 0-based used row (design order) */
    size_t row, line, cell;      /* 1-based data row, file line, cell index */
    double f_without, p_without; /* the term's F and p with this row alone removed */
} sturdy_sens_row;

enum { SENS_TOP = 3 };           /* most influential rows kept per term */
typedef enum { STURDY_SENS_NONE, STURDY_SENS_CREATES, STURDY_SENS_HIDES } sturdy_sens_dir;

/* How single rows move a term's F-test (influence.c): exact leave-one-out, and the
 * fewest rows (greedy, at most 3) whose removal changes the conclusion at alpha. */
typedef struct {
    int searched;                /* 0: the term has no F-test, nothing was searched */
    double alpha;
    sturdy_sens_dir direction;   /* CREATES: the rows make the term significant; HIDES:
                                    they keep it from being; NONE: no set found */
    size_t nrows;                /* rows_to_change (0: none within 3) */
    sturdy_sens_row rows[3];     /* the set, in the order chosen; each with its own
                                    leave-one-out F and p */
    double f_without, p_without; /* the term without the whole set (NaN: none) */
    int decisive;                /* at most 2 rows change the conclusion and move p at
                                    least tenfold: the headline opens with it */
    int empties_cell;            /* the set holds every row of some cell */
    size_t not_removable;        /* rows whose removal alone changes the design (the only
                                    row of a cell or block level): not tried */
    size_t ntop;                 /* the rows that move p most, alone */
    sturdy_sens_row top[SENS_TOP];
    /* the resampling test of the data without the set (analysis/without.c) */
    int perm_state;              /* sturdy_sens_perm: whether it ran, or why not */
    double f_refit;              /* the term's F refitted on the data without the set */
    uint64_t exceed_without;     /* the run's rearrangements of those data with F* ≥ F */
    double p_perm_without;       /* (1 + exceed_without) / (1 + B); NaN: not tested */
} sturdy_sensitivity;

/* Whether the resampling test without a term's deciding rows ran (without.c). */
typedef enum {
    STURDY_SENS_PERM_NONE = 0,   /* no set found (nothing to confirm) */
    STURDY_SENS_PERM_DONE,       /* counted over the run's rearrangements */
    STURDY_SENS_PERM_NO_REARRANGEMENTS, /* the run has none */
    STURDY_SENS_PERM_EXACT,      /* the run enumerated every rearrangement of all rows:
                                    the data without the rows have other ones */
    STURDY_SENS_PERM_NO_TEST     /* without the rows the term has no resampling test
                                    (its design or F changes) */
} sturdy_sens_perm;

/* The outlier-resistant test of a term (classical/huber.c, resampling/resistant_perm.c):
 * Huber (1973) M-estimates of the full and the reduced model with one common fixed scale
 * and the drop-in-dispersion statistic of Schrader & Hettmansperger (1980), resampled by
 * the run's rearrangements. Present only when the options ask for it. */
/* Huber's tuning constant c (classical.h: STURDY_HUBER_C), for the writers. */
#define STURDY_RS_TUNING 1.345

typedef struct {
    double stat;                 /* 2·(Σρ(e_R/σ) − Σρ(e_F/σ)) / λ̂ (NaN: none, see note) */
    double drop;                 /* Σρ(e_R/σ) − Σρ(e_F/σ) */
    double lambda;               /* λ̂ = [Σψ²/(n − p)] / [Σψ'/n] of the full fit */
    double scale;                /* σ: the response's common scale */
    uint64_t exceed;             /* rearrangements with statistic* ≥ statistic */
    double p_perm;               /* (1 + exceed)/(1 + B); NaN: not resampled */
    sturdy_pair p_perm_ci;       /* 99% Clopper–Pearson of p_perm */
    int iter_full, iter_red;     /* iterations of the two fits on the data */
    int disagrees;               /* the headline rule (resistant_perm.c): its conclusion at
                                    alpha differs from both the F-test's and the resampled
                                    F's, its p is at least tenfold away from both, and the
                                    outlier test flags some row */
    char *note;                  /* why stat or p_perm is absent, else NULL (owned) */
} sturdy_rs_result;

/* The generalised Pareto tail of a term's F* (tail.c, --tail-fit): how the fit went. */
typedef enum {
    STURDY_TAIL_OFF = 0,         /* not asked for, or no permutation p */
    STURDY_TAIL_FITTED,          /* p_tail computed */
    STURDY_TAIL_NOT_NEEDED,      /* STURDY_TAIL_MAX_EXCEED or more exceedances */
    STURDY_TAIL_EXACT,           /* rearrangements enumerated: p_perm is exact */
    STURDY_TAIL_FEW,             /* fewer than STURDY_TAIL_NEXC_MIN + 1 F* values */
    STURDY_TAIL_INFINITE,        /* an infinite F* among the largest */
    STURDY_TAIL_GOF_REJECTED,    /* the Anderson–Darling test rejected at every N_exc */
    STURDY_TAIL_SHAPE_INVALID,   /* no regular ML estimate (ξ ≤ −1/2 or none) */
    STURDY_TAIL_BEYOND_SUPPORT   /* F beyond the fitted tail's upper end (ξ < 0) */
} sturdy_tail_status;

typedef struct {
    int status;                  /* sturdy_tail_status */
    size_t n_exc;                /* exceedances fitted (the accepted fit, or the last tried) */
    size_t n_tried;              /* N_exc values tried */
    double threshold;            /* t: midway between the N_exc-th and (N_exc+1)-th F* */
    double xi, sigma;            /* ML shape and scale (NaN: none) */
    double ad, ad_p;             /* Anderson–Darling A² and its bootstrap p (NaN: none) */
} sturdy_tail_fit;

/* --stop-early: how a term's permutation test stopped (sturdy_term_result.stopped_early;
 * resampling/sequential.c). */
enum {
    STURDY_SEQ_RUNNING = 0,      /* ran to the end of the run */
    STURDY_SEQ_EXCEEDANCES = 1,  /* h exceedances by the L-th rearrangement: p = h/L */
    STURDY_SEQ_DECIDED = 2       /* at checkpoint L, p ≤ α settled: p = (1 + e)/(1 + L) */
};
/* "exceedances", "decision" or "none" (core/names.c), and back (unknown: running). */
const char *sturdy_stop_rule_name(int rule);
int sturdy_stop_rule_parse(const char *name);

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
    uint64_t perm_used;          /* --stop-early: the rearrangements behind p_perm (L when
                                    stopped, else the run's); 0 without it */
    int stopped_early;           /* --stop-early: how the term stopped (STURDY_SEQ_*) */
    uint64_t f_hist[STURDY_FHIST_BINS]; /* F* of the rearrangements on the fixed bins of
                                    sturdy_fhist_top (classical/fhist.c) */
    /* --tail-fit (tail.c): the largest F* of the rearrangements so far, descending, and
       the generalised Pareto tail p fitted to them (NaN: none, see tail.status) */
    size_t n_top;
    double f_top[STURDY_TAIL_KEEP];
    double p_tail;
    sturdy_tail_fit tail;
    /* bootstrap */
    double *boot;                /* nboot × STURDY_BOOT_COLS row-major replicate rows
                                    (analysis.h: the effect sizes, vᵀu*, ‖u*‖², SSE*, κ*),
                                    indexed over the whole run; only the slices computed
                                    or added so far are filled (owned; NULL when the term has none) */
    double accel[STURDY_NES];    /* BCa acceleration from the jackknife (NaN: none) */
    sturdy_pair ci_pct[STURDY_NES], ci_bca[STURDY_NES]; /* NaN when declined (boot_note) */
    sturdy_pair ci_ti[STURDY_NES]; /* bootstrap test inversion (testinv.c); NaN for η² and
                                    ω², which are not functions of one noncentrality */
    sturdy_pair ci_sti[STURDY_NES]; /* studentized test inversion (testinv.c), likewise */
    char *boot_note;             /* why bootstrap intervals are absent or declined */
    char *ci_note;               /* intervals clamped to the parameter's range, or that
                                    exclude their own estimate (intervals.c), else NULL */
    /* the recommended interval of each effect size (intervals.c) */
    int ci_rec_method[STURDY_NES]; /* sturdy_ci_method; STURDY_CI_NONE: none */
    sturdy_pair ci_rec[STURDY_NES];
    char *ci_rec_reason[STURDY_NES]; /* one line (owned) */
    /* verdict */
    sturdy_verdict verdict;
    char *verdict_reason;        /* one line, or NULL */
    int straddles;               /* the p_perm interval contains alpha */
    sturdy_uv_result uv;         /* unequal-variance test */
    sturdy_sensitivity sens;     /* single-row sensitivity (influence.c) */
    sturdy_rs_result rs;         /* outlier-resistant test (only with opts.resistant) */
} sturdy_term_result;

typedef struct {
    size_t row, line, cell;      /* 1-based data row, file line, cell index */
    double studentized;          /* externally studentized residual (the one tested) */
    double internal;             /* internally studentized residual */
    double leverage;             /* the row's leverage */
    double p_bonferroni;         /* min(1, n · two-sided t tail of `studentized` on
                                    n − p − 1 df): the outlier test (Cook & Weisberg 1982) */
} sturdy_outlier;

typedef struct {
    double sw_w, sw_p; char *sw_note;
    double skewness, excess_kurtosis;
    double bf_f, bf_df1, bf_df2, bf_p; char *bf_note;
    double bfm_f, bfm_df1, bfm_df2, bfm_p; char *bfm_note; /* without structural zeros */
    double variance_ratio; char *vr_note;   /* largest / smallest cell variance */
    size_t noutliers; sturdy_outlier *outliers; /* rows the Bonferroni outlier test flags
                                    (residuals.c: OUTLIER_LEVEL) */
    double sw_w_rest, sw_p_rest; /* Shapiro–Wilk of the residuals without the flagged rows
                                    (checks/bulk.c; NaN: none flagged, or more than 10) */
    size_t nlarge; sturdy_outlier *large; /* the other rows with |studentized| > 3: large
                                    residuals, not evidence of an error (NULL if none) */
    int spread_differs;          /* the rule of unequal.c: cell spreads differ enough
                                    that the unequal-variance test leads the report */
    char *spread_reason;         /* one line saying why (owned), or NULL */
    double *studentized;         /* n externally studentized residuals (owned) */
    double *leverage;            /* n */
} sturdy_diagnostics;

/* A least-squares marginal mean of a factor term at one combination of its levels
 * (compare.c): equal weights over the other factors' levels and the block's, covariates
 * at their means; in the response's units. */
typedef struct {
    size_t term;                 /* index among the response's terms */
    size_t level[STURDY_MAX_FACTORS]; /* level of each factor in the term's mask */
    uint32_t mask;               /* the term's factors */
    double estimate, se, df;     /* NaN when not estimable (note) */
    sturdy_pair ci;              /* classical t interval at the run's level */
    sturdy_pair ci_boot;         /* bootstrap percentile interval (NaN: none) */
    char *note;                  /* why it is absent, else NULL */
    double *w;                   /* rank: weights on the model's basis (owned; NULL when
                                    not estimable) */
} sturdy_mean_result;

/* How the classical simultaneous interval of a comparison is found. */
typedef enum {
    STURDY_ADJ_TUKEY_KRAMER = 0, /* pooled residual variance (Tukey 1953; Kramer 1956) */
    STURDY_ADJ_GAMES_HOWELL = 1, /* cell variances, Welch df (Games & Howell 1976) */
    STURDY_ADJ_DUNNETT = 2       /* many-to-one with a control, exact multivariate t of
                                    product correlation (Dunnett 1955) */
} sturdy_adjust_method;

/* One difference of two marginal means: mean(level) − mean(versus) of `factor`, within
 * level by_level of by_factor for a simple effect of a two-factor term. The family is the
 * set of comparisons of one term. */
typedef struct {
    size_t term;                 /* the family's term */
    size_t family;               /* index of the family among the response's families */
    size_t factor, level, versus;
    int within;                  /* 1: a simple effect (by_factor, by_level) */
    size_t by_factor, by_level;
    sturdy_adjust_method method;
    double range_k;              /* means in the studentized range of its adjustment */
    double lambda;               /* Dunnett: ρ_ij = λ_iλ_j within the family */
    double estimate, se, df, t, p; /* unadjusted t test */
    double g;                    /* Hedges' g: estimate / pooled residual SD × J(df) */
    sturdy_pair ci, ci_simultaneous;
    double p_adjusted;
    double p_perm_adjusted;      /* single-step max-T (NaN: not computed, perm_note) */
    sturdy_pair ci_boot_simultaneous; /* max-|t| bootstrap (NaN: not computed) */
    double p_boot_adjusted;      /* single-step max-T from the band's replicate maxima
                                    (bootcmp.c; NaN: not computed) */
    char *note;                  /* why the numbers are absent, else NULL */
    char *perm_note;             /* why the resampling family is absent */
    /* max-T raw material (permute.c) */
    double *w;                   /* rank: the contrast's weights on the model's basis
                                    (estimate = wᵀQᵀy); owned; NULL when not estimable
                                    or read back */
    double t_pooled;             /* estimate / se_pooled: the statistic max-T
                                    rearranges (NaN: none) */
    double se_pooled;            /* √MS_error ‖w‖ */
    double w_norm;               /* ‖w‖ (compare.c, beside se_pooled), for the bootstrap's
                                    replicates (bootcmp.c) */
    uint64_t exceed_maxt;        /* rearrangements whose largest |t*| over the family is
                                    at least |t_pooled| */
} sturdy_comparison;

typedef struct {
    char *name;
    size_t nterms; sturdy_term_result *terms;
    size_t nmeans; sturdy_mean_result *means;    /* every factor term, in term order */
    size_t ncomparisons; sturdy_comparison *comparisons; /* main effects and two-factor
                                    interactions, in term order */
    unsigned char *compare_shown; /* nterms: 1 when the term's comparisons are reported
                                    (the compare selection, decided at finish) */
    size_t nfamilies;            /* terms with comparisons */
    double *cmp_boot;            /* nboot × (nfamilies + nmeans) row-major, indexed over
                                    the whole run (bootcmp.c): per replicate the largest
                                    |t*| of each family, then each mean's replicate value
                                    (owned; NULL: no bootstrap) */
    char *cmp_boot_note;         /* why the bootstrap intervals are absent */
    /* bootcmp.c's replicate sweeps: the comparisons' then the means' w, transposed
       (rank × cmp_np, cmp_np = ncomparisons + nmeans rounded up to 4, zero columns where
       there is no w), their starting values (cmp_np: 0, or the mean's estimate), and for
       own-SE (Games–Howell) families z_k² of each comparison, z = U·w, transposed
       (K × cmp_np; NULL: no such family) */
    double *cmp_wt, *cmp_init, *cmp_z2t;
    size_t cmp_np;
    /* read back (read.c): the means and comparisons as the file gives them, with their
       names (a result read back has no design); strings in the result's `owned` */
    size_t rb_nmeans; sturdy_mean_info *rb_means;
    size_t rb_ncomparisons; sturdy_comparison_info *rb_comparisons;
    double df_error, ss_error, ms_error;
    double df_total, ss_total;
    char *error_note;            /* e.g. no residual degrees of freedom */
    double *cell_mean, *cell_sd; /* per non-empty cell (sd NaN for a single row) */
    sturdy_diagnostics diag;
    double *fitted, *residual;   /* n each (owned), on the response's own scale */
    double boot_world_var;       /* error variance of the bootstrap world (bootstrap.c;
                                    NaN: no bootstrap); maps the test inversion's scale
                                    to the noncentrality */
    double kurt_obs;             /* excess kurtosis of the errors estimated from the
                                    residuals (bootstrap.c; NaN: no bootstrap) */
    double kurt_c1, kurt_c2;     /* the design's constants of that estimate:
                                    Σ_ij M_ij⁴ and Σ_i M_ii², M = I − H */
} sturdy_response_result;

struct sturdy_result {
    sturdy_options opts;         /* the settings, as run: boot_scheme resolved (never
                                    DEFAULT); its string pointers refer to the design
                                    (or, read back, to `owned`) */
    sturdy_design *design;       /* owned; NULL for a result read back */
    int uv_hc3;                  /* the unequal-variance test uses HC3 (covariates or a
                                    block), not the cell variances */
    int exact;                   /* rearrangements were enumerated exhaustively */
    uint64_t nperm;              /* rearrangements in the whole run (enumeration: all) */
    uint64_t nboot;              /* bootstrap replicates in the whole run */
    uint64_t perm_begin, perm_end; /* the slice computed by this run */
    uint64_t boot_begin, boot_end;
    uint64_t perm_done, boot_done; /* rearrangements / replicates filled in so far */
    uint64_t nperm_asked;        /* --stop-early: the B asked for (nperm: those made) */
    uint64_t perm_stop;          /* --stop-early: where the permutation stage stopped */
    int finished;                /* p-values and intervals computed (not a bare shard) */
    int threads;                 /* threads for the work of sturdy_result_finish (the
                                    analysis's count; 0, as read back or merged: one) */
    struct sturdy_cache *cache;  /* tables kept between runs, during sturdy_analyze only
                                    (not owned; NULL otherwise) */
    size_t nresp; sturdy_response_result *resp;
    size_t nnotes; char **notes; /* run-wide remarks (warnings) for the report */
    uint64_t data_checksum;      /* FNV-1a of the used columns' text, to match shards */
    /* read back (sturdy_result_read_json): what the file says in place of a design */
    int read_back;               /* 1: the writers decline it */
    char *input;                 /* the table's source name */
    size_t rows_read, rows_used;
    char **owned; size_t nowned; /* strings the options point to */
};

/* Count arrays of a part, in the order of sturdy_slice: exceed, exceed_fwer,
 * uv_exceed_wild, uv_exceed_perm, exceed_without, exceed_resistant. */
#define STURDY_PART_COUNTS 6

/* A copy of a slice's raw material (sturdy_result_part, sturdy_part_read_json). */
struct sturdy_part {
    sturdy_slice s;              /* points into the arrays below */
    uint64_t *counts;            /* STURDY_PART_COUNTS × nresp × nterms */
    uint64_t *f_hist;            /* nresp × nterms × STURDY_FHIST_BINS */
    double *f_top;               /* nresp × nterms × STURDY_TAIL_KEEP (NULL: none) */
    size_t *n_top;               /* nresp × nterms */
    uint64_t *cmp_counts;        /* s.ncomparisons max-T counts (NULL: none) */
    double *cmp_boot;            /* the comparisons' replicate values (NULL: none) */
    double *boot;
    /* read from a file: its envelope */
    uint64_t index, count, data_checksum;
    char **args; size_t nargs;   /* the command that wrote it */
    char *cwd;
    void *doc;                   /* the parsed file (jsonread.h), for comparing parts */
};

/* A zeroed part for nresp × nterms counts and nb replicates per term (boot NaN). */
sturdy_status sturdy_part_alloc(size_t nresp, size_t nterms, uint64_t nb, sturdy_part **out,
                                char *err);

/* Give a part room for the largest F* of each term (--tail-fit; zero of each). */
sturdy_status sturdy_part_alloc_top(sturdy_part *p, char *err);

/* FNV-1a (64 bits) of the part's envelope numbers and raw material: counts, replicate
 * values (non-finite ones as one NaN, −0 as 0) and the comparisons' counts and values.
 * A part's file records it ("raw_digest" in its shard section) and the reader recomputes
 * it, so a hand edit that keeps every number in range is still refused. */
uint64_t sturdy_part_digest(const sturdy_part *p);

#endif
