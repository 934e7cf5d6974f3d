/* design.h — (advanced tier) the model design: which rows are used, factors and their levels, cells,
 * terms, and the sum-to-zero coded columns.
 *
 * Everything the later stages need is expressed in a "group space": rows are grouped so
 * that every coded column is constant within a group. For factor-only models the groups
 * are the non-empty cells (crossed with block levels when there is a block); with
 * covariates every row is its own group. Fits and projections then work on K group
 * sums instead of n rows (see fit.h). */
#ifndef STURDY_DESIGN_H
#define STURDY_DESIGN_H

#include "common.h"
#include "spec.h"
#include "table.h"


typedef enum {
    STURDY_TERM_BLOCK = 0,      /* the additive block factor */
    STURDY_TERM_COVARIATE = 1,  /* one numeric covariate (one column) */
    STURDY_TERM_FACTORS = 2     /* a main effect or interaction of design factors */
} sturdy_term_kind;

typedef struct {
    sturdy_term_kind kind;
    char *label;            /* "A", "A×B" (U+00D7), covariate or block name */
    uint32_t mask;          /* FACTORS: bit f set for each factor f in the term */
    size_t order;           /* number of factors (1 for block and covariates) */
    size_t col0, ncols;     /* coded columns [col0, col0+ncols) of X */
    size_t index;           /* COVARIATE: its index among the covariates */
} sturdy_term;

typedef struct {
    char *name;
    size_t nlevels;
    char **levels;          /* in natural order (sturdy_level_compare) or the spec's */
} sturdy_factor;

typedef struct {
    size_t row;             /* 0-based data row of the table */
    size_t line;            /* file line */
    char *reason;           /* e.g. "missing value in column 'yield'" */
} sturdy_dropped;

typedef struct {
    char *source;           /* the table's source name */
    size_t rows_read;       /* data rows in the table */
    size_t n;               /* rows used */
    size_t *row;            /* n: 0-based table row of each used row */
    size_t *line;           /* n: file line of each used row */
    size_t ndropped; sturdy_dropped *dropped;
    size_t nwarnings; char **warnings; /* about the levels: near-duplicates ("60" and
                                          "60.0", "epoxy" and "Epoxy"), merged levels */

    size_t nfactors; sturdy_factor *factors;
    size_t *level;          /* n × nfactors, row-major: level of factor f in used row i */
    int has_block; sturdy_factor block; size_t *block_level;  /* n, when has_block */
    size_t ncov; char **cov_names;
    double *cov;            /* n × ncov column-major, each column minus its mean */

    size_t nresp; char **resp_names;
    double *y;              /* n × nresp column-major, each minus a reference (exact) */
    double *y_ref;          /* nresp references that were subtracted */

    /* Cells: combinations of factor levels that occur, in lexicographic level order. */
    size_t ncells;          /* non-empty cells */
    size_t ncells_possible; /* product of level counts */
    size_t *cell;           /* n: cell of each used row */
    size_t *cell_count;     /* ncells */
    size_t *cell_levels;    /* ncells × nfactors, row-major */
    int balanced;           /* all possible cells present with equal counts */
    size_t min_cell, max_cell;

    /* Groups: rows within which every coded column is constant (see file comment). */
    size_t ngroups;
    size_t *group;          /* n: group of each used row */
    size_t *group_count;    /* ngroups */

    size_t nterms; sturdy_term *terms;  /* block first, then covariates, then factor
                                           terms by order, then by factor index */
    size_t p;               /* coded columns including the intercept (column 0) */
    double *Xg;             /* ngroups × p column-major: the coded columns per group */
    size_t max_memory;      /* the spec's budget for the design and the model's bases
                               (0: STURDY_DEFAULT_MAX_MEMORY); sturdy_model_build
                               refuses a model whose estimate exceeds it */
    double max_build_ops;   /* the spec's budget of floating-point operations for the
                               model build (0: STURDY_DEFAULT_MAX_BUILD_OPS), likewise */
} sturdy_design;

/* Build the design. Rows with a missing value in any used column are dropped and listed
 * with a reason. Errors: unknown or repeated column (STURDY_EUSAGE; the message lists
 * the file's columns and suggests the closest name, or the delimiter when the header is
 * one field holding tabs or semicolons), a level order naming an unknown factor or not
 * listing exactly the levels present (STURDY_EUSAGE), non-numeric
 * response or covariate (STURDY_EDATA, naming file, row, line and column), fewer than
 * two levels in a factor or the block, no rows left, a factor or design beyond the
 * guards (STURDY_EMODEL, naming the limit and the option that changes it).
 * *out is owned by the caller (sturdy_design_free). */
sturdy_status sturdy_design_build(const sturdy_table *t, const sturdy_model_spec *s,
                                  sturdy_design **out, char *err);

void sturdy_design_free(sturdy_design *d);

/* Natural comparison of level strings: both numbers → numeric order; a number sorts
 * before text; text compares with each run of digits taken as a whole number ("N40" <
 * "N120"), the rest bytewise; texts equal that way (or equal numbers: "1", "1.0") are
 * ordered bytewise, so that distinct strings never compare equal. */
int sturdy_level_compare(const char *a, const char *b);

#endif
