/* test_paths.c — the cell-sum path against the straightforward n-row path: identical
 * exceedance counts (and matching bootstrap intervals) on balanced, unbalanced and
 * blocked designs, for every method and SS type. The row path treats every row as its
 * own group (sturdy_model_spec.row_groups), so its projections are n-row products.
 *
 * Then the two ways the engine forms the group sums of a rearrangement (forced through
 * STURDY_PERM_PATH): the row gather and the cell-count table (cellcount.c), which must
 * give identical exceedance, family-wise and max-T counts and F* bins on every method,
 * flip and SS type, over nine more data sets: continuous, heavily tied (integer responses),
 * and with cell spreads unequal enough that the comparisons are studentised per cell
 * (their squared columns); and the cell-count sums against a direct sum.
 *
 * And the comparisons' statistics from the pair table (maxt_pairs.c, forced through
 * STURDY_PERM_PATH=pairs) against the gather: identical max-T counts (and every other
 * count) on the same data sets, and its t*² against the direct sum of the rearranged
 * vectors. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "core/result.h"
#include "resampling/cellcount.h"
#include "resampling/maxt_pairs.h"
#include "classical/range.h"
#include "sturdy/sturdy.h"

/* what run() asks besides its arguments */
static uint64_t g_boot = 300;
static sturdy_compare_mode g_compare = STURDY_COMPARE_SIGNIFICANT;

static void set_path(const char *p)
{
    if (p)
        setenv(STURDY_PERM_PATH_ENV, p, 1);
    else
        unsetenv(STURDY_PERM_PATH_ENV);
}

/* Bootstrap endpoints of the two paths differ only by rounding in sums of different
 * length; 1e-9 relative leaves room for that and nothing else. */
#define BOOT_REL_TOL 1e-9

/* Invented property-test data: 3 factors (3×2×2), `per` rows per cell (plus `extra`
 * rows in some cells for unbalance), a block of 3 levels, skewed errors. */
/* kind 0: as above; 1: responses rounded to whole units (y) and halves (z), so many
 * rearrangements tie; 2: spreads that differ by factor a (y) and b (z) several-fold. */
static char *make_csv_kind(uint64_t seed, size_t per, int unbalanced, int kind)
{
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, seed, 7, 0);
    size_t cap = 1 << 16, len = 0;
    char *csv = malloc(cap);
    len += (size_t)snprintf(csv, cap, "a,b,c,blk,y,z\n");
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 2; b++)
            for (int c = 0; c < 2; c++) {
                size_t k = per + (unbalanced ? (size_t)((a + 2 * b + c) % 3) : 0);
                for (size_t i = 0; i < k; i++) {
                    double u = sturdy_pcg_unit(&g), v = sturdy_pcg_unit(&g);
                    double e = -log(1.0 - u) - 1.0; /* centred exponential */
                    double y = 10 + 0.8 * a + 0.5 * (b == c) + e * (kind == 2 ? 1 + 3 * a : 1);
                    double z = 3 + 0.3 * b + (v - 0.5) * (kind == 2 ? 1 + 5 * b : 1);
                    if (kind == 1) {
                        y = floor(y + 0.5);
                        z = floor(2 * z + 0.5) / 2;
                    }
                    len += (size_t)snprintf(csv + len, cap - len, "a%d,b%d,c%d,k%zu,%.6f,%.6f\n",
                                            a, b, c, i % 3, y, z);
                }
            }
    return csv;
}

static char *make_csv(uint64_t seed, size_t per, int unbalanced)
{
    return make_csv_kind(seed, per, unbalanced, 0);
}

static sturdy_result *run(const char *csv, int rows, int method, int flip, int ss, int block,
                          uint64_t B)
{
    sturdy_table *t = NULL;
    sturdy_table_opts to;
    sturdy_table_opts_init(&to);
    char err[STURDY_ERR_LEN];
    if (sturdy_table_load_buffer("paths.csv", csv, strlen(csv), &to, &t, err)) {
        printf("FAIL  load: %s\n", err);
        return NULL;
    }
    sturdy_options o;
    sturdy_options_init(&o);
    static const char *ys[] = {"y", "z"}, *fs[] = {"a", "b", "c"};
    o.model.responses = ys;
    o.model.nresponses = 2;
    o.model.factors = fs;
    o.model.nfactors = 3;
    o.model.block = block ? "blk" : NULL;
    o.model.row_groups = rows;
    o.method = (sturdy_method)method;
    o.flip = flip;
    o.ss_type = ss;
    o.permutations = B;
    o.bootstrap = g_boot;
    o.compare_mode = g_compare;
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.threads = 2;
    sturdy_result *r = NULL;
    if (sturdy_analyze(t, &o, &ctx, &r, err))
        printf("FAIL  analyze: %s\n", err);
    sturdy_table_free(t);
    return r;
}

