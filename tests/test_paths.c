/* test_paths.c — the cell-sum path against the straightforward n-row path: identical
 * exceedance counts (and matching bootstrap intervals) on balanced, unbalanced and
 * blocked designs, for every method and SS type. The row path treats every row as its
 * own group (sturdy_model_spec.row_groups), so its projections are n-row products. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "core/result.h"
#include "sturdy/sturdy.h"

/* Bootstrap endpoints of the two paths differ only by rounding in sums of different
 * length; 1e-9 relative leaves room for that and nothing else. */
#define BOOT_REL_TOL 1e-9

/* Invented property-test data: 3 factors (3×2×2), `per` rows per cell (plus `extra`
 * rows in some cells for unbalance), a block of 3 levels, skewed errors. */
static char *make_csv(uint64_t seed, size_t per, int unbalanced)
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
                    double y = 10 + 0.8 * a + 0.5 * (b == c) + e;
                    double z = 3 + 0.3 * b + (v - 0.5);
                    len += (size_t)snprintf(csv + len, cap - len, "a%d,b%d,c%d,k%zu,%.6f,%.6f\n",
                                            a, b, c, i % 3, y, z);
                }
            }
    return csv;
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
    o.bootstrap = 300;
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
                        sturdy_result *a = run(csv, 0, method, flip, ss, block, 499);
                        sturdy_result *b = run(csv, 1, method, flip, ss, block, 499);
                        snprintf(what, sizeof what, "%s%s ss%d %s%s",
                                 unb ? "unbalanced" : "balanced", block ? "+block" : "", ss,
                                 methods[method], flip ? "+flip" : "");
                        compare(what, a, b);
                        sturdy_result_free(a);
                        sturdy_result_free(b);
                    }
        free(csv);
    }
    return check_done();
}
