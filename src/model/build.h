/* build.h — sturdy_model_build on the run's threads (private to the library: fit.c,
 * analysis/analysis.c and analysis/without.c). */
#ifndef STURDY_MODEL_BUILD_H
#define STURDY_MODEL_BUILD_H

#include "sturdy/fit.h"

/* sturdy_model_build with the terms' bases built on up to `threads` threads (the same
 * model, bit for bit, for any number). */
sturdy_status sturdy_model_build_on(const sturdy_design *d, int ss_type, int threads,
                                    sturdy_model **out, char *err);

#endif
