/* bootstrap.c — bootstrap replicates of every term's effect sizes with the design held
 * fixed, the jackknife acceleration, and percentile and BCa intervals (Efron 1987).
 *
 * Schemes (Davison & Hinkley 1997, §6.2.3): `residual` adds resampled, centred,
 * leverage-adjusted residuals e/√(1−h) to the fitted values; `wild` multiplies each
 * adjusted residual by a Rademacher sign (Wu 1986; Mammen 1993); `cells` resamples rows
 * within cells (with a block: within cell × block), which for a factor-only model is
 * the same as resampling the raw residuals within each group, since the fitted value is
 * the group mean. Replicate b uses generator sturdy_pcg_for(seed, BOOTSTRAP, b) only,
 * and draws the responses in order, so any split of the replicates gives the same bits.
 *
 * Each replicate y* = f + r* is evaluated without refitting: with s = group sums (÷√n_g)
 * SS_t* = ‖U_tᵀ(s_f + s_r)‖², SSE* = ‖r*‖² − ‖U_fullᵀ s_r‖² (f lies in the model space),
 * SST* = ‖f_c‖² + 2 f_cᵀr* + ‖r*‖² − (Σr*)²/n with f_c the centred fitted values. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "resampling/resampling.h"
#include "core/core.h"
#include "sturdy/dist.h"
#include "resampling/pcg_inline.h"
#include "resampling/bootcmp.h"

/* A row whose leverage is within STURDY_LEVERAGE_ONE_TOL of 1 is alone in its group:
 * its residual is 0 and its leave-one-out fit is undefined, so it is left out of the
 * residual pool and of the jackknife. */

typedef struct {
    double *fc;        /* n: centred fitted values */
    double *sf;        /* K: group sums of fc */
    double ff;         /* ‖fc‖² */
    double *a;         /* n: adjusted residuals (residual, wild) or raw residuals (cells) */
    size_t *pool;      /* residual scheme: rows with leverage < 1 */
    size_t npool;
    double *v;         /* v = U_tᵀ s_f of every term, df values each (at voff[t]) */
} resp_boot;

typedef struct {
    const sturdy_run *run;
    const sturdy_design *d;
    const sturdy_model *m;
    sturdy_result *r;
    resp_boot *rb;
    size_t *grp_start, *grp_rows; /* cells scheme: rows of each group */
    size_t *voff;                 /* offset of each term's v in resp_boot.v */
} boot_ctx;

static double full_norm2(const sturdy_model *m, const double *s)
{
    if (m->rank == m->K) {
        double t = 0.0;
        for (size_t g = 0; g < m->K; g++)
            t += s[g] * s[g];
        return t;
    }
    return sturdy_proj_norm2(m->U, m->K, m->rank, s);
}

/* Σ_i r_i⁴ of the full model's residuals r = e − fitted(e) of a row vector e whose
 * scaled group sums are se; work holds rank + K doubles. */
static double residual_fourth(const sturdy_design *d, const sturdy_model *m, const double *e,
                              const double *se, double *work)
{
    double *gval = work + m->rank;
    if (m->rank == m->K) {       /* saturated over the groups: the fit is the group mean */
        for (size_t g = 0; g < m->K; g++)
            gval[g] = se[g] / m->sqrt_count[g];
    } else {
        sturdy_model_group_projection(m, m->U, m->rank, se, work, gval);
    }
    double s4 = 0.0;
    for (size_t i = 0; i < d->n; i++) {
        double r = e[i] - gval[d->group[i]], r2 = r * r;
        s4 += r2 * r2;
    }
    return s4;
}

/* The errors' excess kurtosis from residuals with Σr⁴ = s4 and SSE = sse:
 * κ̂ = (Σr⁴ − 3·MSE²·C2) / (C1·MSE²), from E Σ r_i⁴ = κ₄·C1 + 3σ⁴·C2 with σ⁴ ≈ MSE²
 * (C1 = Σ_ij M_ij⁴, C2 = Σ_i M_ii², M = I − H), bounded below by −2, the least excess
 * kurtosis of any law. NaN when undefined. */
