/* advanced.h — the opt-in advanced tier of libsturdy: the design, the fit and its
 * projections, distribution functions, residual diagnostics on plain arrays and the PCG
 * generator. These interfaces follow the implementation and may change between minor
 * versions; programs that need only load → analyze → read → write use sturdy.h alone. */
#ifndef STURDY_ADVANCED_H
#define STURDY_ADVANCED_H

#include "sturdy.h"
#include "design.h"
#include "fit.h"
#include "dist.h"
#include "diagnose.h"
#include "pcg.h"

/* The design a result was computed on; NULL for a result read back from a file. */
const sturdy_design *sturdy_result_design(const sturdy_result *r);

/* Append "A=a1, B=b2" for design cell `cell` (an index into d->cell_levels). */
void sturdy_report_cell_label(const sturdy_design *d, size_t cell, sturdy_buf *out);

#endif
