/* unequal.c — tests of every term that hold their level when cell variances differ.
 *
 * F, and every rearrangement of F, assumes one error variance: with unequal cell
 * variances and unequal cell sizes their null rejection rates stray far from α. Here each
 * term gets the Welch–James Wald-type statistic (Welch 1951; James 1951; Johansen 1980)
 *     W = zᵀ (U_tᵀ Ω U_t)⁻¹ z,   z = U_tᵀ s,
 * in group space (fit.h): s_g = (Σ_{i∈g} y_i)/√n_g, U_t the term's basis (the same
 * hypothesis as its F-test under the chosen SS type) and Ω_g = Σ_{i∈g} e_i² / (n_g
 * (1 − h_g)^δ) an estimate of var(s_g) from the full model's residuals. For factor-only
 * models the groups are the cells, h_g = 1/n_g and δ = 1, so Ω_g is the cell's sample
 * variance and W is the Welch–James statistic on the cell means (HC2 in a cell-means
 * regression); with covariates or a block δ = 2 (HC3; Long & Ervin 2000).
 *
 * Reference distributions: Johansen's approximate F (factor-only; it reduces to Welch's
 * one-way test), else F(df, residual df) for W/df; the ANOVA-type statistic with Box's
 * approximation (Brunner, Dette & Munk 1997; factor-only); and two resampling p-values:
 *   wild bootstrap — y* = f̃ + w·ẽ/√(1 − h), f̃ the fit under the term's hypothesis
 *     (the full model less the term's own projection), ẽ = y − f̃, w Rademacher signs
 *     (Davidson & Flachaire 2008); replicate b draws from sturdy_pcg_for(seed,
 *     STURDY_STREAM_WILD_TEST, b), the same signs for every term;
 *   permutation — ẽ rearranged by the run's rearrangements (rearrange.c) and added to f̃
 *     (the studentised statistic, Janssen 1997; Pauly, Brunner & Konietschke 2015).
 * In both, W* depends only on the group sums A_g = Σ v_i and Q_g = Σ v_i² of the
 * perturbation v = y* − f̃, because f̃ lies in the full model and U_t ⊥ f̃:
 *     z* = U_tᵀ a (a_g = A_g/√n_g), d = the full fit of v per group,
 *     RSS_g = Q_g − 2 d_g A_g + n_g d_g²,  Ω*_g = RSS_g / (n_g (1 − h_g)^δ).
 * So each replicate costs one pass over the rows plus small products, and counts are
 * integers: any split over threads, shards or ranks gives the same counts. This file
 * holds the statistic and its classical references; unequal_resample.c the resampling. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "sturdy/dist.h"
#include "classical/unequal.h"

/* Cholesky factor of the n × n SPD matrix a (column-major, lower part used) in place;
 * 0 when a is not numerically positive definite. */
static int cholesky(double *a, size_t n)
{
    for (size_t j = 0; j < n; j++) {
        double s = a[j * n + j];
        for (size_t k = 0; k < j; k++)
            s -= a[k * n + j] * a[k * n + j];
        if (!(s > 0))
            return 0;
        double l = sqrt(s);
        a[j * n + j] = l;
        for (size_t i = j + 1; i < n; i++) {
            double t = a[j * n + i];
            for (size_t k = 0; k < j; k++)
                t -= a[k * n + i] * a[k * n + j];
            a[j * n + i] = t / l;
        }
    }
    return 1;
}

/* x ← L⁻¹ x for the Cholesky factor L of cholesky(). */
static void forward(const double *l, size_t n, double *x)
{
    for (size_t i = 0; i < n; i++) {
        double t = x[i];
        for (size_t k = 0; k < i; k++)
            t -= l[k * n + i] * x[k];
        x[i] = t / l[i * n + i];
    }
}

/* Workspace doubles that uv_wald() needs for a term of `df` degrees of freedom. */
size_t uv_wald_work(const uv_ctx *c, size_t df)
{
    return 3 * c->K + c->m->rank + df * df + df;
}

