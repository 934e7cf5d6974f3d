/* probe_testinv.c — runs the bootstrap test-inversion endpoint rule (testinv.c) on
 * replicate triples read from stdin, for tests/xcheck_testinv.py. Each problem is a line
 *   A K ALPHA_LO ALPHA_HI B
 * followed by B lines "BETA UU SSE" (vᵀu*, ‖u*‖², SSE*; "nan" or "inf" leave a row
 * out); the answer is one line "S_LO S_HI USED NULL_COUNT" with %.17g. An unreadable
 * problem prints "error" and makes the exit status 2. */
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>

#include "resampling/resampling.h"

int main(void)
{
    double A, k, alo, ahi;
    uint64_t B;
    int rc = 0;
    while (scanf("%lf %lf %lf %lf %" SCNu64, &A, &k, &alo, &ahi, &B) == 5) {
        double *rows = malloc((3 * (size_t)B + 1) * sizeof *rows);
        int ok = rows != NULL;
        for (uint64_t b = 0; ok && b < 3 * B; b++)
            ok = scanf("%lf", &rows[b]) == 1;
        sturdy_testinv ti;
        char err[STURDY_ERR_LEN];
        if (!ok || sturdy_testinv_endpoints(rows, 3, B, A, k, alo, ahi, &ti, err)) {
            printf("error\n");
            free(rows);
            return 2;
        }
        printf("%.17g %.17g %" PRIu64 " %" PRIu64 "\n", ti.s_lo, ti.s_hi, ti.used,
               ti.null_count);
        free(rows);
    }
    if (!feof(stdin)) {
        printf("error\n");
        rc = 2;
    }
    return rc;
}