static void compare(const char *what, const sturdy_result *a, const sturdy_result *b)
{
    char name[256];
    CHECK(what, a && b);
    if (!a || !b)
        return;
    CHECK_INT("groups differ between paths (cells vs rows)",
              a->design->ngroups < b->design->ngroups, 1);
    for (size_t ri = 0; ri < a->nresp; ri++)
        for (size_t t = 0; t < a->resp[ri].nterms; t++) {
            const sturdy_term_result *x = &a->resp[ri].terms[t], *y = &b->resp[ri].terms[t];
            snprintf(name, sizeof name, "%s %s %s exceed", what, a->resp[ri].name, x->label);
            CHECK_INT(name, x->exceed, y->exceed);
            snprintf(name, sizeof name, "%s %s %s exceed_fwer", what, a->resp[ri].name,
                     x->label);
            CHECK_INT(name, x->exceed_fwer, y->exceed_fwer);
            if (!isnan(x->ci_bca[STURDY_ES_PARTIAL_ETA2].lo)) {
                snprintf(name, sizeof name, "%s %s %s BCa lower partial eta2", what,
                         a->resp[ri].name, x->label);
                CHECK_REL(name, x->ci_bca[STURDY_ES_PARTIAL_ETA2].lo,
                          y->ci_bca[STURDY_ES_PARTIAL_ETA2].lo, BOOT_REL_TOL);
            }
        }
}

/* Everything the rearrangements count, identical between two runs of the same data. */
static void compare_counts(const char *what, const sturdy_result *a, const sturdy_result *b)
{
    char name[256];
    CHECK(what, a && b);
    if (!a || !b)
        return;
    for (size_t ri = 0; ri < a->nresp; ri++) {
        for (size_t t = 0; t < a->resp[ri].nterms; t++) {
            const sturdy_term_result *x = &a->resp[ri].terms[t], *y = &b->resp[ri].terms[t];
            snprintf(name, sizeof name, "%s %s %s exceed", what, a->resp[ri].name, x->label);
            CHECK_INT(name, x->exceed, y->exceed);
            snprintf(name, sizeof name, "%s %s %s exceed_fwer", what, a->resp[ri].name,
                     x->label);
            CHECK_INT(name, x->exceed_fwer, y->exceed_fwer);
            int same = 1;
            uint64_t tot = 0;
            for (size_t q = 0; q < STURDY_FHIST_BINS; q++) {
                same &= x->f_hist[q] == y->f_hist[q];
                tot += x->f_hist[q];
            }
            snprintf(name, sizeof name, "%s %s %s F* bins identical (%llu counted)", what,
                     a->resp[ri].name, x->label, (unsigned long long)tot);
            CHECK(name, same);
        }
        CHECK_INT("same number of comparisons", a->resp[ri].ncomparisons,
                  b->resp[ri].ncomparisons);
        for (size_t i = 0; i < a->resp[ri].ncomparisons && i < b->resp[ri].ncomparisons; i++) {
            const sturdy_comparison *x = &a->resp[ri].comparisons[i],
                                    *y = &b->resp[ri].comparisons[i];
            snprintf(name, sizeof name, "%s %s comparison %zu%s (t %.3g) exceed_maxt", what,
                     a->resp[ri].name, i, x->method == STURDY_ADJ_GAMES_HOWELL ? " (het)" : "",
                     x->t_pooled);
            CHECK_INT(name, x->exceed_maxt, y->exceed_maxt);
        }
    }
}

