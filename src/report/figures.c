/* figures.c — the report's figures of means, effect sizes, resampled F* and influential
 * rows, and the walk over all figures of a result (figures_resid.c: the residuals). */
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "classical/classical.h"
#include "report/figures.h"

#define FIG_W 640.0
#define FIG_H 360.0
/* The bins of the F density curve drawn over the histogram. */
#define DENSITY_POINTS 160

void fig_num(double v, char *buf)
{
    if (!isfinite(v)) {
        snprintf(buf, 32, "%s", v != v ? "—" : v > 0 ? "∞" : "−∞");
        return;
    }
    if (fabs(v) >= 1e4 && fabs(v) < 1e9)
        snprintf(buf, 32, "%.0f", v);           /* 14933, not 1.493e+04 */
    else
        snprintf(buf, 32, "%.4g", v);
}

static void sanitise(const char *s, char *out, size_t n, size_t *k)
{
    for (; *s && *k + 6 < n; s++) {
        unsigned char c = (unsigned char)*s;
        if (!strncmp(s, "×", strlen("×"))) {         /* the interaction sign */
            memcpy(out + *k, "_by_", 4);
            *k += 4;
            s += strlen("×") - 1;
        } else if ((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') ||
                   (c >= '0' && c <= '9') || c == '.' || c == '-' || c == '_') {
            out[(*k)++] = (char)c;
        } else if (c < 0x80 || (c & 0xC0) == 0xC0) {  /* one '_' per character */
            out[(*k)++] = '_';
        }
    }
    out[*k] = 0;
}

void fig_name(fig_work *f, const char *resp, const char *what, const char *term)
{
    size_t k = 0;
    sanitise(resp, f->name, sizeof f->name, &k);
    if (k && f->name[0] == '.')
        f->name[0] = '_';                            /* no hidden files */
    f->name[k++] = '-';
    sanitise(what, f->name, sizeof f->name, &k);
    if (term) {
        f->name[k++] = '-';
        sanitise(term, f->name, sizeof f->name, &k);
    }
}

void fig_cell_label(const sturdy_design *d, size_t k, char *buf, size_t n)
{
    size_t used = 0;
    buf[0] = 0;
    for (size_t f = 0; f < d->nfactors && used + 1 < n; f++) {
        size_t lv = d->cell_levels[k * d->nfactors + f];
        int w = snprintf(buf + used, n - used, "%s%s", f ? "·" : "",
                         lv < d->factors[f].nlevels ? d->factors[f].levels[lv] : "?");
        if (w < 0)
            break;
        used += (size_t)w;
    }
}

void fig_table_open(sturdy_buf *b, const char *caption, const char *const *heads)
{
    sturdy_buf_puts(b, "<table class=\"num\">\n<caption>");
    sturdy_svg_escape(b, caption);
    sturdy_buf_puts(b, "</caption>\n<thead><tr>");
    for (size_t i = 0; heads[i]; i++) {
        sturdy_buf_puts(b, "<th scope=\"col\">");
        sturdy_svg_escape(b, heads[i]);
        sturdy_buf_puts(b, "</th>");
    }
    sturdy_buf_puts(b, "</tr></thead>\n<tbody>\n");
}

void fig_table_row(sturdy_buf *b, const char *const *cells, size_t n)
{
    sturdy_buf_puts(b, "<tr>");
    for (size_t i = 0; i < n; i++) {
        sturdy_buf_puts(b, i ? "<td>" : "<th scope=\"row\">");
        sturdy_svg_escape(b, cells[i]);
        sturdy_buf_puts(b, i ? "</td>" : "</th>");
    }
    sturdy_buf_puts(b, "</tr>\n");
}

void fig_table_close(sturdy_buf *b)
{
    sturdy_buf_puts(b, "</tbody>\n</table>\n");
}

/* Characters of a UTF-8 string (for the width of a label). */
static size_t chars(const char *s)
{
    size_t n = 0;
    for (; *s; s++)
        n += ((unsigned char)*s & 0xC0) != 0x80;
    return n;
}

void fig_categories(sturdy_svg_plot *p, const char *const *labels, size_t n)
{
    double room = n ? (p->area.x1 - p->area.x0) / (double)n : 0;
    size_t longest = 0;
    for (size_t i = 0; i < n; i++)
        if (chars(labels[i]) > longest)
            longest = chars(labels[i]);
    int slant = (double)longest * 6.5 > room;
    for (size_t i = 0; i < n; i++) {
        double px = sturdy_svg_px(p, (double)i), py = p->area.y1 + 16;
        if (slant) {
            sturdy_buf_printf(p->b, "<text class=\"tk\" text-anchor=\"end\" "
                              "transform=\"translate(%.1f %.1f) rotate(-35)\">", px + 4, py - 4);
            sturdy_svg_escape(p->b, labels[i]);
            sturdy_buf_puts(p->b, "</text>\n");
        } else {
            sturdy_svg_text(p->b, px, py, "middle", "tk", labels[i]);
        }
    }
}

/* Bottom margin that slanted category labels need. */
static double slanted_margin(const char *const *labels, size_t n, double width)
{
    size_t longest = 0;
    for (size_t i = 0; i < n; i++)
        if (chars(labels[i]) > longest)
            longest = chars(labels[i]);
    double room = n ? (width - 80.0) / (double)n : 0;
    if ((double)longest * 6.5 <= room)
        return 0;
    double m = 40.0 + (double)longest * 6.5 * 0.58;
    return m > 160 ? 160 : m;
}

void fig_legend(sturdy_svg_plot *p, const char *const *labels, size_t n, int lines)
{
    double x = 8, y = 36;
    char cls[32];
    for (size_t i = 0; i < n; i++) {
        size_t w = chars(labels[i]);
        double need = 30 + (double)w * 6.5;
        if (x + need > p->width - 8 && x > 8) {
            x = 8;
            y += 14;      /* a second row runs into the plot's top margin only slightly */
        }
        snprintf(cls, sizeof cls, "s%zu", i % STURDY_SVG_SERIES);
        if (lines)
            sturdy_buf_printf(p->b, "<line class=\"ln %s d%zu\" x1=\"%.1f\" y1=\"%.1f\" "
                              "x2=\"%.1f\" y2=\"%.1f\"/>\n", cls, i % STURDY_SVG_SERIES, x,
                              y - 4, x + 18, y - 4);
        /* the marker in pixel coordinates: a one-off plot whose scale is the identity */
        sturdy_svg_plot q = *p;
        q.area = (sturdy_svg_rect){ 0, 0, p->width, p->height };
        q.x = (sturdy_svg_scale){ 0, 1, 0, 1 };
        q.y = (sturdy_svg_scale){ 0, 1, 0, 1 };
        sturdy_svg_marker(&q, x + 9, y - 4, i, cls);
        sturdy_svg_text(p->b, x + 24, y, "start", "lab", labels[i]);
        x += need;
    }
}

/* ---- means with intervals ------------------------------------------------------- */

static int fig_means(const sturdy_result *r, size_t ri, size_t t, fig_work *f)
{
    const sturdy_design *d = r->design;
    const sturdy_response_result *rr = &r->resp[ri];
    const sturdy_term *term = &d->terms[t];
    if (term->kind != STURDY_TERM_FACTORS || (term->order != 1 && term->order != 2))
        return 1;
    size_t fa = 0, fb = (size_t)-1, nm = 0;
    while (!(term->mask & (1u << fa)))
        fa++;
    if (term->order == 2)
        for (fb = fa + 1; !(term->mask & (1u << fb)); fb++) {}
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < rr->nmeans; i++) {
        const sturdy_mean_result *m = &rr->means[i];
        if (m->term != t || !isfinite(m->estimate))
            continue;
        nm++;
        lo = fmin(lo, isfinite(m->ci.lo) ? m->ci.lo : m->estimate);
        hi = fmax(hi, isfinite(m->ci.hi) ? m->ci.hi : m->estimate);
    }
    if (!nm)
        return 1;
    const sturdy_factor *A = &d->factors[fa];
    const sturdy_factor *B = term->order == 2 ? &d->factors[fb] : NULL;
    const char *resp = d->resp_names[ri];
    double conf = r->opts.conf * 100;
    fig_name(f, resp, "means", term->label);
    snprintf(f->title, sizeof f->title, "%s: means by %s%s%s", resp, A->name,
             B ? ", one line per level of " : "", B ? B->name : "");
    char desc[512];
    snprintf(desc, sizeof desc, "Least-squares means of %s for each level of %s%s%s, with "
             "%g%% t intervals, in the response's units. The numbers are in the table "
             "beside the figure.", resp, A->name, B ? " and each level of " : "",
             B ? B->name : "", conf);
    sturdy_svg_plot p;
    memset(&p, 0, sizeof p);
    p.x_categories = 1;
    p.margin_bottom = slanted_margin((const char *const *)A->levels, A->nlevels, FIG_W);
    double h = FIG_H + p.margin_bottom;
    sturdy_svg_begin(&f->svg, FIG_W, h, f->id, f->title, desc);
    char ylab[256];
    snprintf(ylab, sizeof ylab, "%s (mean, %g%% interval)", resp, conf);
    sturdy_svg_frame(&p, &f->svg, FIG_W, h, -0.5, (double)A->nlevels - 0.5, lo, hi, f->title,
                     A->name, ylab);
    fig_categories(&p, (const char *const *)A->levels, A->nlevels);
    size_t ns = B ? B->nlevels : 1;
    if (B)
        fig_legend(&p, (const char *const *)B->levels, B->nlevels, 1);
    double xs[64], ys[64];
    const char *heads3[] = { A->name, "mean", "SE", "interval low", "interval high",
                             "bootstrap low", "bootstrap high", NULL };
    const char *heads4[] = { A->name, B ? B->name : "", "mean", "SE", "interval low",
                             "interval high", "bootstrap low", "bootstrap high", NULL };
    char cap[300];
    snprintf(cap, sizeof cap, "Means of %s (%g%% intervals: t and bootstrap percentile)",
             resp, conf);
    fig_table_open(&f->table, cap, B ? heads4 : heads3);
    for (size_t s = 0; s < ns; s++) {
        char cls[48];
        snprintf(cls, sizeof cls, "s%zu", s % STURDY_SVG_SERIES);
        double dodge = ns > 1 ? ((double)s - 0.5 * (double)(ns - 1)) * fmin(0.08, 0.6 / (double)ns)
                              : 0.0;
        size_t k = 0;
        for (size_t a = 0; a < A->nlevels; a++) {
            const sturdy_mean_result *m = NULL;
            for (size_t i = 0; i < rr->nmeans; i++)
                if (rr->means[i].term == t && rr->means[i].level[fa] == a &&
                    (!B || rr->means[i].level[fb] == s))
                    m = &rr->means[i];
            double x = (double)a + dodge;
            if (k < 64) {
                xs[k] = x;
                ys[k++] = m ? m->estimate : NAN;
            }
            if (!m)
                continue;
            char ebc[64];
            snprintf(ebc, sizeof ebc, "eb %s", cls);
            sturdy_svg_line(&p, x, m->ci.lo, x, m->ci.hi, ebc);
            sturdy_svg_marker(&p, x, m->estimate, s, cls);
            char c[7][32];
            fig_num(m->estimate, c[0]); fig_num(m->se, c[1]);
            fig_num(m->ci.lo, c[2]); fig_num(m->ci.hi, c[3]);
            fig_num(m->ci_boot.lo, c[4]); fig_num(m->ci_boot.hi, c[5]);
            const char *row[8] = { A->levels[a] };
            size_t q = 1;
            if (B) row[q++] = B->levels[s];
            for (int e = 0; e < 6; e++) row[q++] = c[e];
            fig_table_row(&f->table, row, q);
        }
        if (B) {
            char lc[64];
            snprintf(lc, sizeof lc, "ln %s d%zu", cls, s % STURDY_SVG_SERIES);
            sturdy_svg_polyline(&p, xs, ys, k, lc);
        }
    }
    fig_table_close(&f->table);
    sturdy_svg_end(&f->svg);
    return 0;
}

