/* names.c — the fixed names used by every writer and by the command line: methods,
 * bootstrap and spread schemes (one table each), effect sizes and verdicts. */
#include <string.h>

#include "sturdy/analysis.h"
#include "sturdy/names.h"
#include "core/result.h"

/* One row per value: the result's name (JSON, CSV), the command line's word when it
 * differs (NULL: the name), and the text report's description. */
typedef struct {
    int value;
    const char *name, *word, *description;
} name_row;

static const name_row methods[] = {
    { STURDY_METHOD_FREEDMAN_LANE, "freedman-lane", NULL,
      "Freedman–Lane (Freedman & Lane 1983)" },
    { STURDY_METHOD_TER_BRAAK, "ter-braak", NULL, "ter Braak (1992)" },
    { STURDY_METHOD_RAW, "raw", NULL, "raw-data" },
};

static const name_row boot_schemes[] = {
    { STURDY_BOOT_RESIDUAL, "residual", NULL, "residual (Davison & Hinkley 1997)" },
    { STURDY_BOOT_WILD, "wild", NULL, "wild (Wu 1986)" },
    { STURDY_BOOT_CELLS, "cells", NULL, "cells" },
};

static const name_row spread_schemes[] = {
    { STURDY_SPREAD_NONE, "none", NULL, NULL },
    { STURDY_SPREAD_WILD, "wild-bootstrap", "wild", NULL },
    { STURDY_SPREAD_PERMUTATION, "permutation", NULL, NULL },
};

static const name_row ci_methods[] = {
    { STURDY_CI_NONE, "none", NULL, NULL },
    { STURDY_CI_PERCENTILE, "percentile", NULL, "percentile" },
    { STURDY_CI_BCA, "bca", NULL, "BCa" },
    { STURDY_CI_NONCENTRAL_F, "noncentral-f", NULL, "noncentral F" },
    { STURDY_CI_TEST_INVERSION, "test-inversion", NULL, "test inversion" },
    { STURDY_CI_STUDENTIZED, "studentized-inversion", NULL, "studentized test inversion" },
};

#define NROWS(t) (sizeof t / sizeof t[0])

static const name_row *by_value(const name_row *t, size_t n, int value)
{
    for (size_t i = 0; i < n; i++)
        if (t[i].value == value)
            return &t[i];
    return NULL;
}

/* The row whose command-line word is `word`, or NULL. */
static const name_row *by_word(const name_row *t, size_t n, const char *word)
{
    for (size_t i = 0; i < n && word; i++)
        if (!strcmp(t[i].word ? t[i].word : t[i].name, word))
            return &t[i];
    return NULL;
}

const char *sturdy_method_name(sturdy_method m)
{
    const name_row *r = by_value(methods, NROWS(methods), (int)m);
    return r ? r->name : "unknown";
}

const char *sturdy_boot_scheme_name(sturdy_boot_scheme s)
{
    const name_row *r = by_value(boot_schemes, NROWS(boot_schemes), (int)s);
    return r ? r->name : "default";
}

const char *sturdy_spread_scheme_name(sturdy_spread_scheme s)
{
    const name_row *r = by_value(spread_schemes, NROWS(spread_schemes), (int)s);
    return r ? r->name : "none";
}

const char *sturdy_ci_method_name(sturdy_ci_method m)
{
    const name_row *r = by_value(ci_methods, NROWS(ci_methods), (int)m);
    return r ? r->name : "none";
}

int sturdy_ci_method_parse(const char *name, sturdy_ci_method *out)
{
    const name_row *r = by_word(ci_methods, NROWS(ci_methods), name);
    if (r)
        *out = (sturdy_ci_method)r->value;
    return r != NULL;
}

const char *sturdy_method_description(sturdy_method m)
{
    const name_row *r = by_value(methods, NROWS(methods), (int)m);
    return r ? r->description : "?";
}

const char *sturdy_boot_scheme_description(sturdy_boot_scheme s)
{
    const name_row *r = by_value(boot_schemes, NROWS(boot_schemes), (int)s);
    return r ? r->description : "?";
}

int sturdy_method_parse(const char *word, sturdy_method *out)
{
    const name_row *r = by_word(methods, NROWS(methods), word);
    if (r) *out = (sturdy_method)r->value;
    return r != NULL;
}

int sturdy_boot_scheme_parse(const char *word, sturdy_boot_scheme *out)
{
    const name_row *r = by_word(boot_schemes, NROWS(boot_schemes), word);
    if (r) *out = (sturdy_boot_scheme)r->value;
    return r != NULL;
}

int sturdy_spread_scheme_parse(const char *word, sturdy_spread_scheme *out)
{
    const name_row *r = by_word(spread_schemes, NROWS(spread_schemes), word);
    if (r) *out = (sturdy_spread_scheme)r->value;
    return r != NULL;
}

const char *const sturdy_es_names[STURDY_NES] = {
    "eta2", "partial_eta2", "omega2", "partial_omega2", "cohens_f"
};

const char *sturdy_verdict_name(sturdy_verdict v)
{
    switch (v) {
    case STURDY_VERDICT_BOTH: return "both";
    case STURDY_VERDICT_NEITHER: return "neither";
    case STURDY_VERDICT_CLASSICAL_ONLY: return "classical-only";
    case STURDY_VERDICT_RESAMPLING_ONLY: return "resampling-only";
    case STURDY_VERDICT_NONE: break;
    }
    return NULL;
}

/* --stop-early: how a term's test stopped, as written in the JSON (stop_rule) and CSV */
const char *sturdy_stop_rule_name(int rule)
{
    switch (rule) {
    case STURDY_SEQ_EXCEEDANCES: return "exceedances";
    case STURDY_SEQ_DECIDED: return "decision";
    default: return "none";
    }
}

int sturdy_stop_rule_parse(const char *name)
{
    if (name && !strcmp(name, "exceedances")) return STURDY_SEQ_EXCEEDANCES;
    if (name && !strcmp(name, "decision")) return STURDY_SEQ_DECIDED;
    return STURDY_SEQ_RUNNING;
}
