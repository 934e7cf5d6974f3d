/* test_fisf.c — the F quantile (sturdy_f_isf) is the very double that the plain
 * bisection of [0, DBL_MAX] on the bits of doubles returns: the quantile first narrows a
 * bracket by false position and then replays that bisection, deciding the steps outside
 * the bracket without evaluating the tail (dist.c). A tail computed in floating point is
 * not monotone over the last few units in the last place, so a bisection from any other
 * bracket can end a few units away; this checks that the replay does not. Reference: the
 * full bisection itself (dist.c's bisect_doubles, compiled in here with the rest of
 * dist.c), on 4000 random quantiles (q from 1e-300 to 1 − 1e-16, df from 0.1 to 1e7,
 * fixed seed) and on the quantiles the program asks for (q = 0.05, 0.01, 0.001, 0.999;
 * small integer df). */
#include "check.h"
#include "../src/classical/dist.c"

#include <stdint.h>

static double full_bisection(double q, double df1, double df2)
{
    struct f_target c = {q, df1, df2};
    return bisect_doubles(0.0, DBL_MAX, q <= 0.5 ? f_side_sf : f_side_cdf, &c);
}

static uint64_t rng_state = 0x9e3779b97f4a7c15ULL;
static double uniform(void) { return check_uniform(&rng_state); }

int main(void)
{
    size_t n = 0, same = 0;
    char line[300], first[200] = "";
    for (int i = 0; i < 4000; i++, n++) {
        double r = uniform(), q;
        if (r < 0.45) q = pow(10.0, -300.0 + 299.7 * uniform());
        else if (r < 0.9) q = uniform();
        else q = 1.0 - pow(10.0, -16.0 + 15.0 * uniform());
        if (!(q > 0 && q < 1)) q = 0.5;
        double d1 = uniform() < 0.5 ? pow(10.0, -1.0 + 7.0 * uniform())
                                    : floor(1 + 59 * uniform());
        double d2 = uniform() < 0.5 ? pow(10.0, -1.0 + 8.0 * uniform())
                                    : floor(1 + 4999 * uniform());
        double a = sturdy_f_isf(q, d1, d2), b = full_bisection(q, d1, d2);
        if (memcmp(&a, &b, sizeof a) == 0) same++;
        else if (!first[0])
            snprintf(first, sizeof first, "; first difference q %.17g df %.17g, %.17g: %.17g "
                     "against %.17g", q, d1, d2, a, b);
    }
    snprintf(line, sizeof line, "random quantiles: %zu of %zu equal to the full bisection%s",
             same, n, first);
    check_report(same == n, line);

    static const double qs[] = { 0.05, 0.01, 0.001, 0.999, 0.5, 1e-6 };
    n = same = 0;
    first[0] = '\0';
    for (size_t k = 0; k < sizeof qs / sizeof *qs; k++)
        for (int d1 = 1; d1 <= 40; d1++)
            for (int d2 = 1; d2 <= 400; d2 += 7, n++) {
                double a = sturdy_f_isf(qs[k], d1, d2), b = full_bisection(qs[k], d1, d2);
                if (memcmp(&a, &b, sizeof a) == 0) same++;
                else if (!first[0])
                    snprintf(first, sizeof first, "; first difference q %g df %d, %d", qs[k],
                             d1, d2);
            }
    snprintf(line, sizeof line, "the program's quantiles: %zu of %zu equal to the full "
             "bisection%s", same, n, first);
    check_report(same == n, line);
    check_report(isinf(sturdy_f_isf(0.0, 3, 10)), "edge: q = 0 gives +inf");
    check_close("edge: q = 1 gives 0", sturdy_f_isf(1.0, 3, 10), 0.0, 0, 0);
    return check_done();
}
