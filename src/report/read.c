/* read.c — JSON results read back (the inverse of json.c): a result whose accessors give
 * what the file holds. Shard parts are read in read_part.c. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "core/result.h"
#include "core/jsonread.h"
#include "report/read_util.h"
#include "sturdy/names.h"
#include "sturdy/report.h"

/* --- allocation ------------------------------------------------------------------------ */

/* Whether an allocation of the current read failed: a reader that gives up then says
 * "out of memory" (EINTERNAL), not "malformed" (EDATA). Per thread, reset by each public
 * read; the readers below allocate only through these three. */
static _Thread_local int read_oom;

static char *rd_strdup(const char *s)
{
    char *d = sturdy_strdup(s);
    read_oom |= s && !d;
    return d;
}

static void *rd_calloc(size_t n, size_t size)
{
    void *p = sturdy_calloc(n, size);
    read_oom |= !p;
    return p;
}

static void *rd_realloc(void *q, size_t size)
{
    void *p = sturdy_realloc(q, size);
    read_oom |= !p;
    return p;
}

/* --- small typed readers ------------------------------------------------------------ */


/* A number or null (NaN); 0 when the member is missing or of another type. */
static int get_num(const jv *obj, const char *key, double *out)
{
    const jv *v = jv_get(obj, key);
    if (!v || (v->kind != JV_NUMBER && v->kind != JV_NULL))
        return 0;
    *out = jv_double(v);
    return 1;
}

/* A string or null (NULL), copied; 0 when missing, of another type or out of memory. */
static int get_str(const jv *obj, const char *key, char **out)
{
    const jv *v = jv_get(obj, key);
    *out = NULL;
    if (is_kind(v, JV_NULL))
        return 1;
    if (!is_kind(v, JV_STRING))
        return 0;
    *out = rd_strdup(v->text);
    return *out != NULL;
}

/* [lo, hi] of numbers or nulls. */
static int get_pair(const jv *obj, const char *key, sturdy_pair *out)
{
    const jv *v = jv_get(obj, key);
    if (!is_kind(v, JV_ARRAY) || v->n != 2)
        return 0;
    for (size_t i = 0; i < 2; i++)
        if (v->items[i].kind != JV_NUMBER && v->items[i].kind != JV_NULL)
            return 0;
    out->lo = jv_double(&v->items[0]);
    out->hi = jv_double(&v->items[1]);
    return 1;
}

static int get_bool(const jv *obj, const char *key, int *out)
{
    const jv *v = jv_get(obj, key);
    if (!v || (v->kind != JV_TRUE && v->kind != JV_FALSE))
        return 0;
    *out = v->kind == JV_TRUE;
    return 1;
}

jv *rd_parse(const char *name, const char *text, size_t len, sturdy_status *st, char *err)
{
    char why[256];
    int oom = 0;
    jv *doc = jv_parse(text, len, why, sizeof why, &oom);
    *st = STURDY_OK;
    if (!doc)
        *st = oom ? sturdy_fail(err, STURDY_EINTERNAL, "%s: out of memory reading it", name)
                  : sturdy_fail(err, STURDY_EDATA, "%s: not valid JSON (%s)", name, why);
    return doc;
}

/* --- results ------------------------------------------------------------------------ */

/* Keep a string for the options to point to. */
static const char *own(sturdy_result *r, char *s)
{
    if (!s)
        return NULL;
    char **o = rd_realloc(r->owned, (r->nowned + 1) * sizeof *o);
    if (!o) {
        sturdy_free(s);
        return NULL;
    }
    r->owned = o;
    r->owned[r->nowned++] = s;
    return s;
}

/* Names of an array of strings, or of objects' `key`, as an owned list for the spec. */
static int read_names(sturdy_result *r, const jv *arr, const char *key,
                      const char *const **out, size_t *n)
{
    *out = NULL;
    *n = 0;
    if (!is_kind(arr, JV_ARRAY))
        return 0;
    const char **names = rd_calloc(arr->n, sizeof *names);
    if (!names || !own(r, (char *)names))
        return 0;
    for (size_t i = 0; i < arr->n; i++) {
        const jv *v = key ? jv_get(&arr->items[i], key) : &arr->items[i];
        if (!is_kind(v, JV_STRING) || !(names[i] = own(r, rd_strdup(v->text))))
            return 0;
    }
    *out = names;
    *n = arr->n;
    return 1;
}

