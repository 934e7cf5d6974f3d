/* stages.h — the analysis stage's private pieces shared between its files. */
#ifndef STURDY_STAGES_H
#define STURDY_STAGES_H

#include "core/result.h"
#include "sturdy/fit.h"

/* Marginal means and comparisons of every response (compare_stage.c), after the
 * diagnostics (whose spread rule picks Games–Howell). STURDY_EUSAGE for a control or a
 * compared term that the design does not have. */
sturdy_status sturdy_compare_stage(const sturdy_design *d, const sturdy_model *m,
                                   const sturdy_options *o, sturdy_result *r, char *err);

/* The comparisons' classical adjustment, their max-T p from the counts, and the terms
 * whose comparisons are reported (needs the finished p-values). */
sturdy_status sturdy_compare_select(sturdy_result *r, char *err);

#endif