/* W from the perturbation's group sums A and sums of squares Q; Ω (K) and V⁻¹'s Cholesky
 * factor are left in the workspace for the classical extras: omega = work + K,
 * chol = work + 3K + rank. NaN when U_tᵀΩU_t is singular. */
double uv_wald(const uv_ctx *c, const double *Ut, size_t df, const double *A,
                   const double *Q, double *work)
{
    const sturdy_model *m = c->m;
    size_t K = c->K, rank = m->rank;
    double *a = work, *om = work + K, *dfit = work + 2 * K, *cf = work + 3 * K;
    double *V = cf + rank, *z = V + df * df;
    for (size_t g = 0; g < K; g++)
        a[g] = A[g] / m->sqrt_count[g];
    if (c->saturated) {
        for (size_t g = 0; g < K; g++)
            dfit[g] = A[g] / c->ng[g];
    } else {
        sturdy_model_group_projection(m, m->U, rank, a, cf, dfit);
    }
    for (size_t g = 0; g < K; g++) {
        double rss = Q[g] - 2.0 * dfit[g] * A[g] + c->ng[g] * dfit[g] * dfit[g];
        om[g] = (rss > 0 ? rss : 0.0) * c->hw[g];
    }
    sturdy_dot_rows(Ut, K, df, a, z);
    for (size_t j = 0; j < df; j++) {
        const double *uj = Ut + j * K;
        for (size_t i = j; i < df; i++) {
            const double *ui = Ut + i * K;
            double v = 0.0;
            for (size_t g = 0; g < K; g++)
                v += ui[g] * om[g] * uj[g];
            V[j * df + i] = v;
        }
    }
    if (!cholesky(V, df))
        return NAN;
    forward(V, df, z);
    double w = 0.0;
    for (size_t j = 0; j < df; j++)
        w += z[j] * z[j];
    return w;
}

void uv_ctx_free(uv_ctx *c)
{
    sturdy_free(c->ng);
    sturdy_free(c->hw);
    sturdy_free(c->scale);
}

