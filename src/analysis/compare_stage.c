/* compare_stage.c — runs the marginal means and comparisons of every response and picks
 * the terms whose comparisons the report shows (the compare options). */
#include <math.h>
#include <string.h>

#include "analysis/stages.h"
#include "classical/classical.h"
#include "core/core.h"

/* Does `name` (factor names joined by "×" or "*", in any order) name factor term t? */
static int names_term(const sturdy_design *d, const sturdy_term *t, const char *name)
{
    if (t->kind != STURDY_TERM_FACTORS)
        return 0;
    uint32_t seen = 0;
    const char *p = name;
    for (;;) {
        const char *x = strstr(p, "\xc3\x97"), *s = strchr(p, '*'), *end = x;
        size_t skip = 2;
        if (s && (!x || s < x)) {
            end = s;
            skip = 1;
        }
        size_t len = end ? (size_t)(end - p) : strlen(p), f = 0;
        while (f < d->nfactors &&
               !(strlen(d->factors[f].name) == len && !strncmp(d->factors[f].name, p, len)))
            f++;
        if (f == d->nfactors || (seen & (1u << f)))
            return 0;
        seen |= 1u << f;
        if (!end)
            break;
        p = end + skip;
    }
    return seen == t->mask;
}

sturdy_status sturdy_compare_stage(const sturdy_design *d, const sturdy_model *m,
                                   const sturdy_options *o, sturdy_result *r, char *err)
{
    /* none asked for: none computed, so the run costs what it did without them (no
       max-T columns in the rearrangements, no bootstrap band, no range integrals) */
    if (o->compare_mode == STURDY_COMPARE_NONE)
        return STURDY_OK;
    sturdy_compare_setup cs;
    memset(&cs, 0, sizeof cs);
    cs.conf = o->conf;
    cs.control_factor = (size_t)-1;
    if (o->control_factor) {
        size_t f = 0;
        while (f < d->nfactors && strcmp(d->factors[f].name, o->control_factor)) f++;
        if (f == d->nfactors)
            return sturdy_fail(err, STURDY_EUSAGE, "the control names '%s', which is not a "
                               "factor of the model", o->control_factor);
        size_t l = 0;
        while (o->control_level && l < d->factors[f].nlevels &&
               strcmp(d->factors[f].levels[l], o->control_level))
            l++;
        if (!o->control_level || l == d->factors[f].nlevels)
            return sturdy_fail(err, STURDY_EUSAGE, "the control level '%s' is not a level of "
                               "factor '%s'", o->control_level ? o->control_level : "",
                               o->control_factor);
        cs.control_factor = f;
        cs.control_level = l;
    }
    if (o->compare_mode == STURDY_COMPARE_LIST)
        for (size_t i = 0; i < o->ncompare_terms; i++) {
            size_t t = 0;
            while (t < d->nterms &&
                   !(names_term(d, &d->terms[t], o->compare_terms[i]) &&
                     d->terms[t].order <= 2))
                t++;
            if (t == d->nterms)
                return sturdy_fail(err, STURDY_EUSAGE, "'%s' is not a main effect or "
                                   "two-factor interaction of the model, so it has no "
                                   "comparisons", o->compare_terms[i]);
        }
    for (size_t ri = 0; ri < r->nresp; ri++) {
        cs.spread_differs = r->resp[ri].diag.spread_differs;
        sturdy_status st = sturdy_compare_response(d, m, ri, &cs, &r->resp[ri], err);
        if (st)
            return st;
    }
    return STURDY_OK;
}

sturdy_status sturdy_compare_select(sturdy_result *r, char *err)
{
    const sturdy_options *o = &r->opts;
    const sturdy_design *d = r->design;
    for (size_t ri = 0; ri < r->nresp; ri++)
        if (sturdy_compare_adjust(&r->resp[ri], o->conf, r->threads, r->cache))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    /* max-T adjusted p from the counts, as the terms' p (Phipson & Smyth 2010; exact
       when enumerated) */
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t i = 0; i < r->resp[ri].ncomparisons; i++) {
            sturdy_comparison *c = &r->resp[ri].comparisons[i];
            if (c->perm_note || r->nperm == 0)
                continue;
            double B = (double)r->nperm, e = (double)c->exceed_maxt;
            c->p_perm_adjusted = r->exact ? e / B : (1.0 + e) / (1.0 + B);
        }
    for (size_t ri = 0; d && ri < r->nresp; ri++) {
        sturdy_response_result *rr = &r->resp[ri];
        if (!rr->compare_shown)
            continue;
        for (size_t t = 0; t < rr->nterms && t < d->nterms; t++) {
            const sturdy_term_result *tr = &rr->terms[t];
            int on = 0;
            if (d->terms[t].kind != STURDY_TERM_FACTORS || d->terms[t].order > 2)
                on = 0;
            else if (o->compare_mode == STURDY_COMPARE_ALL)
                on = 1;
            else if (o->compare_mode == STURDY_COMPARE_SIGNIFICANT)
                on = tr->p < o->alpha || tr->p_perm < o->alpha;
            else if (o->compare_mode == STURDY_COMPARE_LIST)
                for (size_t i = 0; i < o->ncompare_terms; i++)
                    on |= names_term(d, &d->terms[t], o->compare_terms[i]);
            rr->compare_shown[t] = (unsigned char)on;
        }
    }
    return STURDY_OK;
}