/* The value of an enum whose result name (names.h) is `text`, or -1. */
static int method_of(const char *text)
{
    for (int m = STURDY_METHOD_FREEDMAN_LANE; text && m <= STURDY_METHOD_RAW; m++)
        if (!strcmp(text, sturdy_method_name((sturdy_method)m))) return m;
    return -1;
}

static int boot_scheme_of(const char *text)
{
    for (int b = STURDY_BOOT_RESIDUAL; text && b <= STURDY_BOOT_CELLS; b++)
        if (!strcmp(text, sturdy_boot_scheme_name((sturdy_boot_scheme)b))) return b;
    return -1;
}

static int spread_scheme_of(const char *text)
{
    for (int s = STURDY_SPREAD_NONE; text && s <= STURDY_SPREAD_PERMUTATION; s++)
        if (!strcmp(text, sturdy_spread_scheme_name((sturdy_spread_scheme)s))) return s;
    return -1;
}

/* STURDY_VERDICT_NONE for null, the verdict its name names, or -1. */
static int verdict_of(const char *text)
{
    if (!text) return STURDY_VERDICT_NONE;
    for (int v = STURDY_VERDICT_BOTH; v <= STURDY_VERDICT_RESAMPLING_ONLY; v++)
        if (!strcmp(text, sturdy_verdict_name((sturdy_verdict)v))) return v;
    return -1;
}

static const char *read_settings(sturdy_result *r, const jv *doc)
{
    const jv *s = jv_get(doc, "settings"), *d = jv_get(doc, "design");
    sturdy_options *o = &r->opts;
    uint64_t ss = 0;
    char *method = NULL, *scheme = NULL, *spread = NULL;
    int ok = is_kind(s, JV_OBJECT) && get_u64(s, "ss_type", &ss) &&
             get_bool(s, "flip", &o->flip) && get_u64(s, "permutations", &r->nperm) &&
             get_bool(s, "exact", &r->exact) && get_u64(s, "bootstrap", &r->nboot) &&
             get_u64(s, "seed", &o->seed) && get_num(s, "conf", &o->conf) &&
             get_num(s, "alpha", &o->alpha) && get_str(s, "method", &method) &&
             get_str(s, "bootstrap_scheme", &scheme) && get_str(s, "spread_scheme", &spread) &&
             (!jv_get(s, "resistant") || get_bool(s, "resistant", &o->resistant)) &&
             (!jv_get(s, "tail_fit") || get_bool(s, "tail_fit", &o->tail_fit)) &&
             (!jv_get(s, "stop_early") || get_bool(s, "stop_early", &o->stop_early)) &&
             (!jv_get(s, "permutations_asked") ||
              get_u64(s, "permutations_asked", &r->nperm_asked));
    int m = method_of(method), b = boot_scheme_of(scheme), sp = spread_scheme_of(spread);
    sturdy_free(method); sturdy_free(scheme); sturdy_free(spread);
    if (!ok || ss < 1 || ss > 3 || m < 0 || b < 0 || sp < 0)
        return "settings";
    o->ss_type = (int)ss;
    o->method = (sturdy_method)m;
    o->boot_scheme = (sturdy_boot_scheme)b;
    o->spread_scheme = (sturdy_spread_scheme)sp;
    o->permutations = r->nperm;
    o->bootstrap = r->nboot;
    sturdy_model_spec *spec = &o->model;
    const jv *block = jv_get(d, "block");
    if (!is_kind(d, JV_OBJECT) ||
        !read_names(r, jv_get(d, "factors"), "name", &spec->factors, &spec->nfactors) ||
        !read_names(r, jv_get(d, "covariates"), NULL, &spec->covariates, &spec->ncovariates) ||
        !read_names(r, jv_get(doc, "responses"), "response", &spec->responses,
                    &spec->nresponses))
        return "design";
    if (is_kind(block, JV_OBJECT)) {
        char *bn = NULL;
        if (!get_str(block, "name", &bn) || !bn || !(spec->block = own(r, bn)))
            return "design.block";
    } else if (!is_kind(block, JV_NULL)) {
        return "design.block";
    }
    const jv *in = jv_get(doc, "input");
    uint64_t rr = 0, ru = 0;
    if (!is_kind(in, JV_OBJECT) || !get_str(in, "file", &r->input) ||
        !get_u64(in, "rows_read", &rr) || !get_u64(in, "rows_used", &ru))
        return "input";
    r->rows_read = (size_t)rr;
    r->rows_used = (size_t)ru;
    const jv *notes = jv_get(doc, "notes");
    if (!is_kind(notes, JV_ARRAY))
        return "notes";
    r->notes = rd_calloc(notes->n, sizeof *r->notes);
    if (!r->notes)
        return "notes";
    for (size_t i = 0; i < notes->n; i++, r->nnotes++)
        if (!is_kind(&notes->items[i], JV_STRING) ||
            !(r->notes[i] = rd_strdup(notes->items[i].text)))
            return "notes";
    return NULL;
}

