/* numeric.c — small numerical helpers shared by the stages: ordering, centred sums and a
 * small Cholesky solve. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

int sturdy_cmp_double(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return (a > b) - (a < b);
}

/* The key of x whose unsigned order is x's order: the sign bit flipped for x ≥ 0, every
   bit for x < 0; −0 takes +0's key, as the comparator holds them equal. */
static uint64_t sort_key(double x)
{
    uint64_t u;
    if (x == 0.0)
        x = 0.0;
    memcpy(&u, &x, sizeof u);
    return u >> 63 ? ~u : u | ((uint64_t)1 << 63);
}

/* Below this many values the stable insertion sort; above, the radix passes. */
#define SORT_SMALL 48

void sturdy_sort_doubles(double *x, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (isnan(x[i])) {       /* the comparator's order with NaN is the merge's own */
            qsort(x, n, sizeof *x, sturdy_cmp_double);
            return;
        }
    if (n < SORT_SMALL) {
        for (size_t i = 1; i < n; i++) {
            double v = x[i];
            size_t j = i;
            for (; j > 0 && x[j - 1] > v; j--)
                x[j] = x[j - 1];
            x[j] = v;
        }
        return;
    }
    /* least significant byte first, each pass stable; a byte every key shares is skipped */
    uint64_t *key = sturdy_malloc(2 * n * sizeof *key);
    size_t (*cnt)[256] = sturdy_calloc(8, sizeof *cnt);
    if (!key || !cnt) {
        sturdy_free(key);
        sturdy_free(cnt);
        qsort(x, n, sizeof *x, sturdy_cmp_double);
        return;
    }
    uint64_t *a = key, *b = key + n;
    for (size_t i = 0; i < n; i++) {
        a[i] = sort_key(x[i]);
        for (int d = 0; d < 8; d++)
            cnt[d][(a[i] >> (8 * d)) & 0xff]++;
    }
    /* the values travel beside their keys */
    double *v = sturdy_malloc(2 * n * sizeof *v);
    if (!v) {
        sturdy_free(key);
        sturdy_free(cnt);
        qsort(x, n, sizeof *x, sturdy_cmp_double);
        return;
    }
    double *va = v, *vb = v + n;
    memcpy(va, x, n * sizeof *x);
    for (int d = 0; d < 8; d++) {
        size_t *c = cnt[d];
        if (c[(a[0] >> (8 * d)) & 0xff] == n)
            continue;
        size_t sum = 0;
        for (int k = 0; k < 256; k++) {
            size_t t = c[k];
            c[k] = sum;
            sum += t;
        }
        for (size_t i = 0; i < n; i++) {
            size_t at = c[(a[i] >> (8 * d)) & 0xff]++;
            b[at] = a[i];
            vb[at] = va[i];
        }
        uint64_t *tk = a; a = b; b = tk;
        double *tv = va; va = vb; vb = tv;
    }
    memcpy(x, va, n * sizeof *x);
    sturdy_free(v);
    sturdy_free(key);
    sturdy_free(cnt);
}

double sturdy_mean(const double *x, size_t n)
{
    double mean = 0.0;
    for (size_t i = 0; i < n; i++)
        mean += x[i];
    return mean / (double)n;
}

double sturdy_centred_ss(const double *x, size_t n, double *mean_out)
{
    double mean = sturdy_mean(x, n);
    double ss = 0.0, corr = 0.0;
    for (size_t i = 0; i < n; i++) {
        double dv = x[i] - mean;
        ss += dv * dv;
        corr += dv;
    }
    if (mean_out)
        *mean_out = mean + corr / (double)n;
    return ss - corr * corr / (double)n;
}

int sturdy_cholesky(double *A, size_t k, double tol)
{
    for (size_t j = 0; j < k; j++) {
        double v = A[j * k + j];
        for (size_t q = 0; q < j; q++) v -= A[j * k + q] * A[j * k + q];
        if (!(v > tol)) return 0;
        A[j * k + j] = sqrt(v);
        for (size_t i = j + 1; i < k; i++) {
            double x = A[i * k + j];
            for (size_t q = 0; q < j; q++) x -= A[i * k + q] * A[j * k + q];
            A[i * k + j] = x / A[j * k + j];
        }
    }
    return 1;
}

void sturdy_cholesky_forward(const double *L, size_t k, double *b)
{
    for (size_t i = 0; i < k; i++) {
        double x = b[i];
        for (size_t q = 0; q < i; q++) x -= L[i * k + q] * b[q];
        b[i] = x / L[i * k + i];
    }
}

int sturdy_cholesky_solve(double *A, size_t k, double *b, double tol)
{
    if (!sturdy_cholesky(A, k, tol)) return 0;
    sturdy_cholesky_forward(A, k, b);          /* L y = b */
    for (size_t i = k; i-- > 0;) {             /* Lᵀ x = y */
        double x = b[i];
        for (size_t q = i + 1; q < k; q++) x -= A[q * k + i] * b[q];
        b[i] = x / A[i * k + i];
    }
    return 1;
}
