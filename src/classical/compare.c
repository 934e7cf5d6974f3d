/* compare.c — marginal means of every factor term and the pairwise differences of main
 * effects and of two-factor simple effects, with classical simultaneous intervals.
 *
 * Means: least-squares (means.c), in the response's units, classical t intervals with the
 * residual df. Differences: estimate, SE, t, unadjusted p, Hedges' g on the pooled
 * residual SD, and a simultaneous interval and adjusted p over the term's family from
 * the studentized range (range.c):
 *   Tukey–Kramer (Tukey 1953; Kramer 1956): each difference with its own SE from the
 *     pooled residual variance, q(conf; k, df_error)/√2 · SE; exact for balanced one-way
 *     designs and conservative for unequal sizes (Hayter 1984). With covariates or
 *     missing cells the means are correlated beyond that case and the bound is the usual
 *     approximation.
 *   Games–Howell (Games & Howell 1976), when the run's spread rule (the one that puts
 *     the unequal-variance test first, residuals.c) says cell spreads differ: the SE
 *     from the cell variances of the cell means each marginal mean averages, and Welch's
 *     df per difference. It needs cell means to be the model's fit: factors only, all
 *     interactions, every cell with 2 rows or more; otherwise Tukey–Kramer with a note.
 * k, the number of means of the range: the factor's levels for a main effect; for the
 * simple effects of a two-factor term the term's cells — every simple effect is a
 * difference of two cells, so the all-pairs-of-cells range bounds the family
 * (conservative). With a control level only comparisons against it are made. For a
 * main effect under Tukey–Kramer (pooled variance) the family's correlations are those
 * of its contrasts, ρ_ij = w_iᵀw_j/(‖w_i‖‖w_j‖); when they have the product form
 * ρ_ij = λ_iλ_j (checked to 1e-9: one-way designs, and least-squares means whose
 * covariance is diagonal plus the control's, as balanced or proportional designs) the
 * adjustment is Dunnett's (1955) exact many-to-one multivariate t (range.c). Otherwise
 * (simple effects of a two-factor term, Games–Howell, covariates that break the form)
 * the range over all k levels bounds the smaller family (conservative). */
#include <assert.h>
#include <gsl/gsl_cdf.h>
#include <math.h>
#include <string.h>

#include "classical/classical.h"
#include "classical/means.h"
#include "classical/range.h"
#include "core/core.h"

#define NO_LEVEL ((size_t)-1)
/* Guard on the cell lookup table (cells possible); larger designs skip Games–Howell. */
#define CELL_MAP_MAX (1u << 20)

typedef struct {
    const sturdy_design *d;
    const sturdy_compare_setup *cs;
    const sturdy_response_result *out;
    sturdy_lsm lsm;
    double *v;            /* rank: Qᵀy */
    double *L, *L2, *w;   /* p, p, rank */
    size_t *cellmap;      /* cells possible → cell index, or NO_LEVEL (NULL: none) */
    int gh;               /* Games–Howell applies */
    double mse, dfe, tq;  /* residual MS and df, t quantile at the level */
} ctx;

static size_t popcount(uint32_t x)
{
    size_t n = 0;
    for (; x; x &= x - 1) n++;
    return n;
}

static size_t full_index(const sturdy_design *d, const size_t *level)
{
    size_t idx = 0;
    for (size_t f = 0; f < d->nfactors; f++)
        idx = idx * d->factors[f].nlevels + level[f];
    return idx;
}

/* Does the slice of cells with these levels on `mask` contain an empty cell? */
static int slice_has_empty(const ctx *c, uint32_t mask, const size_t *level)
{
    const sturdy_design *d = c->d;
    if (!c->cellmap)
        return 0;
    size_t lv[STURDY_MAX_FACTORS];
    for (size_t idx = 0; idx < d->ncells_possible; idx++) {
        size_t rest = idx;
        for (size_t f = d->nfactors; f-- > 0;) {
            lv[f] = rest % d->factors[f].nlevels;
            rest /= d->factors[f].nlevels;
        }
        int match = 1;
        for (size_t f = 0; f < d->nfactors && match; f++)
            if ((mask & (1u << f)) && lv[f] != level[f]) match = 0;
        if (match && c->cellmap[idx] == NO_LEVEL)
            return 1;
    }
    return 0;
}

