/* levels.h — the levels of one factor (design.c's helper): natural order, a user's
 * order, merging levels equal as numbers, and warnings about near-duplicate levels. */
#ifndef STURDY_LEVELS_H
#define STURDY_LEVELS_H

#include "sturdy/design.h"

/* Levels of text column `col` over the design's used rows d->row[0..d->n), in natural
 * order or in the order the spec gives for this column, and each row's level index into
 * lev[i * stride]. `role` ("factor" or "block") is used in messages. Appends warnings
 * (near-duplicate levels, merged levels) to d->warnings. Errors: fewer than two levels
 * or more than max_levels (STURDY_EMODEL), a level order that does not list exactly the
 * levels present (STURDY_EUSAGE, naming them). On error f may hold partial contents that
 * the design's free releases. */
sturdy_status sturdy_levels_make(const sturdy_table *t, long col, sturdy_design *d,
                                 const sturdy_model_spec *s, size_t max_levels,
                                 const char *role, sturdy_factor *f, size_t *lev,
                                 size_t stride, char *err);

/* The spec's level orders name factors of the model (or its block), each once. */
sturdy_status sturdy_levels_check_orders(const sturdy_model_spec *s, char *err);

#endif