static double kurtosis_estimate(double s4, double sse, double df_error, double c1, double c2)
{
    double mse = sse / df_error;
    if (!(mse > 0) || !(c1 > 0) || !isfinite(s4))
        return NAN;
    double k = (s4 - 3.0 * mse * mse * c2) / (c1 * mse * mse);
    return k > -2.0 ? k : -2.0;
}

/* Largest number of groups for which C1's cross-group part is summed exactly; above it
 * that part, at most p·max(h)²/n of C1 relative (Σ_{i≠j} H_ij⁴ ≤ max H_ij²·Σ_i h_i), is
 * left out. */
#define KURT_EXACT_GROUPS 2000

/* The design constants of kurtosis_estimate: with c_gh = (UUᵀ)_gh / √(n_g n_h) the hat
 * value of two rows in groups g and h (h_g on the diagonal of a group),
 *   C2 = Σ_g n_g (1 − h_g)²,
 *   C1 = Σ_g [n_g (1 − h_g)⁴ + n_g (n_g − 1) h_g⁴] + Σ_{g≠h} n_g n_h c_gh⁴. */
static void kurtosis_constants(const sturdy_design *d, const sturdy_model *m, double *c1,
                               double *c2)
{
    size_t K = m->K;
    double s1 = 0.0, s2 = 0.0;
    for (size_t g = 0; g < K; g++) {
        double ng = (double)d->group_count[g], h = m->leverage[g], q = (1 - h) * (1 - h);
        s2 += ng * q;
        s1 += ng * q * q + ng * (ng - 1) * h * h * h * h;
    }
    if (m->rank < K && K <= KURT_EXACT_GROUPS)
        for (size_t g = 0; g < K; g++)
            for (size_t h = g + 1; h < K; h++) {
                double x = 0.0;
                for (size_t q = 0; q < m->rank; q++)
                    x += m->U[q * K + g] * m->U[q * K + h];
                x /= m->sqrt_count[g] * m->sqrt_count[h];
                double ngh = (double)d->group_count[g] * (double)d->group_count[h];
                s1 += 2.0 * ngh * x * x * x * x;
            }
    *c1 = s1;
    *c2 = s2;
}

static void one_replicate(const boot_ctx *c, uint64_t b, double *rs, double *sr, double *s,
                          signed char *sign, double *work)
{
    const sturdy_design *d = c->d;
    const sturdy_model *m = c->m;
    size_t n = d->n, K = m->K;
    assert(b < c->r->nboot);            /* term->boot has nboot rows */
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, c->run->opts.seed, STURDY_STREAM_BOOTSTRAP, b);
    for (size_t ri = 0; ri < c->r->nresp; ri++) {
        const resp_boot *rb = &c->rb[ri];
        switch (c->run->opts.boot_scheme) {
        case STURDY_BOOT_WILD:
            sturdy_pcg_signs(&g, sign, n);
            for (size_t i = 0; i < n; i++)
                rs[i] = sign[i] * rb->a[i];
            break;
        case STURDY_BOOT_CELLS:
            for (size_t i = 0; i < n; i++) {
                size_t gi = d->group[i], lo = c->grp_start[gi];
                size_t k = (size_t)pcg_bounded_inline(&g, c->grp_start[gi + 1] - lo);
                rs[i] = rb->a[c->grp_rows[lo + k]];
            }
            break;
        default:
            for (size_t i = 0; i < n; i++)
                rs[i] = rb->a[rb->pool[pcg_bounded_inline(&g, rb->npool)]];
        }
        double rr = 0.0, sum = 0.0, fr = 0.0;
        for (size_t i = 0; i < n; i++) {
            rr += rs[i] * rs[i];
            sum += rs[i];
            fr += rb->fc[i] * rs[i];
        }
        sturdy_model_group_scaled(d, m, rs, sr);
        double sse = rr - full_norm2(m, sr);
        sturdy_response_result *resp = &c->r->resp[ri];
        double kappa = kurtosis_estimate(residual_fourth(d, m, rs, sr, work), sse,
                                         (double)m->df_error, resp->kurt_c1, resp->kurt_c2);
        /* the comparisons' replicate values (bootcmp.c), from the same resample (its
           Games–Howell families draw their own wild signs into `sign`, already used) */
        sturdy_bootcmp_replicate(d, m, resp, c->run->opts.seed, b, sr, sse, sign, work);
        double sst = rb->ff + 2.0 * fr + rr - sum * sum / (double)n;
        for (size_t q = 0; q < K; q++)
            s[q] = rb->sf[q] + sr[q];
        for (size_t t = 0; t < resp->nterms; t++) {
            sturdy_term_result *tr = &resp->terms[t];
            if (!tr->boot)
                continue;
            double *out = tr->boot + b * STURDY_BOOT_COLS;
            const sturdy_term_basis *tb = &m->terms[t];
            double ss = sturdy_proj_norm2(tb->Uterm, K, tb->df, s);
            sturdy_effect_sizes(ss, (double)tb->df, sse, (double)m->df_error, sst,
                                (double)n, out);
            /* the test inversion's pieces: u* = U_tᵀ s_r, vᵀu*, ‖u*‖², SSE* */
            const double *v = rb->v + c->voff[t];
            double vu = 0.0, uu = 0.0;
            for (size_t q = 0; q < tb->df; q++) {
                const double *col = tb->Uterm + q * K;
                double u = 0.0;
                for (size_t g = 0; g < K; g++)
                    u += col[g] * sr[g];
                vu += v[q] * u;
                uu += u * u;
            }
            out[STURDY_NES] = vu;
            out[STURDY_NES + 1] = uu;
            out[STURDY_NES + 2] = sse;
            out[STURDY_NES + 3] = kappa;
        }
    }
}

