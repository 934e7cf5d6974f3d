/* numeric.c — small numerical helpers shared by the stages: ordering and centred sums. */
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
