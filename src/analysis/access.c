/* access.c — the read-only accessors of a result (analysis.h), for results of a run and
 * results read back alike. Out-of-range indices give NaN or NULL, never a crash. */
#include <math.h>
#include <string.h>

#include "core/result.h"
#include "sturdy/advanced.h"

static const sturdy_term_result *term_at(const sturdy_result *r, size_t resp, size_t term)
{
    if (!r || resp >= r->nresp || term >= r->resp[resp].nterms)
        return NULL;
    return &r->resp[resp].terms[term];
}

const sturdy_options *sturdy_result_options(const sturdy_result *r)
{
    return &r->opts;
}

const sturdy_design *sturdy_result_design(const sturdy_result *r)
{
    return r ? r->design : NULL;
}

void sturdy_result_info(const sturdy_result *r, sturdy_run_info *out)
{
    memset(out, 0, sizeof *out);
    const sturdy_design *d = r->design;
    out->input = d ? d->source : r->input;
    out->rows_read = d ? d->rows_read : r->rows_read;
    out->rows_used = d ? d->n : r->rows_used;
    out->nperm = r->nperm;
    out->exact = r->exact;
    out->nboot = r->nboot;
    out->perm_begin = r->perm_begin;
    out->perm_end = r->perm_end;
    out->boot_begin = r->boot_begin;
    out->boot_end = r->boot_end;
    out->finished = r->finished;
    out->data_checksum = r->data_checksum;
}

size_t sturdy_result_nnotes(const sturdy_result *r) { return r ? r->nnotes : 0; }

const char *sturdy_result_note(const sturdy_result *r, size_t i)
{
    return r && i < r->nnotes ? r->notes[i] : NULL;
}

size_t sturdy_result_nresponses(const sturdy_result *r) { return r ? r->nresp : 0; }

const char *sturdy_result_response(const sturdy_result *r, size_t resp)
{
    return r && resp < r->nresp ? r->resp[resp].name : NULL;
}

size_t sturdy_result_nterms(const sturdy_result *r)
{
    return r && r->nresp ? r->resp[0].nterms : 0;
}

const char *sturdy_result_term(const sturdy_result *r, size_t term)
{
    const sturdy_term_result *t = term_at(r, 0, term);
    return t ? t->label : NULL;
}

double sturdy_term_get(const sturdy_result *r, size_t resp, size_t term, sturdy_term_value v)
{
    const sturdy_term_result *t = term_at(r, resp, term);
    if (!t)
        return NAN;
    switch (v) {
    case STURDY_TV_DF: return t->df;
    case STURDY_TV_SS: return t->ss;
    case STURDY_TV_MS: return t->ms;
    case STURDY_TV_F: return t->f;
    case STURDY_TV_P: return t->p;
    case STURDY_TV_P_PERM: return t->p_perm;
    case STURDY_TV_P_PERM_LO: return t->p_perm_ci.lo;
    case STURDY_TV_P_PERM_HI: return t->p_perm_ci.hi;
    case STURDY_TV_P_PERM_FWER: return t->p_perm_fwer;
    case STURDY_TV_P_PERM_HOLM: return t->p_perm_holm;
    case STURDY_TV_UV_STAT: return t->uv.stat;
    case STURDY_TV_UV_DF1: return t->uv.df1;
    case STURDY_TV_UV_DF2: return t->uv.df2;
    case STURDY_TV_UV_P: return t->uv.p;
    case STURDY_TV_UV_P_PERM: return t->uv.p_perm;
    case STURDY_TV_ATS_P: return t->uv.ats_p;
    case STURDY_TV_SENS_ROWS: return t->sens.nrows ? (double)t->sens.nrows : NAN;
    case STURDY_TV_SENS_P_WITHOUT: return t->sens.nrows ? t->sens.p_without : NAN;
    case STURDY_TV_SENS_P_PERM_WITHOUT: return t->sens.nrows ? t->sens.p_perm_without : NAN;
    case STURDY_TV_RS_STAT: return r->opts.resistant ? t->rs.stat : NAN;
    case STURDY_TV_RS_P_PERM: return r->opts.resistant ? t->rs.p_perm : NAN;
    case STURDY_TV_P_TAIL: return r->opts.tail_fit ? t->p_tail : NAN;
    case STURDY_TV_COUNT: break;
    }
    return NAN;
}

