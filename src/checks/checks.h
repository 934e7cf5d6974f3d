/* checks.h — the checks stage's interface: residual diagnostics and verdicts. */
#ifndef STURDY_CHECKS_H
#define STURDY_CHECKS_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/fit.h"

/* Diagnostics of response r (needs fitted/residual). */
sturdy_status sturdy_diagnose_response(const sturdy_design *d, const sturdy_model *m,
                                       sturdy_response_result *resp, char *err);

/* Shapiro–Wilk of response's residuals refitted without the rows the outlier test flags
 * (bulk.c): diag.sw_w_rest, sw_p_rest; NaN when no row (or more than 10) is flagged or the
 * rows cannot be removed. Needs sturdy_diagnose_response first. */
sturdy_status sturdy_bulk_normality(const sturdy_design *d, const sturdy_model *m,
                                    sturdy_response_result *resp, char *err);

/* Verdict of a finished term at level alpha, with its one-line reason. */
sturdy_status sturdy_verdict_term(const sturdy_response_result *resp, sturdy_term_result *t,
                                  double alpha, char *err);

/* Leave-one-out F and p of term k of response ri for every used row (f, p: d->n each),
 * exact by the deletion formula (influence.c); NaN where removing the row alone changes
 * the design (it is the only row of a cell or block level). STURDY_EMODEL when the term
 * has no F-test (untestable, 0 df, fewer than 2 residual df). */
sturdy_status sturdy_influence_loo(const sturdy_design *d, const sturdy_model *m, size_t ri,
                                   size_t k, double *f, double *p, char *err);

/* Fills t->sens for term k of response ri: the most influential rows and the fewest
 * rows (greedy, at most 3) whose removal changes the F-test's conclusion at alpha.
 * Needs t->p and resp's outlier flags (sturdy_diagnose_response); a term without a p is
 * left unsearched. */
sturdy_status sturdy_sensitivity_term(const sturdy_design *d, const sturdy_model *m, size_t ri,
                                      size_t k, double alpha,
                                      const sturdy_response_result *resp,
                                      sturdy_term_result *t, char *err);

#endif
