/* family.c — which p the verdicts use, and how many terms stay significant after the
 * family-wise adjustment (the headline's and the JSON's "family" summary).
 *
 * The verdicts use each term's own p (the F-test's and the resampled F's, each at alpha):
 * every term of a factorial table is a hypothesis of its own, and that is the question
 * the F-test answers. Over many terms and responses some of those are significant by
 * chance, so the summary also says how many stay significant when the family-wise error
 * rate over every tested term and response is held at alpha: Westfall & Young's (1993)
 * single-step min-p adjustment of the resampled p (the same rearrangements for every
 * term, so it uses their dependence), with Holm's (1979) step-down as the simpler bound. */
#include <math.h>
#include <string.h>

#include "report/family.h"

const char sturdy_family_rule[] =
    "verdicts use each term's own p (F-test and resampled F at alpha); the family-wise "
    "counts hold the error rate over every tested term and response (Westfall-Young "
    "min-p on the resampled p, Holm beside it)";

void sturdy_family_count(const sturdy_result *r, sturdy_family *f)
{
    memset(f, 0, sizeof *f);
    if (!r->finished) return;
    double a = r->opts.alpha;
    for (size_t i = 0; i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            if (isnan(t->p_perm)) continue;
            f->terms++;
            f->significant += t->p_perm <= a;
            f->significant_f += t->p <= a;
            f->significant_fwer += t->p_perm_fwer <= a;
            f->significant_holm += t->p_perm_holm <= a;
        }
}