/* The acceleration of each effect size from its n leave-one-out values jack (n ×
 * STURDY_NES; NaN: left out): â = Σu³ / (6 (Σu²)^{3/2}) with u_i = (m − 1)(θ̄ − θ_(i)),
 * summed over the strata (the groups for the cells scheme, else one). */
static void jackknife_accel(const boot_ctx *c, const double *jack, double accel[STURDY_NES])
{
    const sturdy_design *d = c->d;
    size_t n = d->n, K = c->m->K;
    for (int e = 0; e < STURDY_NES; e++) {
        int cells = c->run->opts.boot_scheme == STURDY_BOOT_CELLS;
        size_t ngrp = cells ? K : 1;
        double num = 0.0, den = 0.0;
        int usable = 0;
        for (size_t gi = 0; gi < ngrp; gi++) {
            /* mean of the jackknife values in the stratum */
            double tbar = 0.0;
            size_t cnt = 0;
            for (size_t i = 0; i < n; i++) {
                if (cells && d->group[i] != gi)
                    continue;
                double v = jack[i * STURDY_NES + e];
                if (isfinite(v)) { tbar += v; cnt++; }
            }
            if (cnt < 2)
                continue;
            tbar /= (double)cnt;
            double s2 = 0.0, s3 = 0.0;
            for (size_t i = 0; i < n; i++) {
                if (cells && d->group[i] != gi)
                    continue;
                double v = jack[i * STURDY_NES + e];
                if (!isfinite(v))
                    continue;
                double u = (double)(cnt - 1) * (tbar - v);
                s2 += u * u;
                s3 += u * u * u;
            }
            num += s3 / ((double)cnt * cnt * cnt);
            den += s2 / ((double)cnt * cnt);
            usable = 1;
        }
        accel[e] = (usable && den > 0) ? num / (6.0 * pow(den, 1.5)) : NAN;
    }
}

/* Leave-one-out effect sizes of term t by the deletion formula RSS(−i) = RSS −
 * e_i²/(1 − h_i) for the reduced, augmented and full models, and the acceleration
 * â = Σu³ / (6 (Σu²)^{3/2}) with u_i = θ̄ − θ_(i) (Efron 1987). For the cells scheme the
 * jackknife runs within each group, as for a stratified bootstrap (the form used by
 * scipy.stats.bootstrap for several samples). */
