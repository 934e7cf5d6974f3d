/* text_sensitivity.c — what the text report says about rows that decide a term: the
 * headline's opening lines (at most 2 rows change a conclusion and move p tenfold) and the
 * "single rows" line under the residual checks (checks/influence.c). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/text.h"

/* "row 66 (line 67; runner=small, cache=off)" for each row of the set. */
static void set_rows(const tw *w, const sturdy_sensitivity *sv, int cells, sturdy_buf *s)
{
    for (size_t j = 0; j < sv->nrows; j++) {
        sturdy_buf_printf(s, "%srow %zu (line %zu", j == 0 ? "" : j + 1 == sv->nrows ? " and "
                                                                                  : ", ",
                          sv->rows[j].row, sv->rows[j].line);
        if (cells && w->r->design) {
            sturdy_buf_puts(s, "; ");
            sturdy_report_cell_label(w->r->design, sv->rows[j].cell, s);
        }
        sturdy_buf_puts(s, ")");
    }
}

static void p_text(double p, sturdy_buf *s)
{
    char q[32];
    tw_fmt_p(p, q);
    sturdy_buf_printf(s, "%s%s", q[0] == '<' ? "< " : "", q[0] == '<' ? q + 1 : q);
}

void tw_sensitivity_headline(tw *w)
{
    const sturdy_result *r = w->r;
    for (size_t i = 0; r->finished && i < r->nresp; i++)
        for (size_t k = 0; k < r->resp[i].nterms; k++) {
            const sturdy_term_result *t = &r->resp[i].terms[k];
            const sturdy_sensitivity *sv = &t->sens;
            if (!sv->decisive) continue;
            sturdy_buf s;
            sturdy_buf_init(&s);
            int one = sv->nrows == 1, hides = sv->direction == STURDY_SENS_HIDES;
            sturdy_buf_printf(&s, "! %s row%s decide%s %s%s%s%s: without ", one ? "One" : "Two",
                              one ? "" : "s", one ? "s" : "", t->label,
                              r->nresp > 1 ? " (" : "", r->nresp > 1 ? r->resp[i].name : "",
                              r->nresp > 1 ? ")" : "");
            set_rows(w, sv, 1, &s);
            sturdy_buf_puts(&s, " its F-test p goes from ");
            p_text(t->p, &s);
            sturdy_buf_puts(&s, " to ");
            p_text(sv->p_without, &s);
            sturdy_buf_printf(&s, " (%s significant at α)", hides ? "then" : "no longer");
            if (!isnan(t->p_perm) && !isnan(sv->p_perm_without)) {
                sturdy_buf_puts(&s, ", its resampled p from ");
                p_text(t->p_perm, &s);
                sturdy_buf_puts(&s, " to ");
                p_text(sv->p_perm_without, &s);
            }
            sturdy_buf_printf(&s, ". → Check %s for a recording "
                              "error; if %s genuine, report the results with and without "
                              "%s. The resampled p rearranges the same F, so such a row can "
                              "sway it too.",
                              one ? "this row" : "these rows", one ? "it is" : "they are",
                              one ? "it" : "them");
            tw_para(w, 2, 4, s.data ? s.data : "");
            if (s.failed) w->b->failed = 1;
            sturdy_buf_free(&s);
        }
}

void tw_sensitivity_check(tw *w, const sturdy_response_result *rr)
{
    sturdy_buf s;
    sturdy_buf_init(&s);
    size_t searched = 0, listed = 0;
    for (size_t k = 0; k < rr->nterms; k++) {
        const sturdy_sensitivity *sv = &rr->terms[k].sens;
        searched += sv->searched;
        if (!sv->searched || sv->nrows == 0) continue;
        sturdy_buf_printf(&s, "%s%s: removing ", listed++ ? "; " : "", rr->terms[k].label);
        set_rows(w, sv, 0, &s);
        sturdy_buf_puts(&s, sv->direction == STURDY_SENS_HIDES ? " makes it significant (p "
                                                               : " makes it not significant (p ");
        p_text(rr->terms[k].p, &s);
        sturdy_buf_puts(&s, " → ");
        p_text(sv->p_without, &s);
        if (!isnan(rr->terms[k].p_perm) && !isnan(sv->p_perm_without)) {
            sturdy_buf_puts(&s, "; resampled ");
            p_text(rr->terms[k].p_perm, &s);
            sturdy_buf_puts(&s, " → ");
            p_text(sv->p_perm_without, &s);
        }
        sturdy_buf_puts(&s, ")");
    }
    if (searched == 0) {
        sturdy_buf_free(&s);
        return;
    }
    if (listed)
        sturdy_buf_puts(&s, ". → A conclusion that up to 3 rows overturn is fragile; say so "
                            "when you report it (rows found by a greedy search with exact "
                            "refits; JSON: sensitivity).");
    else
        sturdy_buf_puts(&s, "no term's F-test conclusion changes by removing up to 3 rows "
                            "(greedy search with exact refits; a set that matters only "
                            "jointly can be missed).");
    tw_labelled(w, "single rows", s.data ? s.data : "");
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
}
