/* anova.c — the classical table of one response: SS by type, F, p, effect sizes and the
 * noncentral-F interval for partial η², plus fitted values, residuals and cell summaries. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "classical/classical.h"
#include "core/core.h"
#include "sturdy/dist.h"

void sturdy_effect_sizes(double ss, double df, double sse, double dfe, double sst, double n,
                         double es[STURDY_NES])
{
    double mse = dfe > 0 ? sse / dfe : NAN;
    es[STURDY_ES_ETA2] = sst > 0 ? ss / sst : NAN;
    es[STURDY_ES_PARTIAL_ETA2] = (dfe > 0 && ss + sse > 0) ? ss / (ss + sse) : NAN;
    /* Hays (1963) ω² and its partial form (Olejnik & Algina 2003); both may be negative
     * in small samples and are reported as they are, not clipped at zero. */
    es[STURDY_ES_OMEGA2] = (dfe > 0 && sst + mse > 0) ? (ss - df * mse) / (sst + mse) : NAN;
    double den = ss + (n - df) * mse;
    es[STURDY_ES_PARTIAL_OMEGA2] = (dfe > 0 && den > 0) ? (ss - df * mse) / den : NAN;
    double pe = es[STURDY_ES_PARTIAL_ETA2];
    es[STURDY_ES_COHENS_F] = (pe >= 0 && pe < 1) ? sqrt(pe / (1 - pe)) : NAN;
}

static sturdy_status cell_summaries(const sturdy_design *d, const double *y, double ref,
                                    sturdy_response_result *out, char *err)
{
    size_t C = d->ncells;
    out->cell_mean = sturdy_calloc(C, sizeof *out->cell_mean);
    out->cell_sd = sturdy_calloc(C, sizeof *out->cell_sd);
    double *ss = sturdy_calloc(C, sizeof *ss);
    if (!out->cell_mean || !out->cell_sd || !ss) {
        sturdy_free(ss);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t i = 0; i < d->n; i++)
        out->cell_mean[d->cell[i]] += y[i];
    for (size_t c = 0; c < C; c++) {
        assert(d->cell_count[c] > 0);   /* cells are the combinations that occur */
        out->cell_mean[c] /= (double)d->cell_count[c];
    }
    for (size_t i = 0; i < d->n; i++) {
        double dv = y[i] - out->cell_mean[d->cell[i]];
        ss[d->cell[i]] += dv * dv;
    }
    for (size_t c = 0; c < C; c++) {
        out->cell_sd[c] = d->cell_count[c] > 1 ? sqrt(ss[c] / (double)(d->cell_count[c] - 1))
                                               : NAN;
        out->cell_mean[c] += ref;
    }
    sturdy_free(ss);
    return STURDY_OK;
}

static sturdy_status set_note(char **slot, const char *text, char *err)
{
    sturdy_free(*slot);
    *slot = sturdy_strdup(text);
    return *slot ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

/* The full model's fit of y: fitted values and residuals (out), the error and total rows
 * and the error row's note. s: K group sums (filled); work: rank + K scratch. */
static sturdy_status fit_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                  double *s, double *work, sturdy_response_result *out,
                                  char *err)
{
    size_t n = d->n;
    const double *y = d->y + r * n;
    double mean;
    double sst = sturdy_centred_ss(y, n, &mean);
    if (!(sst > 0))
        return sturdy_fail(err, STURDY_EMODEL,
                           "%s: response '%s' is constant in the rows used (every value is "
                           "the same), so there is no variation to analyse",
                           d->source, d->resp_names[r]);
    sturdy_model_group_scaled(d, m, y, s);
    sturdy_model_project(d, m, m->U, m->rank, s, work, out->fitted);
    double sse = 0.0;
    for (size_t i = 0; i < n; i++) {
        out->residual[i] = y[i] - out->fitted[i];
        sse += out->residual[i] * out->residual[i];
    }
    double dfe = (double)m->df_error;
    out->df_error = dfe;
    out->ss_error = sse;
    out->ms_error = dfe > 0 ? sse / dfe : NAN;
    out->df_total = (double)(n - 1);
    out->ss_total = sst;
    if (dfe == 0)
        return set_note(&out->error_note,
                        "no residual degrees of freedom: the model has as many parameters "
                        "as rows, so no F-test is possible; lower the interaction order or "
                        "add replicates", err);
    if (!(sse > 0))
        return set_note(&out->error_note,
                        "the residuals are all zero (the model fits exactly), so F is "
                        "undefined", err);
    return STURDY_OK;
}