double sturdy_term_effect(const sturdy_result *r, size_t resp, size_t term, int es)
{
    const sturdy_term_result *t = term_at(r, resp, term);
    return t && es >= 0 && es < STURDY_NES ? t->es[es] : NAN;
}

int sturdy_term_interval(const sturdy_result *r, size_t resp, size_t term, int es,
                         sturdy_ci_method method, double *lo, double *hi)
{
    const sturdy_term_result *t = term_at(r, resp, term);
    sturdy_pair p = { NAN, NAN };
    if (t && es >= 0 && es < STURDY_NES) {
        if (method == STURDY_CI_PERCENTILE) p = t->ci_pct[es];
        else if (method == STURDY_CI_BCA) p = t->ci_bca[es];
        else if (method == STURDY_CI_TEST_INVERSION) p = t->ci_ti[es];
        else if (method == STURDY_CI_STUDENTIZED) p = t->ci_sti[es];
        else if (method == STURDY_CI_NONCENTRAL_F && es != STURDY_ES_ETA2 &&
                 es != STURDY_ES_OMEGA2) {
            /* stored as partial η²; partial ω² is the same population quantity, and
               Cohen's f = √(λ/N) = √(η²_p/(1 − η²_p)) */
            p = t->ncf;
            if (es == STURDY_ES_COHENS_F) {
                p.lo = sqrt(p.lo / (1 - p.lo));
                p.hi = p.hi >= 1 ? INFINITY : sqrt(p.hi / (1 - p.hi));
            }
        }
    }
    *lo = p.lo;
    *hi = p.hi;
    return !isnan(p.lo) && !isnan(p.hi);
}

const char *sturdy_term_note(const sturdy_result *r, size_t resp, size_t term,
                             sturdy_note_kind kind)
{
    const sturdy_term_result *t = term_at(r, resp, term);
    if (!t)
        return NULL;
    switch (kind) {
    case STURDY_NOTE_CLASSICAL: return t->note;
    case STURDY_NOTE_RESAMPLING: return t->perm_note;
    case STURDY_NOTE_BOOTSTRAP: return t->boot_note;
    case STURDY_NOTE_UNEQUAL: return t->uv.note;
    case STURDY_NOTE_VERDICT: return t->verdict_reason;
    case STURDY_NOTE_INTERVALS: return t->ci_note;
    }
    return NULL;
}

const char *sturdy_term_recommended(const sturdy_result *r, size_t resp, size_t term, int es,
                                    sturdy_ci_method *method, double *lo, double *hi)
{
    const sturdy_term_result *t = term_at(r, resp, term);
    int ok = t && es >= 0 && es < STURDY_NES;
    *method = ok ? (sturdy_ci_method)t->ci_rec_method[es] : STURDY_CI_NONE;
    *lo = ok ? t->ci_rec[es].lo : NAN;
    *hi = ok ? t->ci_rec[es].hi : NAN;
    return ok ? t->ci_rec_reason[es] : NULL;
}

sturdy_verdict sturdy_term_verdict(const sturdy_result *r, size_t resp, size_t term)
{
    const sturdy_term_result *t = term_at(r, resp, term);
    return t ? t->verdict : STURDY_VERDICT_NONE;
}

double sturdy_response_get(const sturdy_result *r, size_t resp, sturdy_response_value v)
{
    if (!r || resp >= r->nresp)
        return NAN;
    const sturdy_response_result *rr = &r->resp[resp];
    switch (v) {
    case STURDY_RV_DF_ERROR: return rr->df_error;
    case STURDY_RV_SS_ERROR: return rr->ss_error;
    case STURDY_RV_MS_ERROR: return rr->ms_error;
    case STURDY_RV_DF_TOTAL: return rr->df_total;
    case STURDY_RV_SS_TOTAL: return rr->ss_total;
    case STURDY_RV_NORMALITY_P: return rr->diag.sw_p;
    case STURDY_RV_SPREAD_P: return rr->diag.bfm_p;
    case STURDY_RV_VARIANCE_RATIO: return rr->diag.variance_ratio;
    case STURDY_RV_OUTLIERS: return (double)rr->diag.noutliers;
    case STURDY_RV_COUNT: break;
    }
    return NAN;
}

const char *sturdy_response_note(const sturdy_result *r, size_t resp)
{
    return r && resp < r->nresp ? r->resp[resp].error_note : NULL;
}
