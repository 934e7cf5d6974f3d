/* sturdy.h — the public interface of libsturdy: robustness checks for factorial ANOVA.
 * Include this one header; each stage's header documents its functions. */
#ifndef STURDY_H
#define STURDY_H

#include "common.h"
#include "table.h"
#include "design.h"
#include "fit.h"
#include "dist.h"
#include "diagnose.h"
#include "pcg.h"
#include "analysis.h"
#include "names.h"
#include "report.h"

#endif
