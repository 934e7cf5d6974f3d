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

void sturdy_maxt_free(sturdy_maxt *x)
{
    for (size_t q = 0; x->cm && q < x->C; q++)
        sturdy_free(x->cm[q].z);
    sturdy_free(x->cm);
    sturdy_free(x->fam_begin);
    sturdy_free(x->Qfix);
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
    return -log(sturdy_f_sf(num / var, 1.0, mb->df));
}

void sturdy_maxt_count(const sturdy_maxt *x, const double *t2, size_t nb, uint64_t *count)
{
    for (size_t f = 0; f < x->nfam; f++) {
        size_t q0 = x->fam_begin[f], q1 = x->fam_begin[f + 1];
        for (size_t bb = 0; bb < nb; bb++) {
            double mx = -1.0;
            for (size_t q = q0; q < q1; q++) {
                double v = t2[q * nb + bb];
                if (v > mx) mx = v;   /* NaN never wins */
            }
            for (size_t q = q0; q < q1; q++)
                if (mx >= x->cm[q].t2obs * (1.0 - STURDY_TIE_RTOL))
                    count[q]++;
        }
    }
}
