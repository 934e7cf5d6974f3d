/* text_resistant.c — what the text report says about the outlier-resistant test
 * (--resistant): its column in the tests table, the line that states how it was computed,
 * and the headline's lead when it disagrees with both other tests. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/family.h"
#include "report/text.h"

void tw_resistant_cell(tw *w, const sturdy_term_result *t, char *out)
{
    const sturdy_rs_result *rs = &t->rs;
    if (!w->r->opts.resistant) {
        out[0] = '\0';
    } else if (!isnan(rs->p_perm)) {
        tw_fmt_p(rs->p_perm, out);
    } else if (rs->note && !isnan(t->p)) {
        snprintf(out, 32, "— [%zu]", tw_footnote(w, rs->note));
    } else {
        tw_fmt_p(NAN, out);
    }
}

void tw_resistant_note(tw *w, const sturdy_response_result *rr)
{
    if (!w->r->opts.resistant) return;
    double scale = NAN;
    for (size_t k = 0; k < rr->nterms && isnan(scale); k++) scale = rr->terms[k].rs.scale;
    char c[32], sc[32];
    tw_fmt_g(STURDY_RS_TUNING, 4, c);
    tw_fmt_num(scale, sc);
    tw_paraf(w, 2, 4, "p resistant: Huber M-fits (tuning constant %s) of the full and the "
             "reduced model with one fixed scale, %s (the normalised median absolute "
             "residual of the full least-squares fit), compared by the drop in dispersion "
             "(Schrader & Hettmansperger 1980); resampled by %s the robust reduced fit's "
             "residuals with the run's %s. A single gross row sways it little.", c, sc,
             w->r->opts.flip ? "sign-flipping" : "rearranging",
             w->r->opts.flip ? "sign patterns" : "rearrangements");
}

void tw_resistant_headline(tw *w)
{
    const sturdy_result *r = w->r;
    if (!r->opts.resistant || !r->finished) return;
    char a[32], b[32], c[32];
    for (size_t i = 0; i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            if (!t->rs.disagrees) continue;
            const sturdy_response_result *rr = &r->resp[i];
            tw_fmt_p(t->rs.p_perm, a);
            tw_fmt_p(t->p, b);
            tw_fmt_p(t->p_perm, c);
            int sig = t->rs.p_perm <= r->opts.alpha;
            sturdy_buf rows;
            sturdy_buf_init(&rows);
            for (size_t o = 0; o < rr->diag.noutliers && o < 3; o++)
                sturdy_buf_printf(&rows, "%s%zu (line %zu)", o ? ", " : "",
                                  rr->diag.outliers[o].row, rr->diag.outliers[o].line);
            tw_paraf(w, 2, 4, "! The outlier-resistant test %s %s%s%s%s (p %s) where the F-test "
                     "(p %s) and the resampled F (p %s) %s; the outlier test flags row%s %s%s. "
                     "→ Check %s for recording errors; report the resistant test beside the "
                     "others, or the results with and without %s.",
                     sig ? "finds" : "does not find", t->label, r->nresp > 1 ? " (" : "",
                     r->nresp > 1 ? rr->name : "", r->nresp > 1 ? ")" : "", a, b, c,
                     sig ? "do not" : "do", rr->diag.noutliers > 1 ? "s" : "",
                     rows.data ? rows.data : "", rr->diag.noutliers > 3 ? ", …" : "",
                     rr->diag.noutliers > 1 ? "those rows" : "that row",
                     rr->diag.noutliers > 1 ? "them" : "it");
            if (rows.failed) w->b->failed = 1;
            sturdy_buf_free(&rows);
        }
}

void tw_family_line(tw *w, const char *alpha)
{
    sturdy_family f;
    sturdy_family_count(w->r, &f);
    if (f.terms < 2 || (f.significant == 0 && f.significant_f == 0)) return;
    const sturdy_result *r = w->r;
    sturdy_buf s;
    sturdy_buf_init(&s);
    sturdy_buf_printf(&s, "These verdicts test each term on its own at α = %s. Holding the "
                      "family-wise error rate at α over all %zu tested terms%s, %zu of the %zu "
                      "significant by resampling stay%s significant (Westfall–Young; Holm: "
                      "%zu)", alpha, f.terms, r->nresp > 1 ? " and responses" : "",
                      f.significant_fwer, f.significant, f.significant_fwer == 1 ? "s" : "",
                      f.significant_holm);
    size_t listed = 0;
    for (size_t i = 0; f.significant_fwer && i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            if (isnan(t->p_perm_fwer) || t->p_perm_fwer > r->opts.alpha) continue;
            sturdy_buf_printf(&s, "%s%s%s%s%s", listed++ ? ", " : ": ", t->label,
                              r->nresp > 1 ? " (" : "", r->nresp > 1 ? r->resp[i].name : "",
                              r->nresp > 1 ? ")" : "");
        }
    sturdy_buf_puts(&s, ". → With many terms, report the adjusted p.");
    tw_para(w, 2, 2, s.data ? s.data : "");
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
}
