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

void sturdy_sort_doubles(double *x, size_t n, double *scratch)
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
    /* least significant byte first, each pass stable (the keys are recomputed from the
       values, which travel between x and scratch); a byte every key shares is skipped */
    size_t cnt[8][256] = {{0}};
    for (size_t i = 0; i < n; i++) {
        uint64_t key = sort_key(x[i]);
        for (int d = 0; d < 8; d++)
            cnt[d][(key >> (8 * d)) & 0xff]++;
    }
    double *from = x, *to = scratch;
    uint64_t key0 = sort_key(x[0]);
    for (int d = 0; d < 8; d++) {
        size_t *c = cnt[d];
        if (c[(key0 >> (8 * d)) & 0xff] == n)
            continue;
        size_t sum = 0;
        for (int k = 0; k < 256; k++) {
            size_t t = c[k];
            c[k] = sum;
            sum += t;
        }
        for (size_t i = 0; i < n; i++)
            to[c[(sort_key(from[i]) >> (8 * d)) & 0xff]++] = from[i];
        double *t = from; from = to; to = t;
    }
    if (from != x)
        memcpy(x, from, n * sizeof *x);
}

double sturdy_quantile_sorted(const double *x, size_t n, double q)
{
    double pos = q * (double)(n - 1);
    size_t lo = (size_t)floor(pos);
    if (lo + 1 >= n)
        return x[n - 1];
    return x[lo] + (pos - (double)lo) * (x[lo + 1] - x[lo]);
}

void sturdy_dot_rows(const double *restrict U, size_t K, size_t r,
                     const double *restrict s, double *restrict coef)
{
    size_t q = 0;
    for (; q + 4 <= r; q += 4) {
        const double *u0 = U + q * K, *u1 = u0 + K, *u2 = u1 + K, *u3 = u2 + K;
        double d0 = 0.0, d1 = 0.0, d2 = 0.0, d3 = 0.0;
        for (size_t g = 0; g < K; g++) {
            d0 += u0[g] * s[g];
            d1 += u1[g] * s[g];
            d2 += u2[g] * s[g];
            d3 += u3[g] * s[g];
        }
        coef[q] = d0;
        coef[q + 1] = d1;
        coef[q + 2] = d2;
        coef[q + 3] = d3;
    }
    for (; q < r; q++) {
        const double *u = U + q * K;
        double dot = 0.0;
        for (size_t g = 0; g < K; g++)
            dot += u[g] * s[g];
        coef[q] = dot;
    }
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