static double dot(const double *a, const double *b, size_t n)
{
    double s = 0;
    for (size_t i = 0; i < n; i++) s += a[i] * b[i];
    return s;
}

static sturdy_status fill_mean(ctx *c, size_t term, uint32_t mask, const size_t *level,
                               sturdy_mean_result *mr, double yref, char *err)
{
    const sturdy_design *d = c->d;
    mr->term = term;
    mr->mask = mask;
    for (size_t f = 0; f < STURDY_MAX_FACTORS; f++)
        mr->level[f] = f < d->nfactors && (mask & (1u << f)) ? level[f] : 0;
    mr->estimate = mr->se = mr->df = NAN;
    mr->ci.lo = mr->ci.hi = mr->ci_boot.lo = mr->ci_boot.hi = NAN;
    sturdy_lsm_vector(d, mask, level, c->L);
    if (!sturdy_lsm_weights(&c->lsm, c->L, c->w)) {
        int cell = popcount(mask) == d->nfactors;
        mr->note = sturdy_strdup(
            slice_has_empty(c, mask, level)
                ? (cell ? "not estimable: no rows in this cell"
                        : "not estimable: it averages over cells without rows")
                : "not estimable: confounded with other terms of the model");
        return mr->note ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    mr->estimate = dot(c->w, c->v, c->lsm.rank) + yref;
    if (!(mr->w = sturdy_malloc((c->lsm.rank + 1) * sizeof *mr->w)))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    memcpy(mr->w, c->w, c->lsm.rank * sizeof *mr->w);
    if (!(c->dfe > 0) || !isfinite(c->mse)) {
        mr->note = sturdy_strdup("no residual degrees of freedom for a standard error");
        return mr->note ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    mr->se = sqrt(c->mse * dot(c->w, c->w, c->lsm.rank));
    mr->df = c->dfe;
    mr->ci.lo = mr->estimate - c->tq * mr->se;
    mr->ci.hi = mr->estimate + c->tq * mr->se;
    return STURDY_OK;
}

/* Games–Howell SE and Welch df of mean(la) − mean(lb) on `mask`: each marginal mean is
 * the plain average of the cell means in its slice. */
static void games_howell(const ctx *c, uint32_t mask, const size_t *la, const size_t *lb,
                         double *se, double *df)
{
    const sturdy_design *d = c->d;
    size_t na = 0, nb = 0;
    for (size_t cell = 0; cell < d->ncells; cell++) {
        const size_t *cl = &d->cell_levels[cell * d->nfactors];
        int ma = 1, mb = 1;
        for (size_t f = 0; f < d->nfactors; f++)
            if (mask & (1u << f)) {
                ma &= cl[f] == la[f];
                mb &= cl[f] == lb[f];
            }
        na += ma;
        nb += mb;
    }
    double var = 0, den = 0;
    for (size_t cell = 0; cell < d->ncells; cell++) {
        const size_t *cl = &d->cell_levels[cell * d->nfactors];
        int ma = 1, mb = 1;
        for (size_t f = 0; f < d->nfactors; f++)
            if (mask & (1u << f)) {
                ma &= cl[f] == la[f];
                mb &= cl[f] == lb[f];
            }
        double wgt = (ma ? 1.0 / (double)na : 0.0) - (mb ? 1.0 / (double)nb : 0.0);
        if (wgt == 0)
            continue;
        double n = (double)d->cell_count[cell], sd = c->out->cell_sd[cell];
        double a = wgt * wgt * sd * sd / n;
        var += a;
        den += a * a / (n - 1);
    }
    *se = sqrt(var);
    *df = den > 0 ? var * var / den : NAN;   /* Welch (1947) – Satterthwaite (1946) */
}

/* One comparison of the family of `term` with k means (its range-based adjustment comes
 * at finish: sturdy_compare_adjust). */
static sturdy_status fill_comparison(ctx *c, sturdy_comparison *cp, uint32_t mask,
                                     const size_t *la, const size_t *lb, double k,
                                     char *err)
{
    const sturdy_design *d = c->d;
    double conf = c->cs->conf;
    cp->estimate = cp->se = cp->df = cp->t = cp->p = cp->g = cp->p_adjusted = NAN;
    cp->t_pooled = cp->se_pooled = cp->range_k = NAN;
    cp->ci.lo = cp->ci.hi = cp->ci_simultaneous.lo = cp->ci_simultaneous.hi = NAN;
    cp->p_perm_adjusted = cp->p_boot_adjusted = NAN;
    cp->ci_boot_simultaneous.lo = cp->ci_boot_simultaneous.hi = NAN;
    cp->method = c->gh ? STURDY_ADJ_GAMES_HOWELL : STURDY_ADJ_TUKEY_KRAMER;
    cp->lambda = NAN;
    sturdy_lsm_vector(d, mask, la, c->L);
    sturdy_lsm_vector(d, mask, lb, c->L2);
    for (size_t j = 0; j < d->p; j++)
        c->L[j] -= c->L2[j];
    if (!sturdy_lsm_weights(&c->lsm, c->L, c->w)) {
        cp->note = sturdy_strdup("not estimable: a mean it compares is not estimable");
        return cp->note ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    cp->estimate = dot(c->w, c->v, c->lsm.rank);
    cp->t_pooled = NAN;
    if (!(c->dfe > 0) || !isfinite(c->mse) || !(c->mse > 0)) {
        cp->note = sturdy_strdup("no residual variance for a standard error");
        return cp->note ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    double ww = dot(c->w, c->w, c->lsm.rank);
    if (ww > 0) {
        if (!(cp->w = sturdy_malloc(c->lsm.rank * sizeof *cp->w)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        memcpy(cp->w, c->w, c->lsm.rank * sizeof *cp->w);
        cp->se_pooled = sqrt(c->mse * ww);
        cp->w_norm = sqrt(ww);
        cp->t_pooled = cp->estimate / cp->se_pooled;
    }
    double J = 1.0 - 3.0 / (4.0 * c->dfe - 1.0);   /* Hedges (1981) small-sample factor */
    cp->g = cp->estimate / sqrt(c->mse) * J;
    if (c->gh) {
        games_howell(c, mask, la, lb, &cp->se, &cp->df);
    } else {
        cp->se = sqrt(c->mse * dot(c->w, c->w, c->lsm.rank));
        cp->df = c->dfe;
    }
    if (!(cp->se > 0) || !(cp->df > 0)) {
        cp->se = NAN;
        cp->note = sturdy_strdup("the difference has no spread to studentise by");
        return cp->note ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    cp->t = cp->estimate / cp->se;
    cp->p = 2.0 * gsl_cdf_tdist_Q(fabs(cp->t), cp->df);
    double tq = c->gh ? gsl_cdf_tdist_Pinv(0.5 + 0.5 * conf, cp->df) : c->tq;
    cp->ci.lo = cp->estimate - tq * cp->se;
    cp->ci.hi = cp->estimate + tq * cp->se;
    cp->range_k = k;
    return STURDY_OK;
}

/* Pairs of levels of factor f: with a control level, (x, control) for every other x;
 * else (j, i) for i < j. Calls back with the two levels; returns the count. */
static size_t npairs(const ctx *c, size_t f)
{
    size_t L = c->d->factors[f].nlevels;
    return c->cs->control_factor == f ? L - 1 : L * (L - 1) / 2;
}

static sturdy_status family(ctx *c, size_t term, sturdy_comparison *cps, size_t *nc,
                            char *err)
{
    const sturdy_design *d = c->d;
    const sturdy_term *t = &d->terms[term];
    size_t fs[2], nf = 0;
    for (size_t f = 0; f < d->nfactors; f++)
        if (t->mask & (1u << f)) fs[nf++] = f;
    double k = 1;
    for (size_t i = 0; i < nf; i++) k *= (double)d->factors[fs[i]].nlevels;
    for (size_t ia = 0; ia < nf; ia++) {
        size_t a = fs[ia], b = nf == 2 ? fs[1 - ia] : NO_LEVEL;
        size_t nby = b == NO_LEVEL ? 1 : d->factors[b].nlevels;
        size_t L = d->factors[a].nlevels;
        for (size_t lb = 0; lb < nby; lb++)
            for (size_t j = 0; j < L; j++)
                for (size_t i = 0; i < L; i++) {
                    size_t ctl = c->cs->control_factor == a ? c->cs->control_level : NO_LEVEL;
                    if (ctl != NO_LEVEL ? (i != ctl || j == ctl) : i >= j)
                        continue;
                    size_t la[STURDY_MAX_FACTORS] = {0}, lv[STURDY_MAX_FACTORS] = {0};
                    la[a] = j;
                    lv[a] = i;
                    if (b != NO_LEVEL) la[b] = lv[b] = lb;
                    sturdy_comparison *cp = &cps[(*nc)++];
                    cp->term = term;
                    cp->family = c->out->nfamilies;
                    cp->factor = a;
                    cp->level = j;
                    cp->versus = i;
                    cp->within = b != NO_LEVEL;
                    cp->by_factor = b != NO_LEVEL ? b : 0;
                    cp->by_level = lb;
                    sturdy_status st = fill_comparison(c, cp, t->mask, la, lv, k, err);
                    if (st)
                        return st;
                }
    }
    return STURDY_OK;
}

/* Dunnett's product form for the control family [b, e) of a main effect: sets method and
 * lambda of each member when ρ_ij = λ_iλ_j holds (|λ| < 1), else leaves them. */
static void manyone_form(const ctx *c, sturdy_comparison *cps, size_t b, size_t e)
{
    size_t m = e - b, r = c->lsm.rank;
    if (m == 0 || m > STURDY_MANYONE_MAX || c->gh)
        return;
    for (size_t i = b; i < e; i++)
        if (!cps[i].w || !isfinite(cps[i].t) || cps[i].method != STURDY_ADJ_TUKEY_KRAMER)
            return;
#define RHO(i, j) (dot(cps[b + (i)].w, cps[b + (j)].w, r) /                         \
                   sqrt(dot(cps[b + (i)].w, cps[b + (i)].w, r) *                    \
                        dot(cps[b + (j)].w, cps[b + (j)].w, r)))
    double l0;
    if (m == 1) {
        cps[b].lambda = 0.0;
        cps[b].method = STURDY_ADJ_DUNNETT;
        return;
    } else if (m == 2) {
        l0 = sqrt(fabs(RHO(0, 1)));
    } else {
        size_t bj = 1, bk = 2;
        double best = 0;
        for (size_t j = 1; j < m; j++)
            for (size_t k = j + 1; k < m; k++)
                if (fabs(RHO(j, k)) > best) {
                    best = fabs(RHO(j, k));
                    bj = j;
                    bk = k;
                }
        if (best == 0)
            return;
        double l2 = RHO(0, bj) * RHO(0, bk) / RHO(bj, bk);
        if (!(l2 >= 0))
            return;
        l0 = sqrt(l2);
    }
    if (!(l0 > 0 && l0 < 1))
        return;
    for (size_t i = 0; i < m; i++)
        cps[b + i].lambda = i == 0 ? l0 : RHO(0, i) / l0;
    for (size_t i = 0; i < m; i++) {
        if (!(fabs(cps[b + i].lambda) < 1))
            return;
        for (size_t j = i + 1; j < m; j++)
            if (fabs(cps[b + i].lambda * cps[b + j].lambda - RHO(i, j)) > 1e-9)
                return;
    }
#undef RHO
    for (size_t i = b; i < e; i++)
        cps[i].method = STURDY_ADJ_DUNNETT;
}

/* Games–Howell applies: spreads differ and the cell means are the model's fit. */
static int gh_applies(const ctx *c)
{
    const sturdy_design *d = c->d;
    if (!c->cs->spread_differs || d->ncov || d->has_block || d->ncells != d->ncells_possible ||
        d->min_cell < 2)
        return 0;
    size_t nfac = 0;
    for (size_t ti = 0; ti < d->nterms; ti++)
        nfac += d->terms[ti].kind == STURDY_TERM_FACTORS;
    return nfac + 1 == ((size_t)1 << d->nfactors);
}

sturdy_status sturdy_compare_response(const sturdy_design *d, const sturdy_model *m, size_t ri,
                                      const sturdy_compare_setup *cs,
                                      sturdy_response_result *out, char *err)
{
    ctx c;
    memset(&c, 0, sizeof c);
    c.d = d;
    c.cs = cs;
    c.out = out;
    c.mse = out->ms_error;
    c.dfe = out->df_error;
    c.tq = c.dfe > 0 ? gsl_cdf_tdist_Pinv(0.5 + 0.5 * cs->conf, c.dfe) : NAN;
    sturdy_status st = sturdy_lsm_init(d, m, &c.lsm, err);
    if (st)
        return st;
    size_t r = m->rank, p = d->p, K = d->ngroups;
    c.v = sturdy_calloc(r + 1, sizeof(double));
    c.L = sturdy_calloc(2 * p + r + K + 1, sizeof(double));
    out->compare_shown = sturdy_calloc(d->nterms + 1, 1);
    if (d->ncells_possible <= CELL_MAP_MAX)
        c.cellmap = sturdy_malloc(d->ncells_possible * sizeof *c.cellmap);
    size_t nmeans = 0, ncomp = 0;
    for (size_t ti = 0; ti < d->nterms; ti++) {
        const sturdy_term *t = &d->terms[ti];
        if (t->kind != STURDY_TERM_FACTORS)
            continue;
        size_t cells = 1;
        for (size_t f = 0; f < d->nfactors; f++)
            if (t->mask & (1u << f)) cells *= d->factors[f].nlevels;
        nmeans += cells;
        if (t->order == 1)
            ncomp += npairs(&c, __builtin_ctz(t->mask));
        else if (t->order == 2) {
            size_t f = __builtin_ctz(t->mask), g = __builtin_ctz(t->mask & (t->mask - 1));
            ncomp += npairs(&c, f) * d->factors[g].nlevels + npairs(&c, g) * d->factors[f].nlevels;
        }
    }
    out->means = sturdy_calloc(nmeans + 1, sizeof *out->means);
    out->comparisons = sturdy_calloc(ncomp + 1, sizeof *out->comparisons);
    if (!c.v || !c.L || !out->compare_shown || !out->means || !out->comparisons ||
        (d->ncells_possible <= CELL_MAP_MAX && !c.cellmap)) {
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        goto done;
    }
    c.L2 = c.L + p;
    c.w = c.L + 2 * p;
    double *sv = c.w + r;
    sturdy_model_group_scaled(d, m, &d->y[ri * d->n], sv);
    for (size_t a = 0; a < r; a++)
        c.v[a] = dot(&m->U[a * K], sv, K);
    if (c.cellmap) {
        for (size_t i = 0; i < d->ncells_possible; i++) c.cellmap[i] = NO_LEVEL;
        for (size_t cell = 0; cell < d->ncells; cell++)
            c.cellmap[full_index(d, &d->cell_levels[cell * d->nfactors])] = cell;
    }
    c.gh = gh_applies(&c);
    for (size_t ti = 0; ti < d->nterms && !st; ti++) {
        const sturdy_term *t = &d->terms[ti];
        if (t->kind != STURDY_TERM_FACTORS)
            continue;
        size_t lv[STURDY_MAX_FACTORS] = {0};
        for (;;) {   /* every level combination, the last factor fastest */
            if ((st = fill_mean(&c, ti, t->mask, lv, &out->means[out->nmeans++],
                                d->y_ref[ri], err)))
                break;
            size_t f = d->nfactors;
            while (f-- > 0) {
                if (!(t->mask & (1u << f))) continue;
                if (++lv[f] < d->factors[f].nlevels) break;
                lv[f] = 0;
            }
            if (f == (size_t)-1) break;
        }
        if (!st && (t->order == 1 || t->order == 2)) {
            size_t before = out->ncomparisons;
            st = family(&c, ti, out->comparisons, &out->ncomparisons, err);
            if (!st && t->order == 1 && cs->control_factor == (size_t)__builtin_ctz(t->mask))
                manyone_form(&c, out->comparisons, before, out->ncomparisons);
            if (out->ncomparisons > before)
                out->nfamilies++;
        }
    }
    assert(st || (out->nmeans == nmeans && out->ncomparisons == ncomp));
done:
    sturdy_lsm_free(&c.lsm);
    sturdy_free(c.v);
    sturdy_free(c.L);
    sturdy_free(c.cellmap);
    return st;
}

/* Comparisons whose range quantiles are found together (range.c); a longer run of one
 * family and k is split (each piece interpolated over its own df). */
#define COMPARE_QBATCH 512
/* distinct k tabulated per response (more are integrated) */
#define COMPARE_NTAB 32

/* The comparisons [i, e) that share their simultaneous quantile: a Dunnett family, or
 * a run of one family's comparisons with the same k (all of a Tukey–Kramer family, one
 * df; a Games–Howell family has a df per pair, whose quantiles range.c takes at once,
 * interpolating many distinct df), at most COMPARE_QBATCH; e = i for a comparison without
 * one. */
static size_t batch_end(const sturdy_response_result *rr, size_t i)
{
    const sturdy_comparison *cp = &rr->comparisons[i];
    size_t e = i;
    if (cp->method == STURDY_ADJ_DUNNETT) {
        while (e < rr->ncomparisons && rr->comparisons[e].family == cp->family &&
               rr->comparisons[e].method == STURDY_ADJ_DUNNETT)
            e++;
        return e;
    }
    if (!isfinite(cp->t) || !(cp->range_k >= 2))
        return i;
    while (e < rr->ncomparisons && e - i < COMPARE_QBATCH &&
           rr->comparisons[e].family == cp->family &&
           rr->comparisons[e].method != STURDY_ADJ_DUNNETT &&
           rr->comparisons[e].range_k == cp->range_k && isfinite(rr->comparisons[e].t))
        e++;
    return e;
}

/* The table of the range's inner tail for k among tabs (nt of them), or NULL. */
static const sturdy_range_table *table_of(sturdy_range_table *const *tabs, const double *tk,
                                          size_t nt, double k)
{
    for (size_t i = 0; i < nt; i++)
        if (tk[i] == k)
            return tabs[i];
    return NULL;
}

/* The simultaneous intervals and adjusted p of the comparisons [i, e) of one batch. */
static void adjust_batch(sturdy_response_result *rr, size_t i, size_t e, double conf,
                         const sturdy_range_table *tab, struct sturdy_cache *cache)
{
    sturdy_comparison *cp = &rr->comparisons[i];
    if (cp->method == STURDY_ADJ_DUNNETT) {   /* the whole family at once */
        double lambda[STURDY_MANYONE_MAX] = {0};
        for (size_t j = i; j < e; j++)
            lambda[j - i] = rr->comparisons[j].lambda;
        double qd = sturdy_manyone_quantile(conf, e - i, lambda, cp->df);
        for (size_t j = i; j < e; j++) {
            sturdy_comparison *cj = &rr->comparisons[j];
            cj->p_adjusted = sturdy_manyone_upper(fabs(cj->t), e - i, lambda, cj->df);
            cj->ci_simultaneous.lo = cj->estimate - qd * cj->se;
            cj->ci_simultaneous.hi = cj->estimate + qd * cj->se;
        }
        return;
    }
    double dfs[COMPARE_QBATCH] = {0}, qs[COMPARE_QBATCH], work[COMPARE_QBATCH];
    for (size_t j = i; j < e; j++)
        dfs[j - i] = rr->comparisons[j].df;
    if (tab) {   /* with the tabulated inner tail an exact quantile per distinct df is cheap */
        for (size_t j = 0; j < e - i; j++) {
            qs[j] = NAN;
            for (size_t l = 0; l < j && isnan(qs[j]); l++)
                if (dfs[l] == dfs[j])
                    qs[j] = qs[l];
            if (isnan(qs[j]))
                qs[j] = sturdy_cache_range_quantile(cache, tab, conf, cp->range_k, dfs[j]);
        }
    } else {
        sturdy_range_quantiles(conf, cp->range_k, dfs, e - i, qs, work);
    }
    for (size_t j = i; j < e; j++) {
        sturdy_comparison *cj = &rr->comparisons[j];
        double q = qs[j - i];
        cj->ci_simultaneous.lo = cj->estimate - q / sqrt(2.0) * cj->se;
        cj->ci_simultaneous.hi = cj->estimate + q / sqrt(2.0) * cj->se;
    }
}

int sturdy_compare_adjust(sturdy_response_result *rr, double conf, int threads,
                          struct sturdy_cache *cache)
{
    /* the range quantile depends on (k, df) only: one per family under Tukey–Kramer
       (the same residual df), one per comparison under Games–Howell. Batches and
       comparisons are independent of each other (each value is computed alone), so
       the threads change nothing but the time. */
    size_t nc = rr->ncomparisons, nb = 0, ntab = 0;
    size_t *begin = sturdy_malloc((nc + 1) * sizeof *begin);
    int nt = threads > 1 ? threads : 1;
    if (!begin)
        return 1;
    /* one table of the range's inner tail per k above 2 (the families' level counts;
       beyond COMPARE_NTAB distinct k the rest are integrated, the same values to 2e-14) */
    double tk[COMPARE_NTAB];
    sturdy_range_table *tabs[COMPARE_NTAB];
    int kept[COMPARE_NTAB];      /* the cache's (not freed here) */
    for (size_t i = 0; i < nc && ntab < COMPARE_NTAB; i++) {
        const sturdy_comparison *cp = &rr->comparisons[i];
        int seen = 0;
        for (size_t j = 0; j < ntab; j++)
            seen |= tk[j] == cp->range_k;
        if (cp->method == STURDY_ADJ_DUNNETT || !isfinite(cp->t) || !(cp->range_k > 2) || seen)
            continue;
        tk[ntab] = cp->range_k;
        tabs[ntab] = sturdy_cache_range_table(cache, cp->range_k);
        kept[ntab] = tabs[ntab] != NULL;
        ntab++;
    }
#pragma omp parallel for schedule(dynamic, 1) num_threads(nt)
    for (size_t i = 0; i < ntab; i++)
        if (!kept[i])
            tabs[i] = sturdy_range_table_new(tk[i]);
    int short_of_memory = 0;
    for (size_t i = 0; i < ntab; i++)
        short_of_memory |= tabs[i] == NULL;
    for (size_t i = 0; i < ntab; i++)   /* the new ones the cache takes live on there */
        if (!kept[i] && !short_of_memory)
            kept[i] = sturdy_cache_keep_range_table(cache, tabs[i], tk[i]);
    if (short_of_memory) {
        for (size_t i = 0; i < ntab; i++)
            if (!kept[i])
                sturdy_range_table_free(tabs[i]);
        sturdy_free(begin);
        return 1;
    }
    for (size_t i = 0; i < nc;) {
        size_t e = batch_end(rr, i);
        if (e == i) {
            i++;
            continue;
        }
        begin[nb++] = i;
        i = e;
    }
#pragma omp parallel num_threads(nt)
    {
#pragma omp for schedule(dynamic, 1) nowait
        for (size_t b = 0; b < nb; b++)
            adjust_batch(rr, begin[b], batch_end(rr, begin[b]), conf,
                         table_of(tabs, tk, ntab, rr->comparisons[begin[b]].range_k), cache);
        /* the range-based adjusted p, one tail per comparison */
#pragma omp for schedule(dynamic, 4)
        for (size_t j = 0; j < nc; j++) {
            sturdy_comparison *cj = &rr->comparisons[j];
            if (cj->method != STURDY_ADJ_DUNNETT && isfinite(cj->t) && cj->range_k >= 2)
                cj->p_adjusted =
                    sturdy_range_upper_tab(table_of(tabs, tk, ntab, cj->range_k),
                                           sqrt(2.0) * fabs(cj->t), cj->range_k, cj->df);
        }
    }
    for (size_t i = 0; i < ntab; i++)
        if (!kept[i])
            sturdy_range_table_free(tabs[i]);
    sturdy_free(begin);
    return 0;
}
