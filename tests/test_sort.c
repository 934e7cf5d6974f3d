/* test_sort.c — sturdy_sort_doubles (numeric.c, a stable radix sort) leaves an array in
 * exactly the order that qsort with sturdy_cmp_double leaves it (the reference: the C
 * library's qsort, glibc's stable merge sort for arrays that fit in memory), bit for bit:
 * the bootstrap percentiles and the comparisons' bootstrap bands and adjusted p read order
 * statistics off these arrays, so any difference would change a reported number. Random
 * arrays of every size from 0 to 300 and a few larger ones (2000, 9999: the bootstrap's
 * and a long run's replicate counts), drawn from six kinds: continuous of both signs,
 * many ties, −0 and +0 mixed in, infinities, subnormals and huge values, already sorted
 * and reversed; and arrays with a NaN, which take the qsort path itself. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "core/core.h"

static uint64_t rng_state = 0x2545f4914f6cdd1dULL;
static double uniform(void) { return check_uniform(&rng_state); }

static double draw(int kind, size_t i, size_t n)
{
    double u = uniform() - 0.5;
    switch (kind) {
    case 0: return u * 1e3;
    case 1: return floor(u * 8.0);                              /* many ties */
    case 2: return u < -0.2 ? -0.0 : u > 0.2 ? 0.0 : u;         /* −0 and +0 */
    case 3: return u < -0.45 ? -INFINITY : u > 0.45 ? INFINITY : u * 1e-310; /* subnormal */
    case 4: return u < 0 ? -1e300 * u : u * 1e-300;
    default: return i < n / 2 ? (double)i : -(double)i;         /* runs both ways */
    }
}

/* the arrays equal bit for bit */
static int same_bits(const double *a, const double *b, size_t n)
{
    return n == 0 || memcmp(a, b, n * sizeof *a) == 0;
}

int main(void)
{
    static const size_t big[] = {2000, 9999};
    size_t bad = 0, arrays = 0;
    for (int kind = 0; kind < 6; kind++)
        for (size_t n = 0; n < 300 + 2; n++) {
            size_t len = n < 300 ? n : big[n - 300];
            double *a = malloc((len + 1) * sizeof *a), *b = malloc((len + 1) * sizeof *b);
            double *scratch = malloc((len + 1) * sizeof *scratch);
            for (size_t i = 0; i < len; i++)
                a[i] = b[i] = draw(kind, i, len);
            qsort(a, len, sizeof *a, sturdy_cmp_double);
            sturdy_sort_doubles(b, len, scratch);
            if (!same_bits(a, b, len)) {
                if (bad < 5)
                    printf("  differs: kind %d, n %zu\n", kind, len);
                bad++;
            }
            arrays++;
            free(a);
            free(b);
            free(scratch);
        }
    char name[128];
    snprintf(name, sizeof name, "radix sort = qsort order, bit for bit, on %zu arrays", arrays);
    CHECK_INT(name, bad, 0);
    /* a NaN anywhere: the comparator's own order (qsort itself) */
    double a[100], b[100], scratch[100];
    for (size_t i = 0; i < 100; i++)
        a[i] = b[i] = i == 37 ? NAN : draw(0, i, 100);
    qsort(a, 100, sizeof *a, sturdy_cmp_double);
    sturdy_sort_doubles(b, 100, scratch);
    CHECK("with a NaN: the qsort order", same_bits(a, b, 100));
    /* −0 before +0 and +0 before −0 both stay as given */
    double z[60], zs[60];
    for (size_t i = 0; i < 60; i++)
        z[i] = i % 3 == 0 ? -0.0 : i % 3 == 1 ? 0.0 : 1.0;
    sturdy_sort_doubles(z, 60, zs);
    int order = 1;
    for (size_t i = 0; i < 40; i++)
        order &= (signbit(z[i]) != 0) == (i % 2 == 0);
    CHECK("equal keys (-0, +0) keep their first order", order);
    return check_done();
}