/* ---- effect sizes with every interval --------------------------------------------- */

/* The frame of a figure with one category per term on x (effect sizes, influential
 * rows): its width *w from the number of terms, its height *h with room below for
 * slanted labels. */
static void term_frame(fig_work *f, sturdy_svg_plot *p, const char *const *labels, size_t n,
                       const char *desc, double ylo, double yhi, const char *ylabel,
                       double *w_out, double *h_out)
{
    memset(p, 0, sizeof *p);
    p->x_categories = 1;
    double w = fmax(FIG_W, 110.0 * (double)n + 80.0);
    p->margin_bottom = slanted_margin(labels, n, w);
    double h = FIG_H + p->margin_bottom;
    sturdy_svg_begin(&f->svg, w, h, f->id, f->title, desc);
    sturdy_svg_frame(p, &f->svg, w, h, -0.5, (double)n - 0.5, ylo, yhi, f->title, "term",
                     ylabel);
    fig_categories(p, labels, n);
    *w_out = w;
    *h_out = h;
}

static int fig_effects(const sturdy_result *r, size_t ri, fig_work *f)
{
    const sturdy_response_result *rr = &r->resp[ri];
    const int es = STURDY_ES_PARTIAL_ETA2;
    static const int methods[] = { STURDY_CI_NONCENTRAL_F, STURDY_CI_PERCENTILE, STURDY_CI_BCA,
                                   STURDY_CI_TEST_INVERSION, STURDY_CI_STUDENTIZED };
    static const char *const mnames[] = { "noncentral F", "percentile", "BCa",
                                          "test inversion", "studentized test inversion" };
    const size_t nmeth = 5;
    const char *labels[64];
    size_t idx[64], n = 0;
    double hi = 0.0;
    for (size_t t = 0; t < rr->nterms && n < 64; t++) {
        const sturdy_term_result *tr = &rr->terms[t];
        if (!isfinite(tr->es[es]))
            continue;
        labels[n] = tr->label;
        idx[n++] = t;
        sturdy_pair iv[5] = { tr->ncf, tr->ci_pct[es], tr->ci_bca[es], tr->ci_ti[es],
                              tr->ci_sti[es] };
        hi = fmax(hi, tr->es[es]);
        for (size_t k = 0; k < nmeth; k++)
            if (isfinite(iv[k].hi))
                hi = fmax(hi, iv[k].hi);
    }
    if (!n)
        return 1;
    const char *resp = r->design->resp_names[ri];
    double conf = r->opts.conf * 100;
    fig_name(f, resp, "effect-sizes", NULL);
    snprintf(f->title, sizeof f->title, "%s: partial η² of each term, every %g%% interval",
             resp, conf);
    char desc[512];
    snprintf(desc, sizeof desc, "For each term, the partial eta squared estimate (a black "
             "tick) and its %g%% intervals side by side: noncentral F, bootstrap percentile, "
             "BCa, test inversion and studentized test inversion; the recommended interval is "
             "drawn thick and named in the table.", conf);
    sturdy_svg_plot p;
    double w, h;
    term_frame(f, &p, labels, n, desc, 0.0, fmin(1.0, hi), "partial η² (0 to 1)", &w, &h);
    fig_legend(&p, mnames, nmeth, 0);
    sturdy_svg_text(&f->svg, w - 8, h - 8, "end", "lab",
                    "thick: the recommended interval; black tick: the estimate");
    const char *heads[] = { "term", "estimate", "noncentral F", "percentile", "BCa",
                            "test inversion", "studentized test inversion", "recommended",
                            NULL };
    char cap[200];
    snprintf(cap, sizeof cap, "Partial η² and its %g%% intervals", conf);
    fig_table_open(&f->table, cap, heads);
    for (size_t i = 0; i < n; i++) {
        const sturdy_term_result *tr = &rr->terms[idx[i]];
        sturdy_pair iv[5] = { tr->ncf, tr->ci_pct[es], tr->ci_bca[es], tr->ci_ti[es],
                              tr->ci_sti[es] };
        sturdy_svg_line(&p, (double)i - 0.4, tr->es[es], (double)i + 0.4, tr->es[es], "ax");
        char cells[8][80];
        const char *row[8];
        snprintf(cells[0], sizeof cells[0], "%s", tr->label);
        fig_num(tr->es[es], cells[1]);
        const char *rec = "none";
        for (size_t k = 0; k < nmeth; k++) {
            int is_rec = tr->ci_rec_method[es] == methods[k];
            double x = (double)i + ((double)k - 2.0) * 0.14;
            char cls[48];
            snprintf(cls, sizeof cls, "eb s%zu%s", k, is_rec ? " rec" : "");
            sturdy_svg_line(&p, x, iv[k].lo, x, iv[k].hi, cls);
            char a[32], b[32];
            fig_num(iv[k].lo, a);
            fig_num(iv[k].hi, b);
            snprintf(cells[2 + k], sizeof cells[2 + k], "%s – %s", a, b);
            if (is_rec)
                rec = mnames[k];
        }
        for (int c = 0; c < 7; c++) row[c] = cells[c];
        row[7] = rec;
        fig_table_row(&f->table, row, 8);
    }
    fig_table_close(&f->table);
    sturdy_svg_end(&f->svg);
    return 0;
}

