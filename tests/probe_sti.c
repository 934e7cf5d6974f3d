/* probe_sti.c — runs the studentized test inversion (testinv.c, sturdy_sti_endpoints) on
 * replicate rows read from stdin, for tests/xcheck_sti.py. Each problem is a line
 *   A MSE KAPPA SIGMA2_W DF1 DF2 C2 ALPHA_LO ALPHA_HI TI_LO TI_HI B
 * followed by B lines "BETA UU SSE KAPPA*" ("nan" or "inf" leave a row out); the answer is
 * one line "LAM_LO LAM_HI USED" with %.17g. An unreadable problem prints "error" and makes
 * the exit status 2. */
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>

#include "resampling/resampling.h"

int main(void)
{
    sturdy_sti_params p;
    uint64_t B;
    while (scanf("%lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %" SCNu64, &p.A, &p.mse,
                 &p.kappa, &p.world_var, &p.df1, &p.df2, &p.c2, &p.alpha_lo, &p.alpha_hi,
                 &p.ti_lo, &p.ti_hi, &B) == 12) {
        double *rows = malloc((4 * (size_t)B + 1) * sizeof *rows);
        int ok = rows != NULL;
        for (uint64_t b = 0; ok && b < 4 * B; b++)
            ok = scanf("%lf", &rows[b]) == 1;
        sturdy_sti out;
        char err[STURDY_ERR_LEN];
        if (!ok || sturdy_sti_endpoints(rows, 4, B, &p, &out, err)) {
            printf("error\n");
            free(rows);
            return 2;
        }
        printf("%.17g %.17g %" PRIu64 "\n", out.lam_lo, out.lam_hi, out.used);
        free(rows);
    }
    if (!feof(stdin)) {
        printf("error\n");
        return 2;
    }
    return 0;
}
