/* text_tail.c — what the text report says about the generalised Pareto tail p-values
 * (--tail-fit, resampling/tail.c): one paragraph under the tests table, naming only the
 * terms where a fit was tried (fewer than 10 rearrangements reached F), marked as an
 * extrapolation and kept apart from the resampled p, which it never replaces. */
#include <math.h>
#include <stdio.h>

#include "report/text.h"
#include "resampling/tail.h"

void tw_tail_note(tw *w, const sturdy_response_result *rr)
{
    if (!w->r->opts.tail_fit)
        return;
    sturdy_buf s;
    sturdy_buf_init(&s);
    for (size_t k = 0; k < rr->nterms; k++) {
        const sturdy_term_result *t = &rr->terms[k];
        const sturdy_tail_fit *f = &t->tail;
        if (f->status == STURDY_TAIL_OFF || f->status == STURDY_TAIL_NOT_NEEDED ||
            f->status == STURDY_TAIL_EXACT)
            continue;
        sturdy_buf_printf(&s, "%s%s ", s.len ? "; " : "", t->label);
        if (f->status == STURDY_TAIL_FITTED) {
            char p[32], th[32], xi[32], sg[32], ap[32];
            tw_fmt_g(t->p_tail, 2, p);
            tw_fmt_num(f->threshold, th);
            tw_fmt_g(f->xi, 3, xi);
            tw_fmt_num(f->sigma, sg);
            tw_fmt_g(f->ad_p, 2, ap);
            sturdy_buf_printf(&s, "p ≈ %s (the %zu largest F* over %s: shape %s, scale %s; "
                              "Anderson–Darling p %s)", p, f->n_exc, th, xi, sg, ap);
        } else {
            sturdy_buf_printf(&s, "none: %s", sturdy_tail_status_reason(f->status));
        }
    }
    if (s.len)
        tw_paraf(w, 2, 4, "tail extrapolation (--tail-fit), where fewer than 10 rearrangements "
                 "reached F: a generalised Pareto tail fitted by maximum likelihood to the "
                 "largest F* (Knijnenburg et al. 2009) estimates p beyond what the "
                 "rearrangements observed; an extrapolation, not a count, reported beside "
                 "p resampled and never in its place. %s.", s.data);
    if (s.failed)
        w->b->failed = 1;
    sturdy_buf_free(&s);
}