/* ---- resampled F* with the F density -------------------------------------------- */

static int fig_null(const sturdy_result *r, size_t ri, size_t t, fig_work *f)
{
    const sturdy_response_result *rr = &r->resp[ri];
    const sturdy_term_result *tr = &rr->terms[t];
    double df1 = tr->df, df2 = rr->df_error;
    double top = sturdy_fhist_top(tr->f, df1, df2);
    uint64_t total = 0;
    for (size_t q = 0; q < STURDY_FHIST_BINS; q++)
        total += tr->f_hist[q];
    if (!(top > 0) || total == 0)
        return 1;
    const size_t nb = STURDY_FHIST_BINS - 1;
    const uint64_t over = tr->f_hist[nb];
    double width = top / (double)nb, ymax = 0;
    for (size_t q = 0; q < nb; q++)
        ymax = fmax(ymax, (double)tr->f_hist[q]);
    double cx[DENSITY_POINTS + 1], cy[DENSITY_POINTS + 1];
    for (size_t i = 0; i <= DENSITY_POINTS; i++) {
        /* from half a bin on: the density of F(1, ·) is unbounded at 0 */
        cx[i] = 0.5 * width + (top - 0.5 * width) * (double)i / DENSITY_POINTS;
        cy[i] = (double)total * width * sturdy_f_density(cx[i], df1, df2);
        ymax = fmax(ymax, cy[i]);
    }
    const char *resp = r->design->resp_names[ri];
    fig_name(f, resp, "null-F", tr->label);
    snprintf(f->title, sizeof f->title, "%s: resampled F* of %s", resp, tr->label);
    char desc[640], fo[32], pp[32];
    fig_num(tr->f, fo);
    fig_num(tr->p_perm, pp);
    snprintf(desc, sizeof desc, "Histogram of the F statistic of %s over %" PRIu64
             " rearrangements, on %zu fixed bins from 0 to %g, with the F(%g, %g) density "
             "scaled to the counts and the observed F = %s marked; %" PRIu64 " rearrangements "
             "gave F* of at least %g. Resampled p = %s.", tr->label, total, nb, top, df1, df2,
             fo, over, top, pp);
    sturdy_svg_plot p;
    memset(&p, 0, sizeof p);
    sturdy_svg_begin(&f->svg, FIG_W, FIG_H, f->id, f->title, desc);
    char xlab[200];
    snprintf(xlab, sizeof xlab, "F* of %s (on %g and %g df)", tr->label, df1, df2);
    sturdy_svg_frame(&p, &f->svg, FIG_W, FIG_H, 0.0, top, 0.0, ymax * 1.05, f->title, xlab,
                     "rearrangements per bin");
    const char *leg[] = { "resampled F*", "F density", "observed F" };
    (void)leg;
    for (size_t q = 0; q < nb; q++)
        if (tr->f_hist[q])
            sturdy_svg_bar(&p, (double)q * width, (double)(q + 1) * width, 0.0,
                           (double)tr->f_hist[q], "bar");
    sturdy_svg_polyline(&p, cx, cy, DENSITY_POINTS + 1, "den");
    char lab[96];
    double yl = p.yt.hi;
    if (tr->f < top) {
        sturdy_svg_line(&p, tr->f, 0.0, tr->f, yl, "obs");
        snprintf(lab, sizeof lab, "observed F = %s", fo);
        double px = sturdy_svg_px(&p, tr->f);
        int right = px > 0.5 * (p.area.x0 + p.area.x1);
        sturdy_svg_text(&f->svg, px + (right ? -6 : 6), p.area.y0 + 14, right ? "end" : "start",
                        "lab", lab);
    } else {
        snprintf(lab, sizeof lab, "observed F = %s, beyond the axis →", fo);
        sturdy_svg_text(&f->svg, p.area.x1 - 4, p.area.y0 + 14, "end", "lab", lab);
    }
    if (over) {
        snprintf(lab, sizeof lab, "%" PRIu64 " rearrangements beyond %g", over, top);
        sturdy_svg_text(&f->svg, p.area.x1 - 4, p.area.y0 + 30, "end", "lab", lab);
    }
    /* a key in the legend row */
    sturdy_buf_printf(&f->svg, "<rect class=\"bar\" x=\"8\" y=\"27\" width=\"14\" height=\"10\"/>\n");
    sturdy_svg_text(&f->svg, 28, 36, "start", "lab", "resampled F*");
    sturdy_buf_printf(&f->svg, "<line class=\"den\" x1=\"120\" y1=\"32\" x2=\"140\" y2=\"32\"/>\n");
    snprintf(lab, sizeof lab, "F(%g, %g) density", df1, df2);
    sturdy_svg_text(&f->svg, 146, 36, "start", "lab", lab);
    sturdy_buf_printf(&f->svg, "<line class=\"obs\" x1=\"290\" y1=\"27\" x2=\"290\" y2=\"38\"/>\n");
    sturdy_svg_text(&f->svg, 298, 36, "start", "lab", "observed F");
    sturdy_svg_end(&f->svg);
    const char *heads[] = { "bin from", "bin to", "rearrangements", "expected under F",
                            NULL };
    char cap[300];
    snprintf(cap, sizeof cap, "F* of %s: counts per bin (observed F = %s)", tr->label, fo);
    fig_table_open(&f->table, cap, heads);
    for (size_t q = 0; q <= nb; q++) {
        char a[32], b[32], c[32], e[32];
        double x0 = (double)q * width, x1 = q < nb ? (double)(q + 1) * width : INFINITY;
        fig_num(x0, a);
        fig_num(x1, b);
        snprintf(c, sizeof c, "%" PRIu64, tr->f_hist[q]);
        double pe = sturdy_f_sf(x0, df1, df2) - (q < nb ? sturdy_f_sf(x1, df1, df2) : 0.0);
        fig_num((double)total * pe, e);
        const char *row[] = { a, b, c, e };
        fig_table_row(&f->table, row, 4);
    }
    fig_table_close(&f->table);
    return 0;
}

