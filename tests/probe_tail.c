/* probe_tail.c — the GPD tail fit of tail.c on numbers from stdin, for tests/xcheck_tail.py:
 *   probe_tail fit      < z values   → "xi sigma loglik ad ad_p" (%.17g; exit 1: no fit)
 *   probe_tail estimate F B EXCEED < F* values (any order)
 *                                     → "status p n_exc threshold xi sigma ad ad_p"
 *   probe_tail top K < values        → the largest STURDY_TAIL_KEEP, descending, one a
 *                                     line: value i goes to heap i mod K (K "threads"),
 *                                     the K heaps then merged in reverse order
 * The estimate keeps the largest STURDY_TAIL_KEEP values with the engine's heap and
 * merge (sturdy_tail_push, sturdy_tail_merge), as a run does. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "resampling/tail.h"

int main(int argc, char **argv)
{
    static double v[1 << 20];
    size_t n = 0;
    while (n < sizeof v / sizeof *v && scanf("%lf", &v[n]) == 1)
        n++;
    if (argc == 2 && !strcmp(argv[1], "fit")) {
        double xi, sg, ll, work[2 * STURDY_TAIL_KEEP];
        if (sturdy_gpd_fit(v, n, &xi, &sg, &ll))
            return 1;
        qsort(v, n, sizeof *v, sturdy_cmp_double);
        double ad = sturdy_gpd_ad(v, n, xi, sg);
        double adp = n <= STURDY_TAIL_KEEP ? sturdy_gpd_ad_pvalue(n, xi, sg, ad, work) : -1;
        printf("%.17g %.17g %.17g %.17g %.17g\n", xi, sg, ll, ad, adp);
        return 0;
    }
    if (argc == 3 && !strcmp(argv[1], "top")) {
        enum { KMAX = 8 };
        static double heaps[KMAX][STURDY_TAIL_KEEP];
        size_t nh[KMAX] = { 0 }, nt = 0, k = strtoul(argv[2], NULL, 10);
        double top[STURDY_TAIL_KEEP];
        if (k < 1 || k > KMAX)
            return 2;
        for (size_t i = 0; i < n; i++)
            sturdy_tail_push(heaps[i % k], &nh[i % k], v[i]);
        for (size_t q = k; q-- > 0;)
            sturdy_tail_merge(top, &nt, heaps[q], nh[q]);
        for (size_t i = 0; i < nt; i++)
            printf("%.17g\n", top[i]);
        return 0;
    }
    if (argc == 5 && !strcmp(argv[1], "estimate")) {
        double heap[STURDY_TAIL_KEEP], top[STURDY_TAIL_KEEP], p;
        size_t nh = 0, nt = 0;
        for (size_t i = 0; i < n; i++)
            sturdy_tail_push(heap, &nh, v[i]);
        sturdy_tail_merge(top, &nt, heap, nh);
        sturdy_tail_fit f;
        sturdy_tail_estimate(top, nt, atof(argv[2]), strtoull(argv[3], NULL, 10),
                             strtoull(argv[4], NULL, 10), 0, &p, &f);
        printf("%s %.17g %zu %.17g %.17g %.17g %.17g %.17g\n",
               sturdy_tail_status_name(f.status), p, f.n_exc, f.threshold, f.xi, f.sigma,
               f.ad, f.ad_p);
        return 0;
    }
    fprintf(stderr, "usage: probe_tail fit | estimate F B EXCEED  (values on stdin)\n");
    return 2;
}
