/* checks.h — the checks stage's interface: residual diagnostics and verdicts. */
#ifndef STURDY_CHECKS_H
#define STURDY_CHECKS_H

#include "core/result.h"
#include "core/run.h"
#include "sturdy/fit.h"

/* Diagnostics of response r (needs fitted/residual). */
sturdy_status sturdy_diagnose_response(const sturdy_design *d, const sturdy_model *m,
                                       sturdy_response_result *resp, char *err);

/* Verdict of a finished term at level alpha, with its one-line reason. */
sturdy_status sturdy_verdict_term(const sturdy_response_result *resp, sturdy_term_result *t,
                                  double alpha, char *err);

#endif