/* One data set on every method, flip and SS type, gather against cell counts. */
static void gather_vs_cells(const char *tag, const char *csv, int block, uint64_t B)
{
    static const char *methods[] = {"freedman-lane", "ter-braak", "raw"};
    char what[160];
    for (int ss = 1; ss <= 3; ss++)
        for (int method = 0; method < 3; method++)
            for (int flip = 0; flip <= 1; flip++) {
                if (flip && method == 2 && ss != 3)
                    continue;
                set_path("gather");
                sturdy_result *a = run(csv, 0, method, flip, ss, block, B);
                set_path("cells");
                sturdy_result *b = run(csv, 0, method, flip, ss, block, B);
                set_path("pairs");
                sturdy_result *p = run(csv, 0, method, flip, ss, block, B);
                set_path("pairs-dense");
                sturdy_result *pd = run(csv, 0, method, flip, ss, block, B);
                set_path(NULL);
                snprintf(what, sizeof what, "cells %s%s ss%d %s%s", tag, block ? "+block" : "",
                         ss, methods[method], flip ? "+flip" : "");
                compare_counts(what, a, b);
                snprintf(what, sizeof what, "pairs %s%s ss%d %s%s", tag, block ? "+block" : "",
                         ss, methods[method], flip ? "+flip" : "");
                compare_counts(what, a, p);
                snprintf(what, sizeof what, "pairs (M by dgemm) %s%s ss%d %s%s", tag,
                         block ? "+block" : "", ss, methods[method], flip ? "+flip" : "");
                compare_counts(what, a, pd);
                sturdy_result_free(a);
                sturdy_result_free(b);
                sturdy_result_free(p);
                sturdy_result_free(pd);
            }
}

/* sturdy_cellcount_sums against the direct sum of the rearranged columns, on columns of
 * two kinds (two bases) plus squares, with K = 7 groups of unequal size; and the cost
 * model's choice at the benchmark shapes. */