static int read_uv(const jv *u, sturdy_uv_result *uv)
{
    uv->ats = uv->ats_df1 = uv->ats_df2 = uv->ats_p = NAN;
    if (!is_kind(u, JV_OBJECT))
        return 0;
    const jv *ats = jv_get(u, "ats");
    int ok = get_num(u, "wald", &uv->wald) && get_num(u, "statistic", &uv->stat) &&
             get_num(u, "df1", &uv->df1) && get_num(u, "df2", &uv->df2) &&
             get_num(u, "p", &uv->p) && get_num(u, "p_perm", &uv->p_perm) &&
             get_pair(u, "p_perm_ci", &uv->p_perm_ci) && get_num(u, "p_wild", &uv->p_wild) &&
             get_num(u, "p_permuted", &uv->p_permuted) && get_str(u, "note", &uv->note) &&
             get_str(u, "perm_note", &uv->perm_note);
    if (ok && is_kind(ats, JV_OBJECT))
        ok = get_num(ats, "statistic", &uv->ats) && get_num(ats, "df1", &uv->ats_df1) &&
             get_num(ats, "df2", &uv->ats_df2) && get_num(ats, "p", &uv->ats_p);
    const jv *ref = jv_get(u, "reference");
    uv->johansen = is_kind(ref, JV_STRING) && !strcmp(ref->text, "johansen");
    return ok;
}

/* An effect size's test-inversion interval (η², ω²: none) and recommended interval. */
/* Rows of a sensitivity list (at most cap; the cell's label is not kept: cell 0). */
static int read_sens_rows(const jv *a, sturdy_sens_row *rows, size_t cap, size_t *n)
{
    *n = 0;
    if (!is_kind(a, JV_ARRAY) || a->n > cap) return 0;
    for (size_t i = 0; i < a->n; i++, (*n)++) {
        const jv *o = &a->items[i];
        uint64_t row = 0, line = 0;
        sturdy_sens_row *x = &rows[i];
        memset(x, 0, sizeof *x);
        if (!is_kind(o, JV_OBJECT) || !get_u64(o, "row", &row) || !get_u64(o, "line", &line) ||
            !get_num(o, "f_without_row", &x->f_without) ||
            !get_num(o, "p_without_row", &x->p_without) || row == 0)
            return 0;
        x->row = (size_t)row;
        x->index = (size_t)row - 1;
        x->line = (size_t)line;
    }
    return 1;
}