/* A term's label, kind and factor names; every later number NaN until computed. */
static sturdy_status term_identity(const sturdy_design *d, size_t t, sturdy_term_result *tr,
                                   char *err)
{
    const sturdy_term *term = &d->terms[t];
    tr->label = sturdy_strdup(term->label);
    tr->kind = term->kind;
    tr->nfactors = term->kind == STURDY_TERM_FACTORS ? term->order : 1;
    tr->factors = sturdy_calloc(tr->nfactors, sizeof *tr->factors);
    if (!tr->label || !tr->factors)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (term->kind == STURDY_TERM_FACTORS) {
        size_t k = 0;
        for (size_t f = 0; f < d->nfactors; f++)
            if (term->mask & (1u << f))
                tr->factors[k++] = sturdy_strdup(d->factors[f].name);
    } else {
        tr->factors[0] = sturdy_strdup(term->label);
    }
    for (size_t f = 0; f < tr->nfactors; f++)
        if (!tr->factors[f])
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    tr->f = tr->p = NAN;
    tr->ncf.lo = tr->ncf.hi = NAN;
    for (int e = 0; e < STURDY_NES; e++)
        tr->es[e] = NAN;
    tr->p_perm = tr->p_perm_fwer = tr->p_perm_holm = NAN;
    tr->p_tail = tr->tail.threshold = tr->tail.xi = tr->tail.sigma = NAN;
    tr->tail.ad = tr->tail.ad_p = NAN;
    tr->p_perm_ci.lo = tr->p_perm_ci.hi = NAN;
    for (int e = 0; e < STURDY_NES; e++) {
        tr->ci_pct[e].lo = tr->ci_pct[e].hi = tr->ci_bca[e].lo = tr->ci_bca[e].hi = NAN;
        tr->ci_ti[e].lo = tr->ci_ti[e].hi = tr->ci_rec[e].lo = tr->ci_rec[e].hi = NAN;
        tr->ci_rec_method[e] = STURDY_CI_NONE;
    }
    return STURDY_OK;
}

/* Term t's row of the table: SS, MS, effect sizes, F and p, or the note saying why not. */
static sturdy_status term_row(const sturdy_design *d, const sturdy_model *m, size_t t,
                              const double *s, sturdy_response_result *out, char *err)
{
    sturdy_term_result *tr = &out->terms[t];
    const sturdy_term_basis *tb = &m->terms[t];
    sturdy_status st = term_identity(d, t, tr, err);
    if (st)
        return st;
    tr->df = (double)tb->df;
    tr->ss = tb->df ? sturdy_proj_norm2(tb->Uterm, m->K, tb->df, s) : 0.0;
    tr->ms = tb->df ? tr->ss / tr->df : NAN;
    if (!tb->testable) {
        tr->ss = tr->ms = NAN;
        return set_note(&tr->note, tb->why_not, err);
    }
    double dfe = out->df_error, sse = out->ss_error;
    sturdy_effect_sizes(tr->ss, tr->df, sse, dfe, out->ss_total, (double)d->n, tr->es);
    if (!(dfe > 0 && sse > 0))
        return set_note(&tr->note, out->error_note, err);
    tr->f = tr->ms / out->ms_error;
    tr->p = sturdy_f_sf(tr->f, tr->df, dfe);
    return STURDY_OK;
}

/* Steiger (2004): an interval for the noncentrality λ = N·f² inverted from the noncentral
 * F; partial η² = f²/(1+f²) = λ/(λ + N) with N the rows used (in a one-way design
 * N = df1 + df2 + 1, the form often quoted). Each term's root search is independent and
 * costs many noncentral-F evaluations: one thread per term. */
static void ncf_intervals(const sturdy_design *d, double conf, int threads,
                          sturdy_response_result *out)
{
    int64_t nterms = (int64_t)d->nterms;
    double dfe = out->df_error, n = (double)d->n;
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
    for (int64_t t = 0; t < nterms; t++) {
        sturdy_term_result *tr = &out->terms[t];
        double lam_lo, lam_hi, eta_lo, eta_hi;
        if (!(tr->f >= 0))
            continue;
        if (sturdy_ncf_eta2_interval(tr->f, tr->df, dfe, conf, &eta_lo, &eta_hi, &lam_lo,
                                     &lam_hi) == STURDY_OK) {
            tr->ncf.lo = lam_lo / (lam_lo + n);
            tr->ncf.hi = lam_hi / (lam_hi + n);
        }
    }
}

sturdy_status sturdy_anova_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                    double conf, int threads, sturdy_response_result *out,
                                    char *err)
{
    size_t n = d->n, K = m->K;
    assert(r < d->nresp && K == d->ngroups && m->nterms == d->nterms && threads >= 1);
    out->name = sturdy_strdup(d->resp_names[r]);
    out->boot_world_var = out->kurt_obs = out->kurt_c1 = out->kurt_c2 = NAN;
    out->nterms = d->nterms;
    out->terms = sturdy_calloc(d->nterms ? d->nterms : 1, sizeof *out->terms);
    out->fitted = sturdy_malloc(n * sizeof *out->fitted);
    out->residual = sturdy_malloc(n * sizeof *out->residual);
    double *s = sturdy_malloc(K * sizeof *s), *work = sturdy_malloc((m->rank + K) * sizeof *work);
    sturdy_status st = STURDY_OK;
    if (!out->name || !out->terms || !out->fitted || !out->residual || !s || !work)
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (!st)
        st = fit_response(d, m, r, s, work, out, err);
    for (size_t t = 0; t < d->nterms && !st; t++)
        st = term_row(d, m, t, s, out, err);
    sturdy_free(s);
    sturdy_free(work);
    if (st)
        return st;
    ncf_intervals(d, conf, threads, out);
    for (size_t i = 0; i < n; i++)
        out->fitted[i] += d->y_ref[r];
    return cell_summaries(d, d->y + r * n, d->y_ref[r], out, err);
}
