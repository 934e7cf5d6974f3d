/* names.c — the fixed names of effect sizes and verdicts used by every writer. */
#include "sturdy/analysis.h"

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
