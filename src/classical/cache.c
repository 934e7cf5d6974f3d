/* cache.c — tables that runs sharing a sturdy_cache keep between them (analysis.h): the
 * studentized range's tail for each number of means k (range.c's tables, whose panels
 * fill as runs need them) and the quantiles found with them. A nightly batch of one
 * design asks every row for the same ones; the values are those each run would compute,
 * so the results are the same bits with or without the cache. */
#include <math.h>
#include <stddef.h>

#include "classical/range.h"
#include "core/core.h"
#include "sturdy/analysis.h"

/* Tables kept between runs (analysis.h): one per k, the first RANGE_CACHE_MAX k met;
 * and the first RANGE_CACHE_QMAX quantiles found with them, by (p, k, df): the runs of a
 * batch of one design share their residual df, so each family's quantile repeats. */
#define RANGE_CACHE_MAX 64
#define RANGE_CACHE_QMAX 1024

struct sturdy_cache {
    size_t n;
    double k[RANGE_CACHE_MAX];
    sturdy_range_table *tab[RANGE_CACHE_MAX];
    size_t nq;
    double qkey[RANGE_CACHE_QMAX][3], qval[RANGE_CACHE_QMAX];
};

sturdy_cache *sturdy_cache_new(void)
{
    return sturdy_calloc(1, sizeof(sturdy_cache));
}

void sturdy_cache_free(sturdy_cache *c)
{
    for (size_t i = 0; c && i < c->n; i++)
        sturdy_range_table_free(c->tab[i]);
    sturdy_free(c);
}

sturdy_range_table *sturdy_cache_range_table(sturdy_cache *c, double k)
{
    for (size_t i = 0; c && i < c->n; i++)
        if (c->k[i] == k)
            return c->tab[i];
    return NULL;
}

int sturdy_cache_keep_range_table(sturdy_cache *c, sturdy_range_table *t, double k)
{
    if (!c || !t || c->n == RANGE_CACHE_MAX || sturdy_cache_range_table(c, k))
        return 0;
    c->k[c->n] = k;
    c->tab[c->n++] = t;
    return 1;
}

double sturdy_cache_range_quantile(sturdy_cache *c, const sturdy_range_table *tab, double p,
                                   double k, double df)
{
    double q = NAN;
    int found = 0;
    if (c) {
#pragma omp critical(sturdy_cache_quantiles)
        for (size_t i = 0; i < c->nq && !found; i++)
            if (c->qkey[i][0] == p && c->qkey[i][1] == k && c->qkey[i][2] == df) {
                q = c->qval[i];
                found = 1;
            }
    }
    if (found)
        return q;
    q = sturdy_range_quantile_tab(tab, p, k, df);
    if (c) {
#pragma omp critical(sturdy_cache_quantiles)
        if (c->nq < RANGE_CACHE_QMAX) {
            c->qkey[c->nq][0] = p;
            c->qkey[c->nq][1] = k;
            c->qkey[c->nq][2] = df;
            c->qval[c->nq++] = q;
        }
    }
    return q;
}