/* ---- the most influential rows ------------------------------------------------------ */

static int fig_influence(const sturdy_result *r, size_t ri, fig_work *f)
{
    const sturdy_response_result *rr = &r->resp[ri];
    const char *labels[64];
    size_t idx[64], n = 0;
    double lo = 0.0;
    for (size_t t = 0; t < rr->nterms && n < 64; t++) {
        const sturdy_term_result *tr = &rr->terms[t];
        if (!tr->sens.searched || !tr->sens.ntop || !(tr->p > 0))
            continue;
        labels[n] = tr->label;
        idx[n++] = t;
        lo = fmin(lo, log10(tr->p));
        for (size_t k = 0; k < tr->sens.ntop; k++)
            if (tr->sens.top[k].p_without > 0)
                lo = fmin(lo, log10(tr->sens.top[k].p_without));
    }
    if (!n)
        return 1;
    const char *resp = r->design->resp_names[ri];
    double alpha = r->opts.alpha;
    fig_name(f, resp, "influential-rows", NULL);
    snprintf(f->title, sizeof f->title, "%s: F-test p without the most influential rows",
             resp);
    char desc[512];
    snprintf(desc, sizeof desc, "For each term, the F-test p-value with all rows (circle) "
             "and with each of its most influential rows removed alone (squares, labelled by "
             "data row), on a log scale; the dashed line is alpha = %g.", alpha);
    sturdy_svg_plot p;
    double w, h;
    term_frame(f, &p, labels, n, desc, fmin(lo, log10(alpha)), 0.0, "log10 of the F-test p", &w,
               &h);
    const char *leg[] = { "all rows", "without one row" };
    fig_legend(&p, leg, 2, 0);
    sturdy_svg_line(&p, -0.5, log10(alpha), (double)n - 0.5, log10(alpha), "ref");
    const char *heads[] = { "term", "p, all rows", "row", "file line", "F without it",
                            "p without it", NULL };
    fig_table_open(&f->table, "The rows that move each term's F-test p most", heads);
    for (size_t i = 0; i < n; i++) {
        const sturdy_term_result *tr = &rr->terms[idx[i]];
        sturdy_svg_marker(&p, (double)i - 0.15, log10(tr->p), 0, "s0");
        char pa[32];
        fig_num(tr->p, pa);
        double used[SENS_TOP];       /* label heights so far: close ones are moved apart */
        size_t nused = 0;
        for (size_t k = 0; k < tr->sens.ntop; k++) {
            const sturdy_sens_row *sr = &tr->sens.top[k];
            double y = sr->p_without > 0 ? log10(sr->p_without) : NAN;
            double x = (double)i + 0.1;
            sturdy_svg_line(&p, (double)i - 0.15, log10(tr->p), x, y, "gr");
            sturdy_svg_marker(&p, x, y, 1, "s1");
            char lab[48], a[32], b[32], c[32], d[32];
            snprintf(lab, sizeof lab, "row %zu", sr->row);
            if (isfinite(y)) {
                double py = sturdy_svg_py(&p, y) + 4;
                /* move the label below every earlier one closer than a line; the
                   margin keeps a label placed exactly one line (11 px) below another
                   from counting as closer when the sum rounds down, which looped
                   forever. Each move raises py by more than the margin, so it ends. */
                for (int moved = 1; moved;) {
                    moved = 0;
                    for (size_t u = 0; u < nused; u++)
                        if (fabs(py - used[u]) < 11.0 - 1e-6) {
                            py = used[u] + 11.0;
                            moved = 1;
                        }
                }
                used[nused++] = py;
                sturdy_svg_text(&f->svg, sturdy_svg_px(&p, x) + 7, py, "start", "lab", lab);
            }
            snprintf(a, sizeof a, "%zu", sr->row);
            snprintf(b, sizeof b, "%zu", sr->line);
            fig_num(sr->f_without, c);
            fig_num(sr->p_without, d);
            const char *row[] = { tr->label, pa, a, b, c, d };
            fig_table_row(&f->table, row, 6);
        }
    }
    fig_table_close(&f->table);
    sturdy_svg_end(&f->svg);
    return 0;
}

