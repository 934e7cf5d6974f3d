/* numeric.c — small numerical helpers shared by the stages: ordering, centred sums and a
 * small Cholesky solve. */
#include <math.h>

#include "core/core.h"

int sturdy_cmp_double(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return (a > b) - (a < b);
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