/* The term's "sensitivity" (absent in files of earlier versions: left unsearched). */
static int read_sens(const jv *v, sturdy_sensitivity *sv)
{
    memset(sv, 0, sizeof *sv);
    sv->f_without = sv->p_without = sv->f_refit = sv->p_perm_without = NAN;
    if (!v) return 1;
    const jv *k = jv_get(v, "rows_to_change"), *dec = jv_get(v, "decisive");
    const jv *ex = jv_get(v, "exceed_without");
    char *dir = NULL;
    int ok = is_kind(v, JV_OBJECT) && get_str(v, "direction", &dir) &&
             read_sens_rows(jv_get(v, "rows"), sv->rows, 3, &sv->nrows) &&
             get_num(v, "f_without", &sv->f_without) && get_num(v, "p_without", &sv->p_without) &&
             get_num(v, "p_perm_without", &sv->p_perm_without) &&
             read_sens_rows(jv_get(v, "most_influential"), sv->top, SENS_TOP, &sv->ntop) &&
             (is_kind(k, JV_NULL) || (is_kind(k, JV_NUMBER) && (double)sv->nrows ==
                                                                    jv_double(k)));
    sv->direction = dir && !strcmp(dir, "creates") ? STURDY_SENS_CREATES
                    : dir && !strcmp(dir, "hides") ? STURDY_SENS_HIDES : STURDY_SENS_NONE;
    sturdy_free(dir);
    if (!ok) return 0;
    get_num(v, "f_refit", &sv->f_refit);  /* optional: absent before it was added */
    if (is_kind(ex, JV_NUMBER)) ok = get_u64(v, "exceed_without", &sv->exceed_without);
    sv->perm_state = isnan(sv->p_perm_without) ? STURDY_SENS_PERM_NONE : STURDY_SENS_PERM_DONE;
    sv->searched = !is_kind(dec, JV_NULL);
    if (sv->searched) {
        uint64_t nr = 0;
        ok = ok && get_bool(v, "decisive", &sv->decisive) &&
             get_bool(v, "empties_cell", &sv->empties_cell) &&
             get_u64(v, "rows_not_removable", &nr);
        sv->not_removable = (size_t)nr;
    }
    return ok;
}

/* The term's "resistant" test (null when the run did not ask for it). */
static int read_rs(const jv *v, sturdy_rs_result *rs)
{
    memset(rs, 0, sizeof *rs);
    rs->stat = rs->drop = rs->lambda = rs->scale = rs->p_perm = NAN;
    rs->p_perm_ci.lo = rs->p_perm_ci.hi = NAN;
    if (!v || is_kind(v, JV_NULL)) return 1;
    const jv *ex = jv_get(v, "exceed"), *dis = jv_get(v, "disagrees");
    int ok = is_kind(v, JV_OBJECT) && get_num(v, "statistic", &rs->stat) &&
             get_num(v, "p_perm", &rs->p_perm) && get_pair(v, "p_perm_ci", &rs->p_perm_ci) &&
             get_num(v, "drop", &rs->drop) && get_num(v, "lambda", &rs->lambda) &&
             get_num(v, "scale", &rs->scale) && get_str(v, "note", &rs->note);
    if (ok && is_kind(ex, JV_NUMBER)) ok = get_u64(v, "exceed", &rs->exceed);
    if (ok && !is_kind(dis, JV_NULL)) ok = get_bool(v, "disagrees", &rs->disagrees);
    return ok;
}

static int read_recommended(const jv *c, int e, sturdy_term_result *tr)
{
    const jv *rec = jv_get(c, "recommended"), *m = jv_get(rec, "method");
    tr->ci_ti[e].lo = tr->ci_ti[e].hi = tr->ci_rec[e].lo = tr->ci_rec[e].hi = NAN;
    tr->ci_sti[e].lo = tr->ci_sti[e].hi = NAN;
    tr->ci_rec_method[e] = STURDY_CI_NONE;
    if ((e != STURDY_ES_ETA2 && e != STURDY_ES_OMEGA2 &&
         (!get_pair(c, "test_inversion", &tr->ci_ti[e]) ||
          !get_pair(c, "studentized_inversion", &tr->ci_sti[e]))) ||
        !is_kind(rec, JV_OBJECT) || !get_str(rec, "reason", &tr->ci_rec_reason[e]))
        return 0;
    if (is_kind(m, JV_NULL))
        return is_kind(jv_get(rec, "interval"), JV_NULL);
    sturdy_ci_method method;
    if (!is_kind(m, JV_STRING) || !sturdy_ci_method_parse(m->text, &method) ||
        method == STURDY_CI_NONE)
        return 0;
    tr->ci_rec_method[e] = method;
    return get_pair(rec, "interval", &tr->ci_rec[e]);
}