static void unit_cellcount(void)
{
    enum { n = 500, K = 7, nlin = 6, nsq = 3, Mp = 12 };
    static double V[n * Mp], ref[K * Mp], got[K * Mp], e2[2][n], a[nlin][K];
    static uint32_t lab0[n], lab[n];
    static signed char sign[n];
    char err[STURDY_ERR_LEN];
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, 5, 9, 0);
    for (size_t k = 0; k < n; k++) {
        lab0[k] = (uint32_t)((k * k + 3 * k) % K);
        e2[0][k] = sturdy_pcg_unit(&g) - 0.5;
        e2[1][k] = 3.0 * (sturdy_pcg_unit(&g) - 0.5);
    }
    for (int b = 0; b < 2; b++) {      /* zero mean in every group */
        double s[K] = {0}, c[K] = {0};
        for (size_t k = 0; k < n; k++) { s[lab0[k]] += e2[b][k]; c[lab0[k]]++; }
        for (size_t k = 0; k < n; k++) e2[b][k] -= s[lab0[k]] / c[lab0[k]];
    }
    for (size_t j = 0; j < nlin; j++)
        for (size_t h = 0; h < K; h++)
            a[j][h] = 10.0 * sturdy_pcg_unit(&g) - 5.0;
    for (size_t k = 0; k < n; k++) {
        for (size_t j = 0; j < nlin; j++)
            V[k * Mp + j] = e2[j % 2][k] + a[j][lab0[k]];
        for (size_t q = 0; q < nsq; q++)
            V[k * Mp + nlin + q] = V[k * Mp + nlin - nsq + q] * V[k * Mp + nlin - nsq + q];
    }
    for (int flip = 0; flip <= 1; flip++) {
        size_t sq = flip ? 0 : nsq;
        sturdy_cellcount *cc = NULL;
        set_path("gather");
        CHECK("forced gather: no cell-count set-up",
              sturdy_cellcount_init(&cc, V, n, Mp, nlin, sq, lab0, K, flip, err) == STURDY_OK &&
                  cc == NULL);
        set_path("cells");
        CHECK("forced cells: a cell-count set-up",
              sturdy_cellcount_init(&cc, V, n, Mp, nlin, sq, lab0, K, flip, err) == STURDY_OK &&
                  cc != NULL);
        set_path(NULL);
        if (!cc)
            continue;
        sturdy_cellcount_work *w = sturdy_cellcount_work_alloc(cc);
        CHECK("cell-count workspace", w != NULL);
        double worst = 0.0;
        for (int rep = 0; w && rep < 20; rep++) {
            memcpy(lab, lab0, sizeof lab);
            for (size_t i = n; i > 1; i--) {
                size_t j = (size_t)sturdy_pcg_bounded(&g, i);
                uint32_t t = lab[i - 1]; lab[i - 1] = lab[j]; lab[j] = t;
            }
            for (size_t k = 0; k < n; k++)
                sign[k] = sturdy_pcg_unit(&g) < 0.5 ? -1 : 1;
            memset(ref, 0, sizeof ref);
            memset(got, 0, sizeof got);
            for (size_t k = 0; k < n; k++)
                for (size_t j = 0; j < nlin + sq; j++)
                    ref[(flip ? lab0[k] : lab[k]) * Mp + j] += (flip ? sign[k] : 1) * V[k * Mp + j];
            sturdy_cellcount_sums(cc, w, lab, sign, got);
            for (size_t i = 0; i < K * Mp; i++)
                worst = fmax(worst, fabs(got[i] - ref[i]) / (1.0 + fabs(ref[i])));
        }
        CHECK_ABS(flip ? "cell-count sums = direct sums (flips)"
                       : "cell-count sums = direct sums (permutations, squares)",
                  worst, 0.0, 1e-12);
        sturdy_cellcount_work_free(w);
        sturdy_cellcount_free(cc);
    }
    /* the cost model: an f3_200k-like shape (n = 100,000, K = 60, 16 columns) takes the cell
     * counts, bal2000's (n = 2000, K = 80, 8 columns) keeps the gather */
    struct { size_t n, K, Mp; int want; const char *what; } shapes[] = {
        {100000, 60, 16, 1, "cost model: n 100000, K 60, 16 columns -> cells"},
        {2000, 80, 8, 0, "cost model: n 2000, K 80, 8 columns -> gather"},
    };
    for (size_t s = 0; s < 2; s++) {
        size_t nn = shapes[s].n, KK = shapes[s].K, MM = shapes[s].Mp;
        double *VV = calloc(nn * MM, sizeof *VV);
        uint32_t *l0 = malloc(nn * sizeof *l0);
        for (size_t k = 0; k < nn; k++) {
            l0[k] = (uint32_t)(k % KK);
            double e = sturdy_pcg_unit(&g) - 0.5;
            for (size_t j = 0; j + 1 < MM; j++)
                VV[k * MM + j] = e + (double)(j % 5) * (double)l0[k];
        }
        sturdy_cellcount *cc = NULL;
        sturdy_status st = sturdy_cellcount_init(&cc, VV, nn, MM, MM - 1, 0, l0, KK, 0, err);
        CHECK(shapes[s].what, st == STURDY_OK && (cc != NULL) == shapes[s].want);
        sturdy_cellcount_free(cc);
        free(VV);
        free(l0);
    }
}

/* sturdy_maxt_pairs_t2 against t*² from the direct group sums of the rearranged vectors
 * (sturdy_maxt_t2 / sturdy_maxt_t2_het, as the gather computes them): two responses,
 * K = 7 groups of unequal size, comparisons on 2 to 7 cells, pooled and Games–Howell,
 * one with a zero per-cell part (ter Braak's form); and the cases it must decline. */
