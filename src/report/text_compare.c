/* text_compare.c — the text report's section on marginal means and their differences,
 * after the table: per reported term its means and, for each pair, the difference in
 * the response's units with the simultaneous interval and adjusted p-values. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report/text.h"

/* Widths of the comparison columns. */
#define CW_LABEL 24
#define CW_NUM 9
#define CW_RANGE 20
#define CW_P 8

static void mean_line(tw *w, const sturdy_response_result *rr, size_t term)
{
    const sturdy_design *d = w->r->design;
    sturdy_buf s;
    sturdy_buf_init(&s);
    size_t shown = 0;
    for (size_t i = 0; i < rr->nmeans; i++) {
        const sturdy_mean_result *m = &rr->means[i];
        if (m->term != term) continue;
        char est[32];
        tw_fmt_g(m->estimate, 4, est);
        if (shown++) sturdy_buf_puts(&s, ", ");
        int first = 1;
        for (size_t f = 0; f < d->nfactors; f++)
            if (m->mask & (1u << f)) {
                sturdy_buf_printf(&s, "%s%s", first ? "" : "·", d->factors[f].levels[m->level[f]]);
                first = 0;
            }
        sturdy_buf_printf(&s, " %s", est);
        int boot = m->ci_boot.lo == m->ci_boot.lo && m->ci_boot.hi == m->ci_boot.hi;
        if (m->se == m->se) {
            char se[32];
            tw_fmt_g(m->se, 2, se);
            sturdy_buf_printf(&s, " (SE %s%s", se, boot ? "; " : ")");
        } else if (boot) {
            sturdy_buf_puts(&s, " (");
        }
        if (boot) {   /* the bootstrap percentile interval, in the response's units */
            char lo[32], hi[32];
            tw_fmt_g(m->ci_boot.lo, 3, lo);
            tw_fmt_g(m->ci_boot.hi, 3, hi);
            sturdy_buf_printf(&s, "bootstrap [%s, %s])", lo, hi);
        }
    }
    if (s.data) tw_paraf(w, 4, 6, "means: %s", s.data);
    if (s.failed) w->b->failed = 1;
    sturdy_buf_free(&s);
}

void tw_compare_section(tw *w, const sturdy_response_result *rr)
{
    const sturdy_design *d = w->r->design;
    if (!d || !rr->compare_shown)
        return;
    int any = 0;
    for (size_t t = 0; t < rr->nterms; t++) any |= rr->compare_shown[t];
    if (!any)
        return;
    double conf = w->r->opts.conf * 100;
    tw_paraf(w, 2, 2, "Differences of least-squares means, in the response's units: %g%% "
             "simultaneous intervals over each term's family, classical (Tukey–Kramer, "
             "Games–Howell or Dunnett) and bootstrap (max-|t|); p adj: classical; p max-T: permutation "
             "(Westfall–Young), or p boot: the bootstrap band's own max-T p, quoted instead "
             "where cell spreads differ; g: Hedges' g on the pooled residual SD; means: SE "
             "and %g%% bootstrap percentile interval", conf, conf);
    for (size_t t = 0; t < rr->nterms; t++) {
        if (!rr->compare_shown[t]) continue;
        const char *adj = NULL;
        int gh = 0, boot = 0;   /* Games–Howell family; with a bootstrap max-T p */
        for (size_t i = 0; i < rr->ncomparisons; i++) {
            const sturdy_comparison *c = &rr->comparisons[i];
            if (c->term != t) continue;
            gh |= c->method == STURDY_ADJ_GAMES_HOWELL;
            boot |= !isnan(c->p_boot_adjusted);
            if (!adj)
                adj = c->method == STURDY_ADJ_GAMES_HOWELL
                          ? "Games–Howell (cell spreads differ)"
                      : c->method == STURDY_ADJ_DUNNETT
                          ? "Dunnett (many-to-one with the control, exact)"
                          : "Tukey–Kramer";
        }
        /* Under unequal spreads the permutation max-T moves rows between cells of unequal
           spread and is only approximate; the wild bootstrap's max-T p (the band's
           inverse) is the resampling adjusted p to quote (docs/compare_study.md). */
        int use_boot = gh && boot;
        tw_paraf(w, 2, 4, "%s — %s%s", rr->terms[t].label, adj ? adj : "no comparisons",
                 use_boot ? "; resampling adjusted p: the wild bootstrap's max-T (p boot), "
                            "as permutation max-T is only approximate when spreads differ"
                 : gh ? "; p max-T is only approximate when spreads differ (run a "
                        "bootstrap for the bootstrap max-T p)"
                      : "");
        mean_line(w, rr, t);
        tw_indent(w, 4);
        tw_style(w, "1");
        tw_cell(w, "difference", CW_LABEL, 0);
        tw_cell(w, "estimate", CW_NUM, 1);
        tw_cell(w, "  classical", CW_RANGE, 0);
        tw_cell(w, "  bootstrap", CW_RANGE, 0);
        tw_cell(w, "p adj", CW_P, 1);
        tw_cell(w, use_boot ? "p boot" : "p max-T", CW_P, 1);
        tw_cell(w, "g", 6, 1);
        tw_style(w, "0");
        tw_nl(w);
        for (size_t i = 0; i < rr->ncomparisons; i++) {
            const sturdy_comparison *c = &rr->comparisons[i];
            if (c->term != t) continue;
            const sturdy_factor *f = &d->factors[c->factor];
            char label[256], est[32], lo[32], hi[32], rng[80], brng[80], pa[32], pp[32], g[32];
            if (c->within)
                snprintf(label, sizeof label, "%s − %s | %s", f->levels[c->level],
                         f->levels[c->versus], d->factors[c->by_factor].levels[c->by_level]);
            else
                snprintf(label, sizeof label, "%s − %s", f->levels[c->level],
                         f->levels[c->versus]);
            tw_fmt_g(c->estimate, 4, est);
            tw_fmt_g(c->ci_simultaneous.lo, 3, lo);
            tw_fmt_g(c->ci_simultaneous.hi, 3, hi);
            snprintf(rng, sizeof rng, "  [%s, %s]", lo, hi);
            tw_fmt_g(c->ci_boot_simultaneous.lo, 3, lo);
            tw_fmt_g(c->ci_boot_simultaneous.hi, 3, hi);
            if (c->ci_boot_simultaneous.lo == c->ci_boot_simultaneous.lo)
                snprintf(brng, sizeof brng, "  [%s, %s]", lo, hi);
            else
                snprintf(brng, sizeof brng, "  —");
            tw_fmt_p(c->p_adjusted, pa);
            tw_fmt_p(use_boot ? c->p_boot_adjusted : c->p_perm_adjusted, pp);
            tw_fmt_g(c->g, 2, g);
            tw_indent(w, 4);
            tw_cell(w, label, CW_LABEL, 0);
            tw_cell(w, est, CW_NUM, 1);
            tw_cell(w, rng, CW_RANGE, 0);
            tw_cell(w, brng, CW_RANGE, 0);
            tw_cell(w, pa, CW_P, 1);
            tw_cell(w, pp, CW_P, 1);
            tw_cell(w, g, 6, 1);
            tw_nl(w);
            if (c->note)
                tw_paraf(w, 6, 6, "%s", c->note);
        }
    }
    tw_nl(w);
}
