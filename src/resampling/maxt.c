/* maxt.c — single-step max-T adjusted p-values for the pairwise comparisons of marginal
 * means (Westfall & Young 1993, algorithm 2.8), from the permutation engine's own
 * rearrangements (permute.c gathers these columns beside the F tests' ones).
 *
 * Each comparison c is a contrast wᵀQᵀy of the full model with pooled t statistic
 * t_c = wᵀQᵀy / (σ̂‖w‖). Under Freedman–Lane its null model is the full model without
 * the contrast's direction q_c = Qw/‖w‖, whose residuals are r + q_c q_cᵀy (r: the full
 * model's residuals); the rearranged data are that model's fit plus rearranged
 * residuals, and since the fit has contrast zero, t*_c = zᵀs* / (‖w‖ σ*) with z = Uw,
 * s* the scaled group sums of the rearranged vector and σ*² its residual SS over the
 * residual df (Winkler et al. 2014, one null model per contrast). ter Braak rearranges
 * the full residuals, raw the centred response. The family is one term's comparisons
 * in one response; the adjusted p of c is the share of rearrangements whose max over
 * the family of |t*| reaches |t_c|. Studentising each rearranged difference by its own
 * SE makes the maximum fair across differences of unequal precision.
 *
 * Unequal spreads. When the comparison's classical side is Games–Howell (the run's spread
 * rule fired and the cell means are the model's fit, compare.c), each rearranged
 * difference is studentised by its own heteroscedasticity-consistent SE instead,
 *   t*_c = zᵀs* / √(Σ_g z_g² s*_g²),   s*_g²: the within-cell variance of the rearranged
 * vector (the model's fit is constant within a cell, so it is the replicate's), which
 * is the Games–Howell SE of the rearranged data: the cell weights of the contrast are
 * a_g = z_g √n_g (estimate = Σ a_g ȳ_g) and Σ a_g² s_g²/n_g = Σ z_g² s_g². The observed
 * statistic is the Games–Howell t. The differences of a family then have Welch df far
 * apart (a noisy small cell gives 7, the others 20), so the maximum is taken on the
 * p scale, min over c of p_c(t*_c) with p_c the two-sided t(df_c) tail at the observed
 * Welch df (single-step min-p, Westfall & Young 1993, §2.6), stored as −ln p: a max of
 * raw |t| would be decided by the heavy-tailed differences alone. The studentisation
 * makes each rearranged statistic's law nearly free of the cell spreads (Janssen 1997),
 * which the pooled t is not. */
#include <math.h>
#include <string.h>

#include "resampling/maxt.h"
#include "core/core.h"
#include "resampling/resampling.h"
#include "sturdy/dist.h"

sturdy_status sturdy_maxt_init(sturdy_maxt *x, const sturdy_design *d, const sturdy_model *m,
                               const sturdy_run *run, sturdy_result *r, char *err)
{
    memset(x, 0, sizeof *x);
    x->dfe = (double)m->df_error;
    size_t total = 0, K = m->K;
    for (size_t ri = 0; ri < r->nresp; ri++)
        total += r->resp[ri].ncomparisons;
    x->cm = sturdy_calloc(total + 1, sizeof *x->cm);
    x->fam_begin = sturdy_calloc(total + 2, sizeof *x->fam_begin);
    if (!x->cm || !x->fam_begin)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    sturdy_status st;
    for (size_t ri = 0; ri < r->nresp; ri++) {
        sturdy_response_result *rr = &r->resp[ri];
        size_t last_term = (size_t)-1;
        for (size_t i = 0; i < rr->ncomparisons; i++) {
            sturdy_comparison *cp = &rr->comparisons[i];
            const char *why = run->nperm == 0 ? "no rearrangements were asked for"
                              : !cp->w || !isfinite(cp->t_pooled)
                                  ? "no statistic to rearrange (the difference has no "
                                    "estimate or standard error)"
                                  : NULL;
            if (why) {
                if ((st = sturdy_note_once(&cp->perm_note, why, err)))
                    return st;
                continue;
            }
            if (cp->term != last_term || x->nfam == 0) {
                x->fam_begin[x->nfam++] = x->C;
                last_term = cp->term;
            }
            sturdy_maxt_member *mb = &x->cm[x->C++];
            mb->cmp = cp;
            mb->family = x->nfam - 1;
            mb->het = cp->method == STURDY_ADJ_GAMES_HOWELL && isfinite(cp->t);
            mb->df = cp->df;
            mb->t2obs = mb->het ? -log(sturdy_f_sf(cp->t * cp->t, 1.0, cp->df))
                                : cp->t_pooled * cp->t_pooled;
            if (mb->t2obs <= (mb->het ? STURDY_TIE_ZERO_LOGP : STURDY_TIE_ZERO))
                mb->t2obs = 0.0;    /* zero up to rounding: every rearrangement counts */
            if (!(mb->z = sturdy_calloc(K, sizeof *mb->z)))
                return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
            double ww = 0;
            for (size_t a = 0; a < m->rank; a++) {
                ww += cp->w[a] * cp->w[a];
                for (size_t g = 0; g < K; g++)
                    mb->z[g] += m->U[a * K + g] * cp->w[a];
            }
            mb->ww = ww;
        }
    }
    x->fam_begin[x->nfam] = x->C;
    for (size_t q = 0; q < x->C; q++)
        if (x->cm[q].het)
            x->Csq = x->C;
    (void)d;
    return STURDY_OK;
}