static void unit_pairs(void)
{
    enum { n = 300, K = 7, R = 2, C = 6, Cp = 8 };
    static double E[n * R], A[K * Cp], z[C][K], T[K], T2[K], S[K], Q[K], sq[K];
    static uint32_t lab0[n], lab[n];
    static sturdy_maxt_member cm[C];
    static size_t resp_begin[R + 1] = {0, 4, C};
    static const int cells[C] = {2, 3, 7, 4, 2, 5};
    char err[STURDY_ERR_LEN];
    sturdy_pcg64 g;
    sturdy_pcg_for(&g, 6, 9, 0);
    double cnt[K] = {0};
    for (size_t k = 0; k < n; k++) {
        lab0[k] = (uint32_t)((k * k + 5 * k + k / 7) % K);
        cnt[lab0[k]]++;
        for (size_t r = 0; r < R; r++)
            E[k * R + r] = (r + 1) * (sturdy_pcg_unit(&g) - 0.5);
    }
    for (size_t h = 0; h < K; h++)
        sq[h] = sqrt(cnt[h]);
    sturdy_maxt x;
    memset(&x, 0, sizeof x);
    x.C = C; x.Cp = Cp; x.nresp = R; x.resp_begin = resp_begin; x.E = E; x.A = A;
    x.cm = cm; x.dfe = 250; x.Csq = C;
    for (size_t q = 0; q < C; q++) {
        size_t first = q % K;
        cm[q].z = z[q];
        cm[q].ww = 0.5 + sturdy_pcg_unit(&g);
        cm[q].het = q % 2;
        cm[q].df = 40;
        for (int i = 0; i < cells[q]; i++) {
            size_t h = (first + (size_t)i * 3) % K;
            z[q][h] = sturdy_pcg_unit(&g) - 0.5;
            A[h * Cp + q] = q == 5 ? 0.0 : 4.0 * (sturdy_pcg_unit(&g) - 0.5);
        }
        size_t r = q < resp_begin[1] ? 0 : 1;
        double vv = 0;
        for (size_t k = 0; k < n; k++) {
            double v = E[k * R + r] + A[lab0[k] * Cp + q];
            vv += v * v;
        }
        cm[q].vv = vv;
    }
    for (int mode = 0; mode < 2; mode++) {
        const char *force = mode ? "pairs-sparse" : "pairs-dense";
        sturdy_maxt_pairs *p = NULL;
        set_path("gather");
        CHECK("forced gather: no pair table",
              sturdy_maxt_pairs_init(&p, &x, n, K, K, lab0, 0, err) == STURDY_OK && !p);
        set_path("pairs");
        CHECK("no pair table with sign flips",
              sturdy_maxt_pairs_init(&p, &x, n, K, K, lab0, 1, err) == STURDY_OK && !p);
        CHECK("no pair table when the model does not span the cells (rank < K)",
              sturdy_maxt_pairs_init(&p, &x, n, K, K - 1, lab0, 0, err) == STURDY_OK && !p);
        set_path(force);
        CHECK("forced pairs: a pair table",
              sturdy_maxt_pairs_init(&p, &x, n, K, K, lab0, 0, err) == STURDY_OK && p);
        set_path(NULL);
        sturdy_maxt_pairs_work *w = p ? sturdy_maxt_pairs_work_alloc(p) : NULL;
        CHECK("pair-table workspace", w != NULL);
        double worst = 0.0, t2[C];
        for (int rep = 0; w && rep < 30; rep++) {
            memcpy(lab, lab0, sizeof lab);
            for (size_t i = n; i > 1; i--) {
                size_t j = (size_t)sturdy_pcg_bounded(&g, i);
                uint32_t t = lab[i - 1]; lab[i - 1] = lab[j]; lab[j] = t;
            }
            sturdy_maxt_pairs_t2(p, w, &x, lab, 1e-12, t2, 1, 0);
            for (size_t q = 0; q < C; q++) {
                size_t r = q < resp_begin[1] ? 0 : 1;
                memset(T, 0, sizeof T);
                memset(T2, 0, sizeof T2);
                for (size_t k = 0; k < n; k++) {
                    double v = E[k * R + r] + A[lab0[k] * Cp + q];
                    T[lab[k]] += v;
                    T2[lab[k]] += v * v;
                }
                double a = 0, ss = 0;
                for (size_t h = 0; h < K; h++) {
                    S[h] = T[h] / sq[h];
                    Q[h] = T2[h] / sq[h];
                    a += z[q][h] * S[h];
                    ss += S[h] * S[h];
                }
                double ref = cm[q].het
                                 ? sturdy_maxt_t2_het(&x, q, S, Q, sq, K, a * a, 1e-12)
                                 : sturdy_maxt_t2(&x, q, a * a, cm[q].vv - ss, 1e-12);
                worst = fmax(worst, fabs(t2[q] - ref) / fabs(ref));
            }
        }
        CHECK_ABS(mode ? "pair-table t*2 (M entry by entry) = t*2 of the direct sums "
                         "(pooled and Games-Howell)"
                       : "pair-table t*2 (M by dgemm) = t*2 of the direct sums (pooled "
                         "and Games-Howell)",
                  worst, 0.0, 1e-11);
        sturdy_maxt_pairs_work_free(w);
        sturdy_maxt_pairs_free(p);
    }
}

