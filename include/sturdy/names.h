/* names.h — the fixed names of the resampling methods and schemes: the words the
 * command line takes, the names the JSON and CSV results carry and the descriptions the
 * text report gives, from one table (src/core/names.c). */
#ifndef STURDY_NAMES_H
#define STURDY_NAMES_H

#include "analysis.h"

/* "freedman-lane", "ter-braak" or "raw": the result's name of a method, which is also
 * the command line's word for it; "unknown" for any other value. Never NULL. */
const char *sturdy_method_name(sturdy_method m);

/* "residual", "wild" or "cells" (result name and command-line word); "default" for
 * STURDY_BOOT_DEFAULT or any other value. Never NULL. */
const char *sturdy_boot_scheme_name(sturdy_boot_scheme s);

/* "none", "wild-bootstrap" or "permutation" (the result's names; the command line says
 * "wild" for the second); "none" for any other value. Never NULL. */
const char *sturdy_spread_scheme_name(sturdy_spread_scheme s);

/* "percentile", "bca", "noncentral-f" or "test-inversion": the result's name of an
 * interval method (JSON "recommended".method, CSV *_rec_method); "none" for
 * STURDY_CI_NONE or any other value. Never NULL. sturdy_ci_method_parse reads those
 * names back ("none" included). */
const char *sturdy_ci_method_name(sturdy_ci_method m);
int sturdy_ci_method_parse(const char *name, sturdy_ci_method *out);

/* The value a command-line word names: sets *out and returns 1 when `word` is one of
 * the words above ("none", "wild", "permutation" for the spread scheme; "default" is
 * not a word); returns 0 and leaves *out alone otherwise. Case matters. */
int sturdy_method_parse(const char *word, sturdy_method *out);
int sturdy_boot_scheme_parse(const char *word, sturdy_boot_scheme *out);
int sturdy_spread_scheme_parse(const char *word, sturdy_spread_scheme *out);

/* A method's or bootstrap scheme's description with its reference, for reports
 * ("Freedman–Lane (Freedman & Lane 1983)", "residual (Davison & Hinkley 1997)"); "?" for
 * a value without one (STURDY_BOOT_DEFAULT). Never NULL. */
const char *sturdy_method_description(sturdy_method m);
const char *sturdy_boot_scheme_description(sturdy_boot_scheme s);

#endif