/* Group weights; a reason (static text) when the test cannot be done at all. */
sturdy_status uv_ctx_init(uv_ctx *c, const sturdy_design *d, const sturdy_model *m,
                                 int hc3, const char **why, char *err)
{
    size_t K = m->K;
    assert(K == d->ngroups && why);
    memset(c, 0, sizeof *c);
    c->d = d;
    c->m = m;
    c->K = K;
    c->saturated = m->rank == K;
    *why = NULL;
    c->ng = sturdy_malloc(K * sizeof *c->ng);
    c->hw = sturdy_malloc(K * sizeof *c->hw);
    c->scale = sturdy_malloc(K * sizeof *c->scale);
    if (!c->ng || !c->hw || !c->scale) {
        uv_ctx_free(c);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    if (m->df_error == 0)
        *why = "no residual degrees of freedom: no variance can be estimated";
    for (size_t g = 0; g < K; g++) {
        double n = (double)d->group_count[g], h = m->leverage[g];
        c->ng[g] = n;
        if (!(1.0 - h > STURDY_LEVERAGE_ONE_TOL)) {
            if (!*why)
                *why = hc3 ? "a row is fitted exactly (leverage 1), so its variance cannot "
                             "be estimated"
                           : "a cell has one row, so its variance cannot be estimated; the "
                             "unequal-variance test needs at least 2 rows in every cell";
            c->hw[g] = c->scale[g] = 0.0;
            continue;
        }
        c->hw[g] = 1.0 / (n * (hc3 ? (1.0 - h) * (1.0 - h) : 1.0 - h));
        c->scale[g] = 1.0 / sqrt(1.0 - h);
    }
    return STURDY_OK;
}

/* The perturbation base v = y − f̃ of a term (f̃: the full fit less the term's own
 * projection), with its group sums A and sums of squares Q. ft: n scratch; s: K;
 * work: rank + K. */
void uv_restricted_residuals(const uv_ctx *c, const double *y, const double *Ut, size_t df,
                                 double *v, double *ft, double *A, double *Q, double *s,
                                 double *work)
{
    const sturdy_design *d = c->d;
    const sturdy_model *m = c->m;
    size_t K = c->K, n = d->n;
    sturdy_model_group_scaled(d, m, y, s);
    /* f̃ = Q_full Q_fullᵀ y − Q_t Q_tᵀ y, both as row vectors */
    sturdy_model_project(d, m, m->U, m->rank, s, work, v);
    sturdy_model_project(d, m, Ut, df, s, work, ft);
    for (size_t i = 0; i < n; i++)
        v[i] = y[i] - (v[i] - ft[i]);
    memset(A, 0, K * sizeof *A);
    memset(Q, 0, K * sizeof *Q);
    for (size_t i = 0; i < n; i++) {
        A[d->group[i]] += v[i];
        Q[d->group[i]] += v[i] * v[i];
    }
}

/* Johansen's (1980) approximate F: W / c with F(r, r(r + 2)/(3A)) degrees of freedom.
 * om: Ω (cell variances); L: V's Cholesky factor; x: df scratch. */
static void johansen_ref(const uv_ctx *c, const double *Ut, size_t df, double W,
                         const double *om, const double *L, double *x, sturdy_uv_result *u)
{
    size_t K = c->K;
    double r = (double)df;
    /* M_gg = Ω_g (U_t V⁻¹ U_tᵀ)_gg, with V⁻¹ = L⁻ᵀL⁻¹: (U_t V⁻¹ U_tᵀ)_gg = ‖L⁻¹ U_t,g·‖² */
    double A = 0.0;
    for (size_t g = 0; g < K; g++) {
        for (size_t j = 0; j < df; j++)
            x[j] = Ut[j * K + g];
        forward(L, df, x);
        double q = 0.0;
        for (size_t j = 0; j < df; j++)
            q += x[j] * x[j];
        double mgg = om[g] * q;
        A += mgg * mgg / (c->ng[g] - 1.0);
    }
    double cc = r + 2.0 * A - 6.0 * A / (r + 2.0);
    u->johansen = 1;
    u->stat = W / cc;
    u->df1 = r;
    u->df2 = A > 0 ? r * (r + 2.0) / (3.0 * A) : INFINITY;
    u->p = isinf(u->df2) ? sturdy_f_sf(u->stat, r, 1e300) : sturdy_f_sf(u->stat, r, u->df2);
}

/* The ANOVA-type statistic (Brunner, Dette & Munk 1997) with its two degrees of
 * freedom; left NaN when G is singular. a: the observed a_g = A_g/√n_g; om: Ω; x: df
 * scratch; G: df × df scratch. 0 when memory ran out. */
static int ats_ref(const uv_ctx *c, const double *Ut, size_t df, const double *a,
                   const double *om, double *x, double *G, sturdy_uv_result *u)
{
    size_t K = c->K;
    /* ATS: G = U_tᵀ D U_t = L_G L_Gᵀ, P = U_t G⁻¹ U_tᵀ = Y Yᵀ with row g of Y the solve
     * L_G⁻¹ U_t,g·; then P_gg = ‖Y_g‖², tr(TΣ) = Σ Ω_g P_gg and tr(TΣTΣ) = Σ_gh P_gh² Ω_g Ω_h
     * = ‖CᵀC‖²_F with C = diag(√Ω) Y — no K × K matrix is formed. */
    for (size_t j = 0; j < df; j++)
        for (size_t i = j; i < df; i++) {
            double t = 0.0;
            for (size_t g = 0; g < K; g++)
                t += Ut[i * K + g] * c->ng[g] * Ut[j * K + g];
            G[j * df + i] = t;
        }
    double *Y = sturdy_malloc(df * K * sizeof *Y);
    if (!Y || !cholesky(G, df)) {
        sturdy_free(Y);
        return Y != NULL;
    }
    for (size_t g = 0; g < K; g++) {
        for (size_t j = 0; j < df; j++)
            x[j] = Ut[j * K + g];
        forward(G, df, x);
        memcpy(Y + g * df, x, df * sizeof *x);
    }
    /* zᵀG⁻¹z = ‖L_G⁻¹z‖², and L_G⁻¹z = Σ_g Y_g a_g (U_tᵀa = U_tᵀs since U_t ⊥ f̃) */
    double num = 0.0, tr = 0.0, tr2 = 0.0, den2 = 0.0;
    for (size_t j = 0; j < df; j++) {
        double t = 0.0;
        for (size_t g = 0; g < K; g++)
            t += Y[g * df + j] * a[g];
        num += t * t;
    }
    for (size_t g = 0; g < K; g++) {
        double pgg = 0.0;
        for (size_t j = 0; j < df; j++)
            pgg += Y[g * df + j] * Y[g * df + j];
        tr += om[g] * pgg;
        den2 += pgg * pgg * om[g] * om[g] / (c->ng[g] - 1.0);
    }
    /* CᵀC (df × df), C = diag(√Ω) Y, reusing G */
    for (size_t j = 0; j < df; j++)
        for (size_t i = 0; i < df; i++) {
            double t = 0.0;
            for (size_t g = 0; g < K; g++)
                t += om[g] * Y[g * df + i] * Y[g * df + j];
            G[j * df + i] = t;
        }
    for (size_t q = 0; q < df * df; q++)
        tr2 += G[q] * G[q];
    if (tr > 0 && tr2 > 0 && den2 > 0) {
        u->ats = num / tr;
        u->ats_df1 = tr * tr / tr2;
        u->ats_df2 = tr * tr / den2;
        u->ats_p = sturdy_f_sf(u->ats, u->ats_df1, u->ats_df2);
    }
    sturdy_free(Y);
    return 1;
}

/* Johansen's approximate F and the ANOVA-type statistic from the observed Ω (cell
 * variances), a and V's Cholesky factor left in `work` by uv_wald(). Out of memory fails
 * the run: a report must not differ because memory was short. */
static sturdy_status factor_only_refs(const uv_ctx *c, const double *Ut, size_t df,
                                      double W, double *work, sturdy_uv_result *u, char *err)
{
    size_t K = c->K;
    /* factor-only models: the groups are the cells, each with at least 2 rows (else the
       test was ruled out in uv_ctx_init) */
    assert(K == c->d->ncells && df >= 1);
    const double *a = work, *om = work + K, *L = work + 3 * K + c->m->rank;
    double *x = sturdy_malloc((df ? df : 1) * sizeof *x);
    double *G = sturdy_malloc((df ? df * df : 1) * sizeof *G);
    int ok = x && G;
    if (ok) {
        johansen_ref(c, Ut, df, W, om, L, x, u);
        ok = ats_ref(c, Ut, df, a, om, x, G, u);
    }
    sturdy_free(x);
    sturdy_free(G);
    return ok ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

static void uv_init_result(sturdy_uv_result *u)
{
    u->wald = u->stat = u->df1 = u->df2 = u->p = NAN;
    u->ats = u->ats_df1 = u->ats_df2 = u->ats_p = NAN;
    u->p_wild = u->p_permuted = u->p_perm = NAN;
    u->p_perm_ci.lo = u->p_perm_ci.hi = NAN;
}

int sturdy_uv_uses_hc3(const sturdy_design *d)
{
    return d->ncov > 0 || d->has_block || d->ngroups != d->ncells;
}

sturdy_status sturdy_uv_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                  sturdy_response_result *out, char *err)
{
    int hc3 = sturdy_uv_uses_hc3(d);
    uv_ctx c;
    const char *why;
    sturdy_status st = uv_ctx_init(&c, d, m, hc3, &why, err);
    if (st)
        return st;
    size_t n = d->n, K = c.K;
    size_t maxdf = 0;
    for (size_t t = 0; t < out->nterms; t++)
        if (m->terms[t].df > maxdf)
            maxdf = m->terms[t].df;
    double *v = sturdy_malloc(n * sizeof *v);
    double *A = sturdy_malloc(K * sizeof *A);
    double *Q = sturdy_malloc(K * sizeof *Q);
    double *s = sturdy_malloc(K * sizeof *s), *pw = sturdy_malloc((m->rank + K) * sizeof *pw);
    double *work = sturdy_malloc(uv_wald_work(&c, maxdf) * sizeof *work);
    double *ft = sturdy_malloc(n * sizeof *ft);
    if (!v || !A || !Q || !s || !pw || !work || !ft) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    for (size_t t = 0; t < out->nterms && !st; t++) {
        sturdy_term_result *tr = &out->terms[t];
        sturdy_uv_result *u = &tr->uv;
        uv_init_result(u);
        const sturdy_term_basis *tb = &m->terms[t];
        if (why) { st = sturdy_note_once(&u->note, why, err); continue; }
        if (!(tr->f >= 0)) {
            st = sturdy_note_once(&u->note, tr->note ? tr->note : "the term has no test", err);
            continue;
        }
        uv_restricted_residuals(&c, d->y + r * n, tb->Uterm, tb->df, v, ft, A, Q, s, pw);
        double W = uv_wald(&c, tb->Uterm, tb->df, A, Q, work);
        if (isnan(W)) {
            st = sturdy_note_once(&u->note, "the cell variances leave the term's covariance "
                          "singular (cells without spread)", err);
            continue;
        }
        u->wald = W;
        u->df1 = (double)tb->df;
        if (!hc3) {
            st = factor_only_refs(&c, tb->Uterm, tb->df, W, work, u, err);
        } else {
            u->johansen = 0;
            u->stat = W / (double)tb->df;
            u->df2 = (double)m->df_error;
            u->p = sturdy_f_sf(u->stat, u->df1, u->df2);
        }
    }
done:
    sturdy_free(v); sturdy_free(A); sturdy_free(Q); sturdy_free(s); sturdy_free(pw);
    sturdy_free(work); sturdy_free(ft);
    uv_ctx_free(&c);
    return st;
}

sturdy_status sturdy_uv_finish(const sturdy_result *r, sturdy_term_result *t, char *err)
{
    sturdy_uv_result *u = &t->uv;
    if (isnan(u->wald))
        return STURDY_OK;
    if (r->nperm == 0)
        return sturdy_note_once(&u->perm_note, "no rearrangements were asked for", err);
    if (r->opts.spread_scheme == STURDY_SPREAD_NONE)
        return sturdy_note_once(&u->perm_note, "the statistic was not resampled (its approximate F "
                        "is the better calibrated p; a resampling scheme for the "
                        "unequal-variance test asks for it)", err);
    double B = (double)r->nperm;
    /* the wild bootstrap is a random draw even when the rearrangements are enumerated */
    u->p_wild = (1.0 + (double)u->exceed_wild) / (1.0 + B);
    uint64_t k = u->exceed_wild;
    if (r->opts.spread_scheme == STURDY_SPREAD_PERMUTATION) {
        if (u->perm_note)
            return STURDY_OK;
        u->p_permuted = r->exact ? (double)u->exceed_perm / B
                                 : (1.0 + (double)u->exceed_perm) / (1.0 + B);
        u->p_perm = u->p_permuted;
        k = u->exceed_perm;
        if (r->exact) {
            u->p_perm_ci.lo = u->p_perm_ci.hi = u->p_perm;
            return STURDY_OK;
        }
    } else {
        u->p_perm = u->p_wild;
    }
    sturdy_clopper_pearson(k, r->nperm, 0.99, &u->p_perm_ci.lo, &u->p_perm_ci.hi);
    return STURDY_OK;
}
