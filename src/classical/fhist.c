/* fhist.c — the fixed bins on which the resampled F* of a term are counted for figures,
 * and the F density drawn over them.
 *
 * Why fixed: a shard sees only its own rearrangements, so bins chosen from the replicates
 * would differ between shards and their counts could not be added. The edges therefore
 * depend on the observed F and the degrees of freedom alone: [0, top) in equal bins with
 * top a round number at least the F distribution's 0.999 quantile, stretched to show the
 * observed F when it lies further out (up to 4 times that quantile, so that a huge F does
 * not squeeze the null distribution into one bin). */
#include <math.h>

#include <gsl/gsl_randist.h>

#include "classical/classical.h"
#include "sturdy/dist.h"

/* The null distribution's upper tail that the axis always covers. */
#define FHIST_TAIL 0.001
/* How far past the tail quantile the axis stretches to show a large observed F. */
#define FHIST_STRETCH 4.0

/* The smallest of 1, 2, 2.5, 5 × 10^k that is ≥ x (x > 0). */
static double round_up(double x)
{
    double e = floor(log10(x)), base = pow(10.0, e);
    static const double steps[] = { 1.0, 2.0, 2.5, 5.0, 10.0 };
    for (int i = 0; i < 5; i++)
        if (steps[i] * base >= x * (1.0 - 1e-12))
            return steps[i] * base;
    return 10.0 * base;
}

double sturdy_fhist_top(double f, double df1, double df2)
{
    if (!isfinite(f) || !(df1 > 0) || !(df2 > 0))
        return NAN;
    double q = sturdy_f_isf(FHIST_TAIL, df1, df2);
    if (!(q > 0) || !isfinite(q))
        return NAN;
    double want = q;
    if (f * 1.05 > want)
        want = fmin(f * 1.05, FHIST_STRETCH * q);
    return round_up(want);
}

/* An F* within this fraction below an edge is counted above it: an F* that equals an edge
 * exactly (tied data give round values, and the edges are round numbers) then lands in the
 * same bin whatever the order of its floating-point sums — the engine's tie rule
 * (STURDY_TIE_RTOL) applied to the edges. */
#define FHIST_EDGE_RTOL 1e-10

size_t sturdy_fhist_bin(double fstar, double top)
{
    const size_t last = STURDY_FHIST_BINS - 1;
    if (!(fstar < top * (1.0 - FHIST_EDGE_RTOL))) /* ≥ top, +∞, NaN (never counted as less) */
        return last;
    if (!(fstar > 0))
        return 0;
    double k = floor(fstar / top * (double)last * (1.0 + FHIST_EDGE_RTOL));
    return k >= (double)last ? last - 1 : (size_t)k;
}

double sturdy_f_density(double x, double df1, double df2)
{
    if (!(df1 > 0) || !(df2 > 0))
        return NAN;
    if (!(x > 0) || !isfinite(x))
        return 0.0;
    return gsl_ran_fdist_pdf(x, df1, df2);
}