static int read_term(const jv *t, sturdy_term_result *tr)
{
    const jv *ci = jv_get(t, "ci"), *factors = jv_get(t, "factors");
    char *verdict = NULL;
    int ok = is_kind(t, JV_OBJECT) && get_str(t, "term", &tr->label) && tr->label &&
             get_num(t, "df", &tr->df) && get_num(t, "ss", &tr->ss) &&
             get_num(t, "ms", &tr->ms) && get_num(t, "f", &tr->f) && get_num(t, "p", &tr->p) &&
             get_str(t, "note", &tr->note) && get_num(t, "p_perm", &tr->p_perm) &&
             get_pair(t, "p_perm_ci", &tr->p_perm_ci) &&
             get_num(t, "p_perm_fwer", &tr->p_perm_fwer) &&
             get_num(t, "p_perm_holm", &tr->p_perm_holm) &&
             get_str(t, "perm_note", &tr->perm_note) && get_str(t, "boot_note", &tr->boot_note) &&
             get_str(t, "ci_note", &tr->ci_note) &&
             get_str(t, "verdict", &verdict) && get_str(t, "verdict_reason", &tr->verdict_reason) &&
             is_kind(ci, JV_OBJECT) && is_kind(factors, JV_ARRAY) &&
             read_uv(jv_get(t, "unequal_variance"), &tr->uv) &&
             read_sens(jv_get(t, "sensitivity"), &tr->sens) &&
             read_rs(jv_get(t, "resistant"), &tr->rs) &&
             (!is_kind(jv_get(t, "perm_used"), JV_NUMBER) ||
              get_u64(t, "perm_used", &tr->perm_used)) &&
             (is_kind(jv_get(t, "stopped_early"), JV_NULL) || !jv_get(t, "stopped_early") ||
              get_bool(t, "stopped_early", &tr->stopped_early));
    /* the rule (older files write none: a stopped term stopped at h exceedances); a
       stopped term with another rule than those written is not a result of this tool */
    const jv *rule = jv_get(t, "stop_rule");
    if (ok && tr->stopped_early) {
        tr->stopped_early = !rule || is_kind(rule, JV_NULL) ? STURDY_SEQ_EXCEEDANCES
                            : is_kind(rule, JV_STRING)      ? sturdy_stop_rule_parse(rule->text)
                                                            : STURDY_SEQ_RUNNING;
        ok = tr->stopped_early != STURDY_SEQ_RUNNING;
    }
    tr->p_tail = NAN;                /* present with --tail-fit only */
    ok = ok && (!jv_get(t, "p_tail") || get_num(t, "p_tail", &tr->p_tail));
    int v = verdict_of(verdict);
    sturdy_free(verdict);
    if (!ok || v < 0)
        return 0;
    tr->verdict = (sturdy_verdict)v;
    tr->ncf.lo = tr->ncf.hi = NAN;
    for (int e = 0; e < STURDY_NES && ok; e++) {
        const jv *c = jv_get(ci, sturdy_es_names[e]);
        ok = get_num(t, sturdy_es_names[e], &tr->es[e]) && is_kind(c, JV_OBJECT) &&
             get_pair(c, "percentile", &tr->ci_pct[e]) && get_pair(c, "bca", &tr->ci_bca[e]) &&
             (e != STURDY_ES_PARTIAL_ETA2 || get_pair(c, "noncentral_f", &tr->ncf)) &&
             read_recommended(c, e, tr);
        tr->accel[e] = NAN;
    }
    tr->factors = rd_calloc(factors->n, sizeof *tr->factors);
    for (size_t f = 0; ok && tr->factors && f < factors->n; f++, tr->nfactors++)
        ok = is_kind(&factors->items[f], JV_STRING) &&
             (tr->factors[f] = rd_strdup(factors->items[f].text)) != NULL;
    return ok && tr->factors;
}

static int read_diag(const jv *g, sturdy_diagnostics *dg)
{
    const jv *sw = jv_get(g, "shapiro_wilk"), *bfm = jv_get(g, "brown_forsythe_modified");
    const jv *out = jv_get(g, "outliers");
    int ok = is_kind(g, JV_OBJECT) && get_num(sw, "w", &dg->sw_w) &&
             get_num(sw, "p", &dg->sw_p) && get_num(bfm, "f", &dg->bfm_f) &&
             get_num(bfm, "p", &dg->bfm_p) && get_num(g, "variance_ratio", &dg->variance_ratio) &&
             get_num(g, "skewness", &dg->skewness) &&
             get_num(g, "excess_kurtosis", &dg->excess_kurtosis) &&
             get_bool(g, "spread_differs", &dg->spread_differs) && is_kind(out, JV_ARRAY);
    if (ok)
        dg->noutliers = out->n;
    return ok;
}

