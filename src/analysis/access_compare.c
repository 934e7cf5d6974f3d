/* access_compare.c — reading the marginal means and comparisons of a result. */
#include <string.h>

#include "core/result.h"

size_t sturdy_result_nmeans(const sturdy_result *r, size_t resp)
{
    if (!r || resp >= r->nresp)
        return 0;
    return r->read_back ? r->resp[resp].rb_nmeans : r->design ? r->resp[resp].nmeans : 0;
}

size_t sturdy_result_ncomparisons(const sturdy_result *r, size_t resp)
{
    if (!r || resp >= r->nresp)
        return 0;
    return r->read_back ? r->resp[resp].rb_ncomparisons
                        : r->design ? r->resp[resp].ncomparisons : 0;
}

int sturdy_result_mean(const sturdy_result *r, size_t resp, size_t i, sturdy_mean_info *out)
{
    if (i >= sturdy_result_nmeans(r, resp))
        return 0;
    if (r->read_back) {   /* as read from the file (read.c) */
        *out = r->resp[resp].rb_means[i];
        return 1;
    }
    const sturdy_design *d = r->design;
    const sturdy_response_result *rr = &r->resp[resp];
    const sturdy_mean_result *m = &rr->means[i];
    memset(out, 0, sizeof *out);
    out->term = rr->terms[m->term].label;
    for (size_t f = 0; f < d->nfactors; f++)
        if (m->mask & (1u << f)) {
            out->factors[out->nfactors] = d->factors[f].name;
            out->levels[out->nfactors++] = d->factors[f].levels[m->level[f]];
        }
    out->estimate = m->estimate;
    out->se = m->se;
    out->df = m->df;
    out->ci_lo = m->ci.lo;
    out->ci_hi = m->ci.hi;
    out->note = m->note;
    return 1;
}

int sturdy_result_comparison(const sturdy_result *r, size_t resp, size_t i,
                             sturdy_comparison_info *out)
{
    if (i >= sturdy_result_ncomparisons(r, resp))
        return 0;
    if (r->read_back) {
        *out = r->resp[resp].rb_comparisons[i];
        return 1;
    }
    const sturdy_design *d = r->design;
    const sturdy_response_result *rr = &r->resp[resp];
    const sturdy_comparison *c = &rr->comparisons[i];
    const sturdy_factor *f = &d->factors[c->factor];
    memset(out, 0, sizeof *out);
    out->term = rr->terms[c->term].label;
    out->factor = f->name;
    out->level = f->levels[c->level];
    out->versus = f->levels[c->versus];
    if (c->within) {
        out->by_factor = d->factors[c->by_factor].name;
        out->by_level = d->factors[c->by_factor].levels[c->by_level];
    }
    out->adjustment = c->method == STURDY_ADJ_GAMES_HOWELL ? "games-howell"
                      : c->method == STURDY_ADJ_DUNNETT ? "dunnett"
                                                        : "tukey-kramer";
    out->estimate = c->estimate;
    out->se = c->se;
    out->df = c->df;
    out->t = c->t;
    out->p = c->p;
    out->hedges_g = c->g;
    out->ci_lo = c->ci.lo;
    out->ci_hi = c->ci.hi;
    out->sim_lo = c->ci_simultaneous.lo;
    out->sim_hi = c->ci_simultaneous.hi;
    out->p_adjusted = c->p_adjusted;
    out->p_perm_adjusted = c->p_perm_adjusted;
    out->boot_sim_lo = c->ci_boot_simultaneous.lo;
    out->boot_sim_hi = c->ci_boot_simultaneous.hi;
    out->p_boot_adjusted = c->p_boot_adjusted;
    out->reported = rr->compare_shown && rr->compare_shown[c->term];
    out->note = c->note;
    out->perm_note = c->perm_note;
    return 1;
}