sturdy_status sturdy_maxt_rows(sturdy_maxt *x, const sturdy_design *d, const sturdy_model *m,
                               const sturdy_result *r, sturdy_method method,
                               const size_t *blk_rows, const uint32_t *lab0, int flip,
                               char *err)
{
    size_t n = d->n, K = m->K, C = x->C;
    x->Cp = (C + 3) & ~(size_t)3;
    x->nresp = r->nresp;
    x->resp_begin = sturdy_calloc(r->nresp + 1, sizeof *x->resp_begin);
    x->E = sturdy_calloc(n * r->nresp + 1, sizeof *x->E);
    x->A = sturdy_calloc(K * x->Cp + 1, sizeof *x->A);
    if (!x->resp_begin || !x->E || !x->A)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (flip && x->Csq) {   /* flips keep each row's square: no columns needed */
        x->Csq = 0;
        if (!(x->Qfix = sturdy_calloc(C * K + 1, sizeof *x->Qfix)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t ri = 0; ri < r->nresp; ri++) {
        const sturdy_response_result *rr = &r->resp[ri];
        const double *y = d->y + ri * n;
        double mean = method == STURDY_METHOD_RAW ? sturdy_mean(y, n) : 0.0;
        for (size_t k = 0; k < n; k++) {
            size_t i = blk_rows[k];
            x->E[k * r->nresp + ri] = method == STURDY_METHOD_RAW ? y[i] - mean
                                                                  : rr->residual[i];
        }
    }
    size_t ri = 0;
    for (size_t q = 0; q < C; q++) {
        const sturdy_maxt_member *mb = &x->cm[q];
        while (ri < r->nresp && !(mb->cmp >= r->resp[ri].comparisons &&
                                  mb->cmp < r->resp[ri].comparisons + r->resp[ri].ncomparisons))
            x->resp_begin[++ri] = q;
        /* r + q_c (q_cᵀy), as sturdy_maxt_vector: row i of Qw is z_g / √n_g */
        double scale = method == STURDY_METHOD_FREEDMAN_LANE ? mb->cmp->estimate / mb->ww
                                                             : 0.0;
        for (size_t g = 0; method != STURDY_METHOD_RAW && g < K; g++)
            x->A[g * x->Cp + q] = scale * mb->z[g] / m->sqrt_count[g];
    }
    while (ri < r->nresp)
        x->resp_begin[++ri] = C;
    for (size_t rj = 0; rj < r->nresp; rj++)
        for (size_t q = x->resp_begin[rj]; q < x->resp_begin[rj + 1]; q++) {
            double vv = 0.0;
            for (size_t k = 0; k < n; k++) {
                double v = x->E[k * r->nresp + rj] + x->A[lab0[k] * x->Cp + q];
                if (x->Qfix)
                    x->Qfix[q * K + lab0[k]] += v * v;
                vv += v * v;
            }
            x->cm[q].vv = vv;
            for (size_t g = 0; x->Qfix && g < K; g++)
                x->Qfix[q * K + g] /= m->sqrt_count[g];
        }
    return STURDY_OK;
}

double sturdy_maxt_value(const sturdy_maxt *x, size_t q, size_t k, uint32_t g)
{
    size_t ri = 0;
    while (ri + 1 < x->nresp && q >= x->resp_begin[ri + 1])
        ri++;
    return x->E[k * x->nresp + ri] + x->A[(size_t)g * x->Cp + q];
}

void sturdy_maxt_gather(const sturdy_maxt *x, size_t n, const uint32_t *lab,
                        const uint32_t *lab0, const signed char *sign, double *T,
                        double *T2)
{
    size_t Cp = x->Cp, nr = x->nresp;
    for (size_t k = 0; k < n; k++) {
        const double *restrict a = x->A + (size_t)lab0[k] * Cp;
        double *restrict dst = T + (size_t)lab[k] * Cp;
        double sg = sign ? (double)sign[k] : 1.0;
        for (size_t ri = 0; ri < nr; ri++) {
            double e = x->E[k * nr + ri];
            size_t q0 = x->resp_begin[ri], q1 = x->resp_begin[ri + 1];
            if (nr == 1) {      /* one response: whole groups of 4, padding included,
                                   which the compiler turns into vector operations */
                if (T2) {
                    double *restrict dst2 = T2 + (size_t)lab[k] * Cp;
                    for (size_t q = 0; q < Cp; q += 4) {
                        double v0 = e + a[q], v1 = e + a[q + 1];
                        double v2 = e + a[q + 2], v3 = e + a[q + 3];
                        dst[q] += v0; dst[q + 1] += v1; dst[q + 2] += v2; dst[q + 3] += v3;
                        dst2[q] += v0 * v0; dst2[q + 1] += v1 * v1;
                        dst2[q + 2] += v2 * v2; dst2[q + 3] += v3 * v3;
                    }
                } else {
                    for (size_t q = 0; q < Cp; q += 4) {
                        dst[q] += sg * (e + a[q]);
                        dst[q + 1] += sg * (e + a[q + 1]);
                        dst[q + 2] += sg * (e + a[q + 2]);
                        dst[q + 3] += sg * (e + a[q + 3]);
                    }
                }
                continue;
            }
            if (T2) {
                double *restrict dst2 = T2 + (size_t)lab[k] * Cp;
                for (size_t q = q0; q < q1; q++) {
                    double v = e + a[q];
                    dst[q] += v;
                    dst2[q] += v * v;
                }
            } else if (sign) {
                for (size_t q = q0; q < q1; q++)
                    dst[q] += sg * (e + a[q]);
            } else {
                for (size_t q = q0; q < q1; q++)
                    dst[q] += e + a[q];
            }
        }
    }
}

void sturdy_maxt_free(sturdy_maxt *x)
{
    for (size_t q = 0; x->cm && q < x->C; q++)
        sturdy_free(x->cm[q].z);
    sturdy_free(x->cm);
    sturdy_free(x->fam_begin);
    sturdy_free(x->Qfix);
    sturdy_free(x->resp_begin);
    sturdy_free(x->E);
    sturdy_free(x->A);
    memset(x, 0, sizeof *x);
}

void sturdy_maxt_vector(const sturdy_maxt *x, size_t q, const sturdy_design *d,
                        const sturdy_model *m, const sturdy_result *r, sturdy_method method,
                        double *v)
{
    const sturdy_maxt_member *mb = &x->cm[q];
    size_t ri = 0;
    while (ri + 1 < r->nresp && !(mb->cmp >= r->resp[ri].comparisons &&
                                  mb->cmp < r->resp[ri].comparisons + r->resp[ri].ncomparisons))
        ri++;
    const sturdy_response_result *rr = &r->resp[ri];
    size_t n = d->n;
    if (method == STURDY_METHOD_RAW) {
        const double *y = d->y + ri * n;
        double mean = sturdy_mean(y, n);
        for (size_t i = 0; i < n; i++)
            v[i] = y[i] - mean;
        return;
    }
    /* r + q_c (q_cᵀy): row i of Qw is z_g / √n_g, and q_cᵀy·‖w‖ = estimate */
    double scale = method == STURDY_METHOD_TER_BRAAK ? 0.0 : mb->cmp->estimate / mb->ww;
    for (size_t i = 0; i < n; i++) {
        size_t g = d->group[i];
        v[i] = rr->residual[i] + scale * mb->z[g] / m->sqrt_count[g];
    }
}

void sturdy_maxt_numerators(const sturdy_maxt *x, size_t q, const double *S, size_t K,
                            size_t nb, double *num)
{
    const double *z = x->cm[q].z;
    for (size_t bb = 0; bb < nb; bb++) {
        double a = 0.0;
        for (size_t g = 0; g < K; g++)
            a += z[g] * S[bb * K + g];
        num[bb] = a * a;
    }
}

double sturdy_maxt_t2(const sturdy_maxt *x, size_t q, double num, double den, double zero_rtol)
{
    const sturdy_maxt_member *mb = &x->cm[q];
    double zero = zero_rtol * mb->vv;
    if (den <= zero)
        return num > zero ? INFINITY : NAN;
    return num * x->dfe / (mb->ww * den);
}

double sturdy_maxt_t2_het(const sturdy_maxt *x, size_t q, const double *S, const double *Q,
                          const double *sqrt_count, size_t K, double num, double zero_rtol)
{
    const sturdy_maxt_member *mb = &x->cm[q];
    double var = 0.0;
    for (size_t g = 0; g < K; g++) {
        double ng = sqrt_count[g] * sqrt_count[g];
        if (mb->z[g] == 0.0 || ng < 2.0)
            continue;
        /* S_g = Σv/√n_g, Q_g = Σv²/√n_g: within-cell SS = √n_g·Q_g − S_g² */
        double ss = sqrt_count[g] * Q[g] - S[g] * S[g];
        if (ss < 0) ss = 0;
        var += mb->z[g] * mb->z[g] * ss / (ng - 1.0);
    }
    double zero = zero_rtol * mb->vv * mb->ww;
    if (var <= zero)
        return num > zero ? INFINITY : NAN;
    return num / var;
}

double sturdy_maxt_lp(double t2, double df)
{
    if (isnan(t2))
        return NAN;
    return isinf(t2) ? INFINITY : -log(sturdy_f_sf(t2, 1.0, df));
}

/* An upper bound of sturdy_maxt_lp(t2, df) for every df: the two-sided t tail is larger
 * than the normal one at every |t| > 0 and finite df (its distribution function rises
 * with df for t > 0), so −ln p is at most −ln 2Q(|t|); the margin covers the rounding
 * of both tails (each within 1e-13 relative of its value, −ln p within 1e-12). The
 * normal tail costs a twentieth of the t tail's incomplete beta. */
double sturdy_maxt_lp_bound(double t2)
{
    if (!(t2 > 0))
        return isnan(t2) ? NAN : 1e-9;
    double p = erfc(sqrt(0.5 * t2));
    return p > 0 ? -log(p) * (1.0 + 1e-9) + 1e-9 : INFINITY;
}

void sturdy_maxt_fold_lp(double t2, double df, double *mx)
{
    if (isnan(t2) || !(sturdy_maxt_lp_bound(t2) > *mx))
        return;                 /* NaN never wins; nor does a value bounded by the max */
    double v = sturdy_maxt_lp(t2, df);
    if (v > *mx)
        *mx = v;
}

void sturdy_maxt_count(const sturdy_maxt *x, const double *t2, size_t nb, uint64_t *count)
{
    for (size_t f = 0; f < x->nfam; f++) {
        size_t q0 = x->fam_begin[f], q1 = x->fam_begin[f + 1];
        for (size_t bb = 0; bb < nb; bb++) {
            double mx = -1.0;
            for (size_t q = q0; q < q1; q++) {
                double v = t2[q * nb + bb];
                if (x->cm[q].het)       /* on the p scale, −ln p, only where it can win */
                    sturdy_maxt_fold_lp(v, x->cm[q].df, &mx);
                else if (v > mx)
                    mx = v;   /* NaN never wins */
            }
            for (size_t q = q0; q < q1; q++)
                if (mx >= x->cm[q].t2obs * (1.0 - STURDY_TIE_RTOL))
                    count[q]++;
        }
    }
}