/* ---- the walk ------------------------------------------------------------------------ */

typedef struct {
    sturdy_fig_fn fn;
    void *arg;
    size_t index;
    int stopped, failed;
} walk;

static void emit(walk *w, fig_work *f, size_t ri, int made)
{
    if (!made && !w->stopped) {
        if (f->svg.failed || f->table.failed) {
            w->failed = 1;
            w->stopped = 1;
        } else {
            sturdy_fig fig = { ri, w->index, f->name, f->title, &f->svg, &f->table };
            if (w->fn(w->arg, &fig))
                w->stopped = 1;
        }
        w->index++;
    }
    sturdy_buf_free(&f->svg);
    sturdy_buf_free(&f->table);
    snprintf(f->id, sizeof f->id, "fig%zu", w->index);
}

sturdy_status sturdy_figures_each(const sturdy_result *r, sturdy_fig_fn fn, void *arg)
{
    if (!r->design)
        return STURDY_EUSAGE;
    walk w = { fn, arg, 0, 0, 0 };
    fig_work f;
    memset(&f, 0, sizeof f);
    sturdy_buf_init(&f.svg);
    sturdy_buf_init(&f.table);
    snprintf(f.id, sizeof f.id, "fig%zu", w.index);
    for (size_t ri = 0; ri < r->nresp && !w.stopped; ri++) {
        const sturdy_response_result *rr = &r->resp[ri];
        for (size_t t = 0; t < rr->nterms && !w.stopped; t++)
            emit(&w, &f, ri, fig_means(r, ri, t, &f));
        if (!w.stopped) emit(&w, &f, ri, fig_effects(r, ri, &f));
        for (size_t t = 0; t < rr->nterms && !w.stopped; t++)
            emit(&w, &f, ri, fig_null(r, ri, t, &f));
        if (!w.stopped) emit(&w, &f, ri, fig_qq(r, ri, &f));
        if (!w.stopped) emit(&w, &f, ri, fig_fitted(r, ri, &f));
        if (!w.stopped) emit(&w, &f, ri, fig_spread(r, ri, &f));
        if (!w.stopped) emit(&w, &f, ri, fig_influence(r, ri, &f));
    }
    sturdy_buf_free(&f.svg);
    sturdy_buf_free(&f.table);
    return w.failed ? STURDY_EINTERNAL : w.stopped ? STURDY_EOUTPUT : STURDY_OK;
}