/* The cache a batch shares between its rows keeps the range tables a run builds: after
 * one run with every comparison of the 3 × 2 × 2 set, the table of k = 3 (factor a's
 * levels) is in it, and none of k = 2 (the range of two means is the t distribution, no
 * table). test_api checks that it changes no bit. */
static void unit_cache(void)
{
    char *csv = make_csv(21, 4, 0);
    sturdy_table *t = NULL;
    sturdy_table_opts to;
    sturdy_table_opts_init(&to);
    char err[STURDY_ERR_LEN];
    CHECK("cache: data", sturdy_table_load_buffer("cache.csv", csv, strlen(csv), &to, &t, err) == 0);
    sturdy_options o;
    sturdy_options_init(&o);
    static const char *ys[] = {"y"}, *fs[] = {"a", "b", "c"};
    o.model.responses = ys;
    o.model.nresponses = 1;
    o.model.factors = fs;
    o.model.nfactors = 3;
    o.permutations = 99;
    o.bootstrap = 0;
    o.compare_mode = STURDY_COMPARE_ALL;
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.cache = sturdy_cache_new();
    sturdy_result *r = NULL;
    CHECK("cache: a run through it", t && sturdy_analyze(t, &o, &ctx, &r, err) == 0);
    CHECK("cache: keeps the table of k = 3", sturdy_cache_range_table(ctx.cache, 3.0) != NULL);
    CHECK("cache: no table of k = 2", sturdy_cache_range_table(ctx.cache, 2.0) == NULL);
    sturdy_result_free(r);
    sturdy_cache_free(ctx.cache);
    sturdy_table_free(t);
    free(csv);
}

int main(void)
{
    static const char *methods[] = {"freedman-lane", "ter-braak", "raw"};
    char what[128];
    for (int unb = 0; unb <= 1; unb++) {
        char *csv = make_csv(11 + (uint64_t)unb, 6, unb);
        for (int block = 0; block <= 1; block++)
            for (int ss = 1; ss <= 3; ss++)
                for (int method = 0; method < 3; method++)
                    for (int flip = 0; flip <= 1; flip++) {
                        if (flip && method == 2 && ss != 3)
                            continue;
                        set_path("gather");
                        sturdy_result *a = run(csv, 0, method, flip, ss, block, 499);
                        sturdy_result *b = run(csv, 1, method, flip, ss, block, 499);
                        set_path("cells");
                        g_boot = 0;
                        sturdy_result *c = run(csv, 0, method, flip, ss, block, 499);
                        sturdy_result *e = run(csv, 1, method, flip, ss, block, 499);
                        g_boot = 300;
                        set_path(NULL);
                        snprintf(what, sizeof what, "%s%s ss%d %s%s",
                                 unb ? "unbalanced" : "balanced", block ? "+block" : "", ss,
                                 methods[method], flip ? "+flip" : "");
                        compare(what, a, b);
                        char w2[160];
                        snprintf(w2, sizeof w2, "cells vs gather, %s", what);
                        compare_counts(w2, a, c);
                        snprintf(w2, sizeof w2, "cells vs gather, rows, %s", what);
                        compare_counts(w2, b, e);
                        sturdy_result_free(a);
                        sturdy_result_free(b);
                        sturdy_result_free(c);
                        sturdy_result_free(e);
                    }
        free(csv);
    }
    unit_cellcount();
    unit_pairs();
    unit_cache();
    /* many data sets, every comparison computed: continuous, tied and unequal spreads */
    g_boot = 0;
    g_compare = STURDY_COMPARE_ALL;
    static const char *kinds[] = {"continuous", "tied", "unequal-spread"};
    for (uint64_t seed = 100; seed < 103; seed++)
        for (int kind = 0; kind < 3; kind++) {
            int unb = (int)(seed % 2);
            char *csv = make_csv_kind(seed, 4 + (size_t)(seed % 3), unb, kind);
            char tag[96];
            snprintf(tag, sizeof tag, "seed %llu %s %s", (unsigned long long)seed,
                     kinds[kind], unb ? "unbalanced" : "balanced");
            gather_vs_cells(tag, csv, kind != 2 && seed % 3 == 0, 199);
            free(csv);
        }
    return check_done();
}
