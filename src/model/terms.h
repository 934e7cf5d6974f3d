/* terms.h — building the terms and coded columns of a design (design.c's helpers). */
#ifndef STURDY_TERMS_H
#define STURDY_TERMS_H

#include "sturdy/design.h"

/* Fill d->terms, d->nterms and d->p: the block, covariates, then factor terms by order
 * (main effects in factor order, then interactions in lexicographic order of their
 * factor lists) up to `order` (0 = all). STURDY_EMODEL past `max_columns`. */
sturdy_status sturdy_terms_make(sturdy_design *d, int order, size_t max_columns, char *err);

/* Put the terms named by `names` first, in that order, the others after them in their
 * order (sturdy_model_spec.term_order); a block or covariate not named stays in front. STURDY_EUSAGE for a name that is no term of the
 * model, a repeated one, or an order that puts a term before one it contains. */
sturdy_status sturdy_terms_reorder(sturdy_design *d, const char *const *names, size_t count,
                                   char *err);

/* Fill d->Xg (ngroups × p): intercept, then each term's sum-to-zero coded columns (the
 * last level coded −1; interactions as products, first factor fastest), evaluated at the
 * representative row rep[g] of each group. */
void sturdy_terms_fill_columns(sturdy_design *d, const size_t *rep);

#endif
