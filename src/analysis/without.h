/* without.h — the sensitivity stage: the single-row search of every term and the
 * resampling test without a term's deciding rows (private to the analysis stage and the
 * writers). */
#ifndef STURDY_WITHOUT_H
#define STURDY_WITHOUT_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/table.h"

/* The single-row sensitivity search (checks/influence.c) of every (response, term), on
 * the run's threads; the first failure in (response, term) order is the one reported. */
sturdy_status sturdy_sensitivity_all(const sturdy_design *d, const sturdy_model *m,
                                     const sturdy_run *run, sturdy_result *r, char *err);

/* For every term whose sensitivity found a set of rows: counts, over the run's slice of
 * rearrangements, those of the data without the set whose F* ≥ the refitted F, into
 * sens.exceed_without, and sets sens.perm_state. Terms with the same set share a pass.
 * Needs r->design, the classical table and the sensitivity. */
sturdy_status sturdy_without_run(const sturdy_table *t, const sturdy_run *run,
                                 sturdy_result *r, char *err);

/* p_perm_without of every term from its count, once every slice is in. */
void sturdy_without_finish(sturdy_result *r);

/* One line on how p_perm_without was computed or why it is absent (static), or NULL when
 * there is no set. */
const char *sturdy_without_note(int state);

#endif
