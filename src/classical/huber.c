/* huber.c — the outlier-resistant statistic of a term: Huber (1973) M-estimates of the
 * full and the reduced model with one common fixed scale, and the drop in dispersion of
 * Schrader & Hettmansperger (1980, Biometrika 67:93–101).
 *
 * The fit. ρ(u) = u²/2 for |u| ≤ c, c|u| − c²/2 beyond, ψ = ρ' = clip(u, −c, c), with
 * c = STURDY_HUBER_C and u = (y − μ)/σ. A model is a group-space basis U (fit.h): its
 * fitted values are μ_g = Σ_c Z_gc a_c with Z_gc = U_gc / √n_g, constant within a group,
 * so every product below is a sum over groups of row sums (no n × p matrix). Σρ is convex
 * and piecewise quadratic: a Newton step for the rows' current pattern (clipped below,
 * inside, clipped above) solves (ZᵀDZ) Δa = σ ZᵀΨ with D_g the rows of group g inside and
 * Ψ_g the group's sum of ψ; when the pattern after the step is the one it was computed for,
 * the step has landed on the exact minimum (up to rounding). A step that does not lower
 * Σρ, or a singular ZᵀDZ, is replaced by an iteratively reweighted least-squares step
 * (weights ψ(u)/u), which always lowers it (Huber 1981, §7.8). Both the observed data and
 * every rearrangement use this same routine.
 *
 * The scale. σ = median |e_i| / Φ⁻¹(3/4) of the full model's least-squares residuals (the
 * normalised MAD about zero, the scale statsmodels' RLM computes by default from its
 * least-squares start), fixed during both fits, so that the two fits minimise the same
 * objective and the drop compares like with like.
 *
 * The statistic. S = 2 (Σρ(e_R/σ) − Σρ(e_F/σ)) / λ̂ with λ̂ = [Σψ²(e_F/σ)/(n − p)] /
 * [Σψ'(e_F/σ)/n] from the full fit: Schrader & Hettmansperger's likelihood-ratio type
 * statistic, asymptotically χ² on the term's df under normal-like errors. The report uses
 * only its resampled p (resistant_perm.c), never the χ² reference. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "classical/classical.h"
#include "core/core.h"

/* Φ⁻¹(3/4): the MAD of a normal sample is σ·Φ⁻¹(3/4). */
#define MAD_NORMAL 0.6744897501960817
/* Iterations of one fit at most; Newton steps end in a few, IRLS steps (the fallback)
 * converge linearly. */
#define HUBER_MAXIT 500
/* A fit stops when no fitted value moves by more than this fraction of σ: two orders
 * above the rounding of sums of a few thousand terms (≈1e-13 relative). */
#define HUBER_TOL 1e-12
/* Halvings of a Newton step that overshoots before falling back to a reweighting step. */
#define HUBER_HALVINGS 30