/* Responses, with their terms, error and total rows, and main checks. */
/* A string field of the means or comparisons, owned by the result (NULL: null). */
static int cmp_str(sturdy_result *r, const jv *o, const char *key, const char **out)
{
    char *s = NULL;
    if (!get_str(o, key, &s))
        return 0;
    *out = s ? own(r, s) : NULL;
    return !s || *out;
}

/* The first (only) key and value of a one-entry object such as "within": {"B": "b1"}. */
static int cmp_single(sturdy_result *r, const jv *o, const char **key, const char **val)
{
    if (is_kind(o, JV_NULL) || !o) {
        *key = *val = NULL;
        return 1;
    }
    if (!is_kind(o, JV_OBJECT) || o->n != 1)
        return 0;
    char *k = rd_strdup(o->keys[0]);
    if (!k || !(*key = own(r, k)))
        return 0;
    return cmp_str(r, o, o->keys[0], val);
}

/* responses[].means[] and .comparisons[] into the read-back lists (accessors); a file
 * written before they existed has neither and reads back with none. */
static int read_compare(sturdy_result *r, const jv *rj, sturdy_response_result *rr)
{
    const jv *means = jv_get(rj, "means"), *comps = jv_get(rj, "comparisons");
    if (!means && !comps)
        return 1;
    if (!is_kind(means, JV_ARRAY) || !is_kind(comps, JV_ARRAY))
        return 0;
    rr->rb_means = rd_calloc(means->n + 1, sizeof *rr->rb_means);
    rr->rb_comparisons = rd_calloc(comps->n + 1, sizeof *rr->rb_comparisons);
    if (!rr->rb_means || !rr->rb_comparisons)
        return 0;
    for (size_t i = 0; i < means->n; i++) {
        const jv *m = &means->items[i], *lv = jv_get(m, "levels");
        sturdy_mean_info *x = &rr->rb_means[i];
        sturdy_pair ci;
        if (!cmp_str(r, m, "term", &x->term) || !x->term || !is_kind(lv, JV_OBJECT) ||
            lv->n > STURDY_MAX_FACTORS || !get_num(m, "estimate", &x->estimate) ||
            !get_num(m, "se", &x->se) || !get_num(m, "df", &x->df) ||
            !get_pair(m, "ci", &ci) || !cmp_str(r, m, "note", &x->note))
            return 0;
        x->ci_lo = ci.lo;
        x->ci_hi = ci.hi;
        for (size_t f = 0; f < lv->n; f++) {
            char *k = rd_strdup(lv->keys[f]);
            if (!k || !(x->factors[f] = own(r, k)) ||
                !cmp_str(r, lv, lv->keys[f], &x->levels[f]) || !x->levels[f])
                return 0;
        }
        x->nfactors = lv->n;
        rr->rb_nmeans++;
    }
    for (size_t i = 0; i < comps->n; i++) {
        const jv *c = &comps->items[i];
        sturdy_comparison_info *x = &rr->rb_comparisons[i];
        sturdy_pair ci, sim, boot;
        if (!cmp_str(r, c, "term", &x->term) || !x->term || !get_bool(c, "reported", &x->reported) ||
            !cmp_str(r, c, "factor", &x->factor) || !cmp_str(r, c, "level", &x->level) ||
            !cmp_str(r, c, "versus", &x->versus) || !x->factor || !x->level || !x->versus ||
            !cmp_single(r, jv_get(c, "within"), &x->by_factor, &x->by_level) ||
            !get_num(c, "estimate", &x->estimate) || !get_num(c, "se", &x->se) ||
            !get_num(c, "df", &x->df) || !get_num(c, "t", &x->t) || !get_num(c, "p", &x->p) ||
            !get_num(c, "hedges_g", &x->hedges_g) || !get_pair(c, "ci", &ci) ||
            !cmp_str(r, c, "adjustment", &x->adjustment) ||
            !get_pair(c, "ci_simultaneous", &sim) || !get_num(c, "p_adjusted", &x->p_adjusted) ||
            !get_num(c, "p_perm_adjusted", &x->p_perm_adjusted) ||
            !get_pair(c, "ci_bootstrap_simultaneous", &boot) ||
            !cmp_str(r, c, "note", &x->note) || !cmp_str(r, c, "perm_note", &x->perm_note))
            return 0;
        x->ci_lo = ci.lo;
        x->ci_hi = ci.hi;
        x->sim_lo = sim.lo;
        x->sim_hi = sim.hi;
        x->boot_sim_lo = boot.lo;
        x->boot_sim_hi = boot.hi;
        x->p_boot_adjusted = NAN;   /* optional: absent in files written before it was added */
        if (jv_get(c, "p_boot_adjusted") && !get_num(c, "p_boot_adjusted", &x->p_boot_adjusted))
            return 0;
        rr->rb_ncomparisons++;
    }
    return 1;
}