static sturdy_status acceleration(const boot_ctx *c, size_t ri, size_t t, char *err)
{
    const sturdy_design *d = c->d;
    const sturdy_model *m = c->m;
    size_t n = d->n, K = m->K;
    const sturdy_term_basis *tb = &m->terms[t];
    sturdy_response_result *resp = &c->r->resp[ri];
    sturdy_term_result *tr = &resp->terms[t];
    assert(tr->f >= 0 && n >= 2);       /* an F needs residual df, so n > rank ≥ 1 */
    const double *y = d->y + ri * n;
    double *s = sturdy_malloc(K * sizeof *s), *work = sturdy_malloc((m->rank + K) * sizeof *work);
    double *ered = sturdy_malloc(n * sizeof *ered), *eaug = sturdy_malloc(n * sizeof *eaug);
    double *hred = sturdy_calloc(K, sizeof *hred), *haug = sturdy_calloc(K, sizeof *haug);
    double *jack = sturdy_malloc(n * STURDY_NES * sizeof *jack);
    if (!s || !work || !ered || !eaug || !hred || !haug || !jack) {
        sturdy_free(s); sturdy_free(work); sturdy_free(ered); sturdy_free(eaug);
        sturdy_free(hred); sturdy_free(haug); sturdy_free(jack);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    sturdy_model_group_scaled(d, m, y, s);
    sturdy_model_reduced_project(d, m, t, s, work, ered);
    sturdy_model_project(d, m, tb->Uterm, tb->df, s, work, eaug);
    double rss_red = 0.0, rss_aug = 0.0, mean = sturdy_mean(y, n);
    for (size_t i = 0; i < n; i++) {
        ered[i] = y[i] - ered[i];
        eaug[i] = ered[i] - eaug[i];
        rss_red += ered[i] * ered[i];
        rss_aug += eaug[i] * eaug[i];
    }
    sturdy_model_reduced_hat(m, t, hred);
    for (size_t g = 0; g < K; g++) {
        double ht = 0.0;
        for (size_t q = 0; q < tb->df; q++)
            ht += tb->Uterm[q * K + g] * tb->Uterm[q * K + g];
        hred[g] /= (double)d->group_count[g];
        haug[g] = hred[g] + ht / (double)d->group_count[g];
    }
    double sse = resp->ss_error, sst = resp->ss_total, dfe = resp->df_error;
    for (size_t i = 0; i < n; i++) {
        size_t g = d->group[i];
        double hf = m->leverage[g];
        double *out = jack + i * STURDY_NES;
        if (hf >= 1 - STURDY_LEVERAGE_ONE_TOL || haug[g] >= 1 - STURDY_LEVERAGE_ONE_TOL ||
            hred[g] >= 1 - STURDY_LEVERAGE_ONE_TOL) {
            for (int e = 0; e < STURDY_NES; e++)
                out[e] = NAN;
            continue;
        }
        double ei = resp->residual[i];
        double rred = rss_red - ered[i] * ered[i] / (1 - hred[g]);
        double raug = rss_aug - eaug[i] * eaug[i] / (1 - haug[g]);
        double rfull = sse - ei * ei / (1 - hf);
        double dy = y[i] - mean;
        double sst_i = sst - (double)n / (double)(n - 1) * dy * dy;
        sturdy_effect_sizes(rred - raug, tr->df, rfull, dfe - 1, sst_i, (double)(n - 1), out);
    }
    jackknife_accel(c, jack, tr->accel);
    sturdy_free(s); sturdy_free(work); sturdy_free(ered); sturdy_free(eaug);
    sturdy_free(hred); sturdy_free(haug); sturdy_free(jack);
    return STURDY_OK;
}

static void ctx_free(boot_ctx *c)
{
    if (c->rb)
        for (size_t ri = 0; ri < c->r->nresp; ri++) {
            sturdy_free(c->rb[ri].fc); sturdy_free(c->rb[ri].sf); sturdy_free(c->rb[ri].a);
            sturdy_free(c->rb[ri].pool); sturdy_free(c->rb[ri].v);
        }
    sturdy_free(c->rb);
    sturdy_free(c->voff);
    sturdy_free(c->grp_start);
    sturdy_free(c->grp_rows);
}

/* v = U_tᵀ s_f of every term (the observed projection on its basis, ‖v‖² = SS) */
static void term_projections(const sturdy_model *m, const double *sf, const size_t *voff,
                             double *v)
{
    for (size_t t = 0; t < m->nterms; t++) {
        const sturdy_term_basis *tb = &m->terms[t];
        for (size_t q = 0; q < tb->df; q++) {
            double x = 0.0;
            for (size_t g = 0; g < m->K; g++)
                x += tb->Uterm[q * m->K + g] * sf[g];
            v[voff[t] + q] = x;
        }
    }
}

/* The error variance of the bootstrap world: the mean of a² over the rows that can be
 * drawn (pool; NULL: every row whose leverage is below 1). For the residual scheme a is
 * centred over the pool, so this is the variance of every e*_i and E*[SSE*] = df_error
 * times it; for the wild and cells schemes it is the average over rows of E*[e*_i²] (not
 * studied for the test inversion, which is not recommended under them). */
static double world_variance(const sturdy_design *d, const sturdy_model *m, const double *a,
                             const size_t *pool, size_t npool)
{
    double s = 0.0;
    size_t cnt = 0;
    if (pool) {
        for (size_t k = 0; k < npool; k++)
            s += a[pool[k]] * a[pool[k]];
        cnt = npool;
    } else {
        for (size_t i = 0; i < d->n; i++)
            if (m->leverage[d->group[i]] < 1 - STURDY_LEVERAGE_ONE_TOL) {
                s += a[i] * a[i];
                cnt++;
            }
    }
    return cnt ? s / (double)cnt : NAN;
}

static sturdy_status setup(boot_ctx *c, char *err)
{
    const sturdy_design *d = c->d;
    const sturdy_model *m = c->m;
    size_t n = d->n, K = m->K;
    c->rb = sturdy_calloc(c->r->nresp, sizeof *c->rb);
    c->voff = sturdy_malloc((m->nterms + 1) * sizeof *c->voff);
    if (!c->rb || !c->voff)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    c->voff[0] = 0;
    for (size_t t = 0; t < m->nterms; t++)
        c->voff[t + 1] = c->voff[t] + m->terms[t].df;
    if (c->run->opts.boot_scheme == STURDY_BOOT_CELLS) {
        sturdy_status st = sturdy_bucket_rows(d->group, n, K, &c->grp_start, &c->grp_rows,
                                              err);
        if (st)
            return st;
    }
    for (size_t ri = 0; ri < c->r->nresp; ri++) {
        resp_boot *rb = &c->rb[ri];
        sturdy_response_result *resp = &c->r->resp[ri];
        const double *y = d->y + ri * n;
        rb->fc = sturdy_malloc(n * sizeof *rb->fc);
        rb->sf = sturdy_malloc(K * sizeof *rb->sf);
        rb->a = sturdy_malloc(n * sizeof *rb->a);
        rb->pool = sturdy_malloc(n * sizeof *rb->pool);
        rb->v = sturdy_malloc((c->voff[m->nterms] + 1) * sizeof *rb->v);
        if (!rb->fc || !rb->sf || !rb->a || !rb->pool || !rb->v)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        double mean = sturdy_mean(y, n);
        rb->ff = 0.0;
        for (size_t i = 0; i < n; i++) {
            rb->fc[i] = y[i] - resp->residual[i] - mean;
            rb->ff += rb->fc[i] * rb->fc[i];
        }
        sturdy_model_group_scaled(d, m, rb->fc, rb->sf);
        term_projections(m, rb->sf, c->voff, rb->v);
        /* the studentized test inversion's kurtosis of the data; rb->a is free here */
        if (ri == 0)
            kurtosis_constants(d, m, &resp->kurt_c1, &resp->kurt_c2);
        else {
            resp->kurt_c1 = c->r->resp[0].kurt_c1;
            resp->kurt_c2 = c->r->resp[0].kurt_c2;
        }
        {
            double *se = sturdy_malloc((2 * K + m->rank + 1) * sizeof *se);
            if (!se)
                return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
            sturdy_model_group_scaled(d, m, resp->residual, se);
            resp->kurt_obs = kurtosis_estimate(residual_fourth(d, m, resp->residual, se,
                                                               se + K),
                                               resp->ss_error, (double)m->df_error,
                                               resp->kurt_c1, resp->kurt_c2);
            sturdy_free(se);
        }
        if (c->run->opts.boot_scheme == STURDY_BOOT_CELLS) {
            memcpy(rb->a, resp->residual, n * sizeof *rb->a);
            resp->boot_world_var = world_variance(d, m, rb->a, NULL, 0);
            continue;
        }
        double abar = 0.0;
        rb->npool = 0;
        for (size_t i = 0; i < n; i++) {
            double h = m->leverage[d->group[i]];
            if (h < 1 - STURDY_LEVERAGE_ONE_TOL) {
                rb->a[i] = resp->residual[i] / sqrt(1 - h);
                rb->pool[rb->npool++] = i;
                abar += rb->a[i];
            } else {
                rb->a[i] = 0.0;
            }
        }
        if (rb->npool == 0)
            return sturdy_fail(err, STURDY_EMODEL,
                               "no residual can be resampled: every row is alone in its cell");
        if (c->run->opts.boot_scheme == STURDY_BOOT_RESIDUAL) {
            abar /= (double)rb->npool;
            for (size_t k = 0; k < rb->npool; k++)
                rb->a[rb->pool[k]] -= abar;
        }
        resp->boot_world_var = world_variance(d, m, rb->a, rb->pool, rb->npool);
    }
    return STURDY_OK;
}

sturdy_status sturdy_bootstrap_run(const sturdy_run *run, const sturdy_design *d,
                                   const sturdy_model *m, sturdy_result *r, char *err)
{
    boot_ctx c = {run, d, m, r, NULL, NULL, NULL, NULL};
    size_t n = d->n, K = m->K;
    uint64_t b0 = run->boot_begin, b1 = run->boot_end;
    sturdy_status st = STURDY_OK;
    if (m->df_error == 0)
        return STURDY_OK;
    for (size_t ri = 0; ri < r->nresp; ri++)
        for (size_t t = 0; t < r->resp[ri].nterms; t++) {
            sturdy_term_result *tr = &r->resp[ri].terms[t];
            for (int e = 0; e < STURDY_NES; e++)
                tr->accel[e] = NAN;
            if (!(tr->f >= 0))
                continue;
            if (run->nboot > 0) {
                /* indexed over the whole run; slices computed elsewhere stay NaN until
                   added (sturdy_result_add_slice) */
                size_t cnt = (size_t)run->nboot * STURDY_BOOT_COLS;
                tr->boot = sturdy_malloc(cnt * sizeof *tr->boot);
                if (!tr->boot)
                    return sturdy_fail(err, STURDY_EINTERNAL,
                                       "out of memory for the bootstrap replicates");
                for (size_t k = 0; k < cnt; k++)
                    tr->boot[k] = NAN;
            }
        }
    if ((st = setup(&c, err)))
        goto done;
    /* the jackknife of each (response, term) is independent: one thread each */
    int64_t njack = run->nboot > 0 ? (int64_t)(r->nresp * d->nterms) : 0;
    int jack_failed = 0;
#pragma omp parallel for schedule(dynamic, 1) num_threads(run->threads)
    for (int64_t k = 0; k < njack; k++) {
        size_t ri = (size_t)k / d->nterms, t = (size_t)k % d->nterms;
        if (r->resp[ri].terms[t].f >= 0 && acceleration(&c, ri, t, NULL) != STURDY_OK) {
#pragma omp atomic write
            jack_failed = 1;
        }
    }
    if (jack_failed)
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory in the jackknife");
    if (st || b1 <= b0)
        goto done;
    int nthreads = run->threads;
    int failed = 0;
    int64_t count = (int64_t)(b1 - b0);
#pragma omp parallel num_threads(nthreads)
    {
        double *rs = sturdy_malloc(n * sizeof *rs), *sr = sturdy_malloc(K * sizeof *sr);
        double *s = sturdy_malloc(K * sizeof *s);
        double *work = sturdy_malloc((2 * K + m->rank + sturdy_bootcmp_work(r) + 1) *
                                     sizeof *work);
        signed char *sign = sturdy_malloc(n);
        int ok = rs && sr && s && sign && work;
        if (!ok) {
#pragma omp atomic write
            failed = 1;
        }
#pragma omp for schedule(dynamic, 16)
        for (int64_t k = 0; k < count; k++)
            if (ok && !sturdy_run_cancelled(run))
                one_replicate(&c, b0 + (uint64_t)k, rs, sr, s, sign, work);
        sturdy_free(rs); sturdy_free(sr); sturdy_free(s); sturdy_free(sign);
        sturdy_free(work);
    }
    if (failed)
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory for bootstrap workspaces");
    else if (sturdy_run_cancelled(run))
        st = sturdy_fail(err, STURDY_ECANCELLED, "cancelled during the bootstrap");
done:
    ctx_free(&c);
    return st;
}

/* Quantile with linear interpolation between order statistics of the sorted x
 * (sturdy_quantile_sorted: Hyndman & Fan 1996, definition 7; numpy's default, which
 * scipy.stats.bootstrap uses); NaN at a level outside [0, 1]. */
static double quantile_sorted(const double *x, size_t B, double q)
{
    if (B == 0 || !(q >= 0 && q <= 1))
        return NAN;
    return sturdy_quantile_sorted(x, B, q);
}

sturdy_status sturdy_bootstrap_intervals(const sturdy_result *r, sturdy_term_result *t,
                                         int *bca_failed, char *err)
{
    uint64_t B = r->nboot;
    *bca_failed = 0;
    if (!t->boot || B == 0)
        return STURDY_OK;
    assert(r->boot_done == B);          /* only a finished run has every replicate */
    double *x = sturdy_malloc(2 * (size_t)B * sizeof *x);   /* the values, then scratch */
    if (!x)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    double a2 = (1 - r->opts.conf) / 2;
    for (int e = 0; e < STURDY_NES; e++) {
        size_t k = 0, below = 0;
        double theta = t->es[e];
        for (uint64_t b = 0; b < B; b++) {
            double v = t->boot[b * STURDY_BOOT_COLS + e];
            if (isfinite(v)) {
                x[k++] = v;
                if (v < theta)
                    below++;
            }
        }
        t->ci_pct[e].lo = t->ci_pct[e].hi = t->ci_bca[e].lo = t->ci_bca[e].hi = NAN;
        if (k < 2 || !isfinite(theta))
            continue;
        sturdy_sort_doubles(x, k, x + B);
        t->ci_pct[e].lo = quantile_sorted(x, k, a2);
        t->ci_pct[e].hi = quantile_sorted(x, k, 1 - a2);
        /* BCa (Efron 1987): bias correction z0 from the share of replicates below the
         * estimate, acceleration from the jackknife */
        double frac = (double)below / (double)k, acc = t->accel[e];
        if (frac <= 0 || frac >= 1 || !isfinite(acc)) {
            *bca_failed = 1;
            continue;
        }
        double z0 = sturdy_norm_ppf(frac);
        double zl = z0 + sturdy_norm_ppf(a2), zh = z0 + sturdy_norm_ppf(1 - a2);
        double pl = sturdy_norm_cdf(z0 + zl / (1 - acc * zl));
        double ph = sturdy_norm_cdf(z0 + zh / (1 - acc * zh));
        t->ci_bca[e].lo = quantile_sorted(x, k, pl);
        t->ci_bca[e].hi = quantile_sorted(x, k, ph);
    }
    sturdy_free(x);
    return STURDY_OK;
}