sturdy_status sturdy_huber_work_alloc(size_t n, size_t K, size_t rmax, sturdy_huber_work *w,
                                      char *err)
{
    memset(w, 0, sizeof *w);
    size_t r = rmax ? rmax : 1;
    w->W = sturdy_malloc(K * sizeof *w->W);
    w->P = sturdy_malloc(K * sizeof *w->P);
    w->mu = sturdy_malloc(K * sizeof *w->mu);
    w->mu_red = sturdy_malloc(K * sizeof *w->mu_red);
    w->mu_new = sturdy_malloc(K * sizeof *w->mu_new);
    w->A = sturdy_malloc(r * r * sizeof *w->A);
    w->b = sturdy_malloc(r * sizeof *w->b);
    w->e = sturdy_malloc((n ? n : 1) * sizeof *w->e);
    w->pat = sturdy_malloc(n ? n : 1);
    w->isq = sturdy_malloc(K * sizeof *w->isq);
    if (!w->isq || !w->W || !w->P || !w->mu || !w->mu_red || !w->mu_new || !w->A || !w->b || !w->e ||
        !w->pat) {
        sturdy_huber_work_free(w);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    return STURDY_OK;
}

void sturdy_huber_work_free(sturdy_huber_work *w)
{
    if (!w) return;
    sturdy_free(w->W); sturdy_free(w->P); sturdy_free(w->mu); sturdy_free(w->mu_red);
    sturdy_free(w->mu_new); sturdy_free(w->A); sturdy_free(w->b); sturdy_free(w->e);
    sturdy_free(w->pat);
    sturdy_free(w->isq);
    memset(w, 0, sizeof *w);
}

/* The k-th smallest of x[0..n) (0-based), reordering x (Hoare's selection). */
static double select_kth(double *x, size_t n, size_t k)
{
    size_t lo = 0, hi = n - 1;
    while (lo < hi) {
        double pivot = x[lo + (hi - lo) / 2];
        size_t i = lo, j = hi;
        while (i <= j) {
            while (x[i] < pivot) i++;
            while (x[j] > pivot) j--;
            if (i <= j) {
                double t = x[i];
                x[i] = x[j];
                x[j] = t;
                i++;
                if (j == 0) break;
                j--;
            }
        }
        if (k <= j) hi = j;
        else if (k >= i) lo = i;
        else return x[k];
    }
    return x[k];
}

/* The median of x[0..n) (the mean of the middle two for even n), reordering x. */
static double median_inplace(double *x, size_t n)
{
    size_t k = (n - 1) / 2;
    double a = select_kth(x, n, k);
    if (n % 2) return a;
    double b = x[k + 1];
    for (size_t i = k + 2; i < n; i++) if (x[i] < b) b = x[i];
    return 0.5 * (a + b);
}

static double rho(double u)
{
    double a = fabs(u);
    return a <= STURDY_HUBER_C ? 0.5 * u * u : STURDY_HUBER_C * a - 0.5 * STURDY_HUBER_C *
                                                                       STURDY_HUBER_C;
}

static double rho_sum(const double *y, const uint32_t *g, size_t n, const double *mu,
                      double sigma)
{
    double s = 0.0, is = 1.0 / sigma;
    for (size_t i = 0; i < n; i++) s += rho((y[i] - mu[g[i]]) * is);
    return s;
}

/* Least-squares fitted group values on basis U (K × r column-major) of values y in groups
 * g: μ = Z Zᵀ(group sums) with Z = U/√n_g. */
void sturdy_huber_ls(const double *y, const uint32_t *g, size_t n, const double *U, size_t K,
                     size_t r, const double *inv_sqrt, sturdy_huber_work *w, double *mu)
{
    memset(w->P, 0, K * sizeof *w->P);
    for (size_t i = 0; i < n; i++) w->P[g[i]] += y[i];
    for (size_t k = 0; k < K; k++) w->P[k] *= inv_sqrt[k];
    for (size_t c = 0; c < r; c++) {
        double a = 0.0;
        for (size_t k = 0; k < K; k++) a += U[c * K + k] * w->P[k];
        w->b[c] = a;
    }
    for (size_t k = 0; k < K; k++) mu[k] = 0.0;
    for (size_t c = 0; c < r; c++)
        for (size_t k = 0; k < K; k++) mu[k] += U[c * K + k] * w->b[c];
    for (size_t k = 0; k < K; k++) mu[k] *= inv_sqrt[k];
}

/* Solve (Zᵀ diag(Wt) Z) a = Zᵀ rhs by Cholesky and return Z a in out; 0 when the matrix
 * is not safely positive definite. */
static int weighted_solve(const double *U, size_t K, size_t r, const double *inv_sqrt,
                          double *Wt, double *rhs, sturdy_huber_work *w, double *out)
{
    double *A = w->A, *b = w->b;
    for (size_t k = 0; k < K; k++) {          /* to the basis' scaled coordinates */
        Wt[k] *= inv_sqrt[k] * inv_sqrt[k];
        rhs[k] *= inv_sqrt[k];
    }
    for (size_t c1 = 0; c1 < r; c1++) {
        const double *u1 = U + c1 * K;
        double bb = 0.0;
        for (size_t k = 0; k < K; k++) bb += u1[k] * rhs[k];
        b[c1] = bb;
        for (size_t c2 = 0; c2 <= c1; c2++) {
            const double *u2 = U + c2 * K;
            double a = 0.0;
            for (size_t k = 0; k < K; k++) a += u1[k] * u2[k] * Wt[k];
            A[c1 * r + c2] = a;
        }
    }
    /* the pivot is relative to the unweighted diagonal (1 for an orthonormal U): one
       this small means some direction of the model has no row inside */
    if (!sturdy_cholesky_solve(A, r, b, STURDY_RANK_TOL)) return 0;
    for (size_t k = 0; k < K; k++) out[k] = 0.0;
    for (size_t c = 0; c < r; c++)
        for (size_t k = 0; k < K; k++) out[k] += U[c * K + k] * b[c];
    for (size_t k = 0; k < K; k++) out[k] *= inv_sqrt[k];
    return 1;
}

/* The rows' pattern: −1 clipped below, 0 inside, +1 clipped above; returns 1 when it
 * differs from the stored one (and stores the new one). */
static int pattern(const double *y, const uint32_t *g, size_t n, const double *mu,
                   double sigma, signed char *pat)
{
    int changed = 0;
    for (size_t i = 0; i < n; i++) {
        double u = (y[i] - mu[g[i]]) / sigma;
        signed char p = u > STURDY_HUBER_C ? 1 : u < -STURDY_HUBER_C ? -1 : 0;
        changed |= p != pat[i];
        pat[i] = p;
    }
    return changed;
}

/* Σρ along the step from mu to mu_new, halved until it drops below obj (Σρ is convex
 * along the line, so some fraction does unless mu is already the minimum); returns Σρ
 * at the mu_new kept. */
static double halve_step(const double *y, const uint32_t *g, size_t n, const double *mu,
                         size_t K, double sigma, double obj, double obj_new, double *mu_new)
{
    for (int h = 0; h < HUBER_HALVINGS && !(obj_new <= obj); h++) {
        for (size_t k = 0; k < K; k++) mu_new[k] = 0.5 * (mu_new[k] + mu[k]);
        obj_new = rho_sum(y, g, n, mu_new, sigma);
    }
    return obj_new;
}

/* The group sums of an IRLS step: weights 1 inside, c/|u| outside. */
static void irls_sums(const double *y, const uint32_t *g, size_t n, const double *mu,
                      size_t K, double sigma, double *W, double *P)
{
    const double c = STURDY_HUBER_C;
    memset(W, 0, K * sizeof *W);
    memset(P, 0, K * sizeof *P);
    for (size_t i = 0; i < n; i++) {
        double a = fabs((y[i] - mu[g[i]]) / sigma);
        double wt = a <= c ? 1.0 : c / a;
        W[g[i]] += wt;
        P[g[i]] += wt * y[i];
    }
}

/* Moves mu to mu_new and the pattern with it; 1 when the fit has converged: an undamped
 * Newton step that kept its pattern, or no fitted value moving by HUBER_TOL·σ. */
static int take_step(const double *y, const uint32_t *g, size_t n, size_t K, double sigma,
                     int newton, sturdy_huber_work *w, double *mu)
{
    double move = 0.0;
    for (size_t k = 0; k < K; k++) {
        double dm = fabs(w->mu_new[k] - mu[k]);
        if (dm > move) move = dm;
        mu[k] = w->mu_new[k];
    }
    int changed = pattern(y, g, n, mu, sigma, w->pat);
    return (newton && !changed) || move <= HUBER_TOL * sigma;
}

/* The full model of a factorial design spans group space (r = K): every group has its
 * own fitted value, and the fit is each group's Huber location, found group by group
 * with the same Newton steps (D_g μ_g + σΨ_g over D_g) and the same fallback. */
static int fit_groups(const double *y, const uint32_t *g, size_t n, size_t K, double sigma,
                      sturdy_huber_work *w, double *mu)
{
    const double c = STURDY_HUBER_C;
    double obj = rho_sum(y, g, n, mu, sigma);
    memset(w->pat, 2, n);
    pattern(y, g, n, mu, sigma, w->pat);
    for (int it = 1; it <= HUBER_MAXIT; it++) {
        memset(w->W, 0, K * sizeof *w->W);
        memset(w->P, 0, K * sizeof *w->P);
        for (size_t i = 0; i < n; i++) {
            if (w->pat[i] == 0) {
                w->W[g[i]] += 1.0;
                w->P[g[i]] += y[i];
            } else {
                w->P[g[i]] += sigma * (w->pat[i] > 0 ? c : -c);
            }
        }
        int newton = 1;
        for (size_t k = 0; k < K && newton; k++) {
            if (w->W[k] > 0) w->mu_new[k] = w->P[k] / w->W[k];
            else newton = 0;               /* every row of the group clipped */
        }
        double obj_new = newton ? rho_sum(y, g, n, w->mu_new, sigma) : INFINITY;
        if (newton && !(obj_new <= obj)) {
            obj_new = halve_step(y, g, n, mu, K, sigma, obj, obj_new, w->mu_new);
            newton = 0;
        }
        if (!(obj_new <= obj)) {
            irls_sums(y, g, n, mu, K, sigma, w->W, w->P);
            for (size_t k = 0; k < K; k++) w->mu_new[k] = w->P[k] / w->W[k];
            newton = 0;
            obj_new = rho_sum(y, g, n, w->mu_new, sigma);
        }
        obj = obj_new;
        if (take_step(y, g, n, K, sigma, newton, w, mu)) return it;
    }
    return -HUBER_MAXIT;
}

int sturdy_huber_fit(const double *y, const uint32_t *g, size_t n, const double *U, size_t K,
                     size_t r, const double *inv_sqrt, double sigma, sturdy_huber_work *w,
                     double *mu)
{
    const double c = STURDY_HUBER_C;
    if (r == K) return fit_groups(y, g, n, K, sigma, w, mu);
    double obj = rho_sum(y, g, n, mu, sigma);
    memset(w->pat, 2, n);                  /* no pattern yet */
    pattern(y, g, n, mu, sigma, w->pat);
    for (int it = 1; it <= HUBER_MAXIT; it++) {
        /* Newton step for the current pattern: rhs σΨ_g + D_g μ_g, so that the solve
           returns μ + Δμ directly */
        memset(w->W, 0, K * sizeof *w->W);
        memset(w->P, 0, K * sizeof *w->P);
        for (size_t i = 0; i < n; i++) {
            double u = (y[i] - mu[g[i]]) / sigma;
            if (w->pat[i] == 0) {
                w->W[g[i]] += 1.0;
                w->P[g[i]] += y[i];
            } else {
                w->P[g[i]] += sigma * (u > 0 ? c : -c);
            }
        }
        /* P now holds Σ_inside y + σ Σ_clipped ±c = σΨ_g + D_g μ_g */
        int newton = weighted_solve(U, K, r, inv_sqrt, w->W, w->P, w, w->mu_new);
        double obj_new = newton ? rho_sum(y, g, n, w->mu_new, sigma) : INFINITY;
        if (newton && !(obj_new <= obj)) {
            /* the pattern changes along the step */
            obj_new = halve_step(y, g, n, mu, K, sigma, obj, obj_new, w->mu_new);
            newton = 0;                    /* a damped step is not a converged one */
        }
        if (!(obj_new <= obj)) {
            irls_sums(y, g, n, mu, K, sigma, w->W, w->P);
            newton = 0;
            if (!weighted_solve(U, K, r, inv_sqrt, w->W, w->P, w, w->mu_new))
                return -it;                /* cannot happen with all weights > 0 */
            obj_new = rho_sum(y, g, n, w->mu_new, sigma);
        }
        obj = obj_new;
        if (take_step(y, g, n, K, sigma, newton, w, mu)) return it;
    }
    return -HUBER_MAXIT;
}

int sturdy_rs_statistic(const double *y, const uint32_t *g, size_t n, const sturdy_model *m,
                        const double *Ured, size_t rred, sturdy_huber_work *w,
                        sturdy_rs_stat *out)
{
    size_t K = m->K, p = m->rank;
    out->stat = out->drop = out->lambda = out->scale = NAN;
    out->it_full = out->it_red = 0;
    for (size_t k = 0; k < K; k++) w->isq[k] = 1.0 / m->sqrt_count[k];
    /* the scale: MAD about zero of the full model's least-squares residuals */
    sturdy_huber_ls(y, g, n, m->U, K, p, w->isq, w, w->mu);
    for (size_t i = 0; i < n; i++) w->e[i] = fabs(y[i] - w->mu[g[i]]);
    double sigma = median_inplace(w->e, n) / MAD_NORMAL;
    out->scale = sigma;
    if (!(sigma > 0) || !isfinite(sigma)) return 0;
    out->it_full = sturdy_huber_fit(y, g, n, m->U, K, p, w->isq, sigma, w, w->mu);
    sturdy_huber_ls(y, g, n, Ured, K, rred, w->isq, w, w->mu_red);
    out->it_red = sturdy_huber_fit(y, g, n, Ured, K, rred, w->isq, sigma, w, w->mu_red);
    double dF = 0.0, dR = 0.0, psi2 = 0.0, dpsi = 0.0;
    for (size_t i = 0; i < n; i++) {
        double u = (y[i] - w->mu[g[i]]) / sigma, ur = (y[i] - w->mu_red[g[i]]) / sigma;
        dF += rho(u);
        dR += rho(ur);
        double ps = u > STURDY_HUBER_C ? STURDY_HUBER_C : u < -STURDY_HUBER_C ? -STURDY_HUBER_C
                                                                              : u;
        psi2 += ps * ps;
        dpsi += fabs(u) <= STURDY_HUBER_C;
    }
    double drop = dR - dF;
    if (drop < 0) drop = 0;                /* both fits at their minimum: rounding only */
    out->drop = drop;
    if (!(dpsi > 0) || n <= p || !(psi2 > 0)) return 0;
    out->lambda = (psi2 / (double)(n - p)) / (dpsi / (double)n);
    out->stat = 2.0 * drop / out->lambda;
    return 1;
}

/* The largest basis a term's fits need. */
static size_t max_rank(const sturdy_model *m)
{
    size_t r = m->rank;
    for (size_t k = 0; k < m->nterms; k++)
        if (m->terms[k].rank_red > r) r = m->terms[k].rank_red;
    return r;
}

sturdy_status sturdy_rs_response(const sturdy_design *d, const sturdy_model *m, size_t r,
                                 sturdy_response_result *out, char *err)
{
    size_t n = d->n;
    sturdy_huber_work w;
    uint32_t *g = sturdy_malloc((n ? n : 1) * sizeof *g);
    double *y = sturdy_malloc((n ? n : 1) * sizeof *y);
    sturdy_status st = g && y ? sturdy_huber_work_alloc(n, m->K, max_rank(m), &w, err)
                              : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (st) {
        sturdy_free(g);
        sturdy_free(y);
        return st;
    }
    for (size_t i = 0; i < n; i++) {
        g[i] = (uint32_t)d->group[i];
        y[i] = d->y[r * n + i];
    }
    for (size_t k = 0; k < out->nterms && !st; k++) {
        sturdy_term_result *t = &out->terms[k];
        sturdy_rs_result *rs = &t->rs;
        rs->stat = rs->drop = rs->lambda = rs->scale = rs->p_perm = NAN;
        rs->p_perm_ci.lo = rs->p_perm_ci.hi = NAN;
        if (!(t->f >= 0) || !m->terms[k].testable || m->terms[k].df == 0) {
            st = sturdy_note_once(&rs->note, t->note ? t->note : "the term has no F-test, so "
                                  "no resistant test either", err);
            continue;
        }
        sturdy_rs_stat s;
        double *Ured = NULL;    /* R's basis for this term alone (fit.h keeps the smaller form) */
        size_t rred = 0;
        if ((st = sturdy_model_reduced_basis(d, m, k, &Ured, &rred, err)))
            break;
        int ok = sturdy_rs_statistic(y, g, n, m, Ured, rred, &w, &s);
        sturdy_free(Ured);
        rs->scale = s.scale;
        rs->iter_full = s.it_full;
        rs->iter_red = s.it_red;
        if (!ok) {
            st = sturdy_note_once(&rs->note, "the resistant statistic cannot be computed: at "
                                  "least half the residuals are zero, or no row lies inside "
                                  "the clipping", err);
            continue;
        }
        rs->stat = s.stat;
        rs->drop = s.drop;
        rs->lambda = s.lambda;
    }
    sturdy_huber_work_free(&w);
    sturdy_free(g);
    sturdy_free(y);
    return st;
}