static const char *read_responses(sturdy_result *r, const jv *doc)
{
    const jv *resps = jv_get(doc, "responses");
    if (!is_kind(resps, JV_ARRAY))
        return "responses";
    r->resp = rd_calloc(resps->n, sizeof *r->resp);
    if (!r->resp)
        return "responses";
    size_t nt = 0;
    for (size_t i = 0; i < resps->n; i++) {
        const jv *rj = &resps->items[i], *terms = jv_get(rj, "terms");
        const jv *e = jv_get(rj, "error"), *tot = jv_get(rj, "total");
        sturdy_response_result *rr = &r->resp[r->nresp++];
        if (!get_str(rj, "response", &rr->name) || !rr->name || !is_kind(terms, JV_ARRAY) ||
            (i > 0 && terms->n != nt))
            return "responses";
        nt = terms->n;
        if (!get_num(e, "df", &rr->df_error) || !get_num(e, "ss", &rr->ss_error) ||
            !get_num(e, "ms", &rr->ms_error) || !get_str(e, "note", &rr->error_note) ||
            !get_num(tot, "df", &rr->df_total) || !get_num(tot, "ss", &rr->ss_total))
            return "responses[].error";
        if (!read_diag(jv_get(rj, "diagnostics"), &rr->diag))
            return "responses[].diagnostics";
        rr->terms = rd_calloc(nt, sizeof *rr->terms);
        if (!rr->terms)
            return "responses[].terms";
        rr->nterms = nt;     /* zeroed terms: the result's free releases what a partly
                                read one holds */
        for (size_t k = 0; k < nt; k++)
            if (!read_term(&terms->items[k], &rr->terms[k]))
                return "responses[].terms[]";
        if (!read_compare(r, rj, rr))
            return "responses[].means/comparisons";
    }
    return NULL;
}

sturdy_status sturdy_result_read_json(const char *name, const char *text, size_t len,
                                      sturdy_result **out, char *err)
{
    *out = NULL;
    read_oom = 0;
    sturdy_status pst;
    jv *doc = rd_parse(name, text, len, &pst, err);
    if (!doc)
        return pst;
    uint64_t version = 0;
    if (!get_u64(doc, "version", &version) || version != 1) {
        jv_free(doc);
        return sturdy_fail(err, STURDY_EDATA, "%s: not a sturdy result of version 1", name);
    }
    sturdy_result *r = rd_calloc(1, sizeof *r);
    if (!r) {
        jv_free(doc);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    sturdy_options_init(&r->opts);
    const char *bad = read_settings(r, doc);
    if (!bad)
        bad = read_responses(r, doc);
    jv_free(doc);
    if (bad) {
        sturdy_result_free(r);
        if (read_oom)
            return sturdy_fail(err, STURDY_EINTERNAL, "%s: out of memory reading it", name);
        return sturdy_fail(err, STURDY_EDATA, "%s: its '%s' section is missing, incomplete or "
                                              "malformed", name, bad);
    }
    r->perm_end = r->perm_done = r->nperm;
    r->boot_end = r->boot_done = r->nboot;
    r->finished = 1;
    r->read_back = 1;
    *out = r;
    return STURDY_OK;
}
