/* spec.h — what to analyse: responses, factors, covariates, block, interaction order and
 * the guards of the design. Part of the stable tier (sturdy.h). The pointers are the
 * caller's; the library copies what it keeps. */
#ifndef STURDY_SPEC_H
#define STURDY_SPEC_H

#include <stddef.h>
#include <stdint.h>

#define STURDY_MAX_FACTORS 16
/* Guards against designs that would exhaust memory; overridable in the spec. */
#define STURDY_DEFAULT_MAX_LEVELS 1000
#define STURDY_DEFAULT_MAX_COLUMNS 4000
/* Bytes the coded design and the model's bases may take (2 GiB): a full model of 10
 * two-level factors would need 8.6 GB, of 9 1.07 GB. */
#define STURDY_DEFAULT_MAX_MEMORY ((size_t)2 << 30)
/* Floating-point operations the model build may take by default (its QR factorisations,
 * estimated before it starts): about 8 minutes of one core of 2026 (2·10¹⁰ flop/s in
 * LAPACK's pivoted QR here), enough for a full model of 10 two-level factors under
 * Type III (4.4·10¹² estimated, 224 s measured) and not for 11 (7·10¹³, hours). */
#define STURDY_DEFAULT_MAX_BUILD_OPS 1e13

/* The order of one factor's levels, as the user gives it (--levels FACTOR=a,b,c). */
typedef struct {
    const char *factor;          /* a factor of the spec, or its block */
    const char *const *levels;   /* every level present in the rows used, each once */
    size_t nlevels;
} sturdy_level_order;

typedef struct {
    const char *const *responses; size_t nresponses;   /* at least one */
    const char *const *factors; size_t nfactors;       /* at least one, at most 16 */
    const char *const *covariates; size_t ncovariates; /* numeric nuisance terms */
    const char *block;          /* additive block factor, or NULL */
    int order;                  /* highest interaction order; 0 = all */
    const char *const *term_order; size_t nterm_order; /* terms to put first, in this
                                   order (labels: factor names joined by "×" in any
                                   order, or a block or covariate name); the others
                                   follow in the default order, but a block or
                                   covariate not listed stays in front. Type I sums of
                                   squares follow it; for Types II and III it is only
                                   the order of the table. NULL: the default order */
    size_t max_levels;          /* per factor; 0 = STURDY_DEFAULT_MAX_LEVELS */
    size_t max_columns;         /* coded columns in all; 0 = STURDY_DEFAULT_MAX_COLUMNS */
    const sturdy_level_order *level_orders; size_t nlevel_orders; /* NULL/0: natural */
    int merge_numeric_levels;   /* 1: levels equal as numbers ("60", "60.0") are one level,
                                   named by the first in natural order; a note says so */
    int row_groups;             /* 1: every row its own group, even without covariates —
                                   the straightforward n-row path that the tests compare
                                   the cell-sum path against (same results, slower) */
    size_t max_memory;          /* bytes the coded design and the model's bases may take,
                                   estimated from the design's dimensions before they are
                                   built; 0 = STURDY_DEFAULT_MAX_MEMORY */
    double max_build_ops;       /* floating-point operations the model build may take,
                                   estimated likewise; 0 = STURDY_DEFAULT_MAX_BUILD_OPS */
} sturdy_model_spec;

void sturdy_model_spec_init(sturdy_model_spec *s);

/* Number of terms the spec asks for: every factor subset up to the order, plus the
 * covariates and the block — what the design builds when every column is valid. */
uint64_t sturdy_model_spec_terms(const sturdy_model_spec *s);

#endif
