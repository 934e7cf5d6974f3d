/* probe_dist.c — reads distribution queries from stdin, one per line, and prints each
 * answer on one line with %.17g, for tests/xcheck_dist.py:
 *   fsf F D1 D2            → P(F > f)
 *   fisf Q D1 D2           → f with P(F > f) = q
 *   ncfcdf F D1 D2 LAMBDA  → P(F ≤ f | λ)
 *   ncfci F D1 D2 CONF     → status eta_lo eta_hi lambda_lo lambda_hi
 *   cp K N CONF            → lo hi
 *   normcdf Z | normppf P  → value
 * An unreadable line prints "error" and makes the exit status 2. */
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sturdy/dist.h"

int main(void)
{
    char line[1024], cmd[32];
    int rc = 0;
    while (fgets(line, sizeof line, stdin)) {
        double a, b, c, d;
        uint64_t k, n;
        if (sscanf(line, "%31s", cmd) != 1) continue;
        if (!strcmp(cmd, "fsf") && sscanf(line, "%*s %lf %lf %lf", &a, &b, &c) == 3) {
            printf("%.17g\n", sturdy_f_sf(a, b, c));
        } else if (!strcmp(cmd, "fisf") && sscanf(line, "%*s %lf %lf %lf", &a, &b, &c) == 3) {
            printf("%.17g\n", sturdy_f_isf(a, b, c));
        } else if (!strcmp(cmd, "ncfcdf") &&
                   sscanf(line, "%*s %lf %lf %lf %lf", &a, &b, &c, &d) == 4) {
            printf("%.17g\n", sturdy_ncf_cdf(a, b, c, d));
        } else if (!strcmp(cmd, "ncfci") &&
                   sscanf(line, "%*s %lf %lf %lf %lf", &a, &b, &c, &d) == 4) {
            double elo = -1, ehi = -1, llo = -1, lhi = -1;
            sturdy_status st = sturdy_ncf_eta2_interval(a, b, c, d, &elo, &ehi, &llo, &lhi);
            printf("%d %.17g %.17g %.17g %.17g\n", (int)st, elo, ehi, llo, lhi);
        } else if (!strcmp(cmd, "cp") &&
                   sscanf(line, "%*s %" SCNu64 " %" SCNu64 " %lf", &k, &n, &c) == 3) {
            double lo, hi;
            sturdy_clopper_pearson(k, n, c, &lo, &hi);
            printf("%.17g %.17g\n", lo, hi);
        } else if (!strcmp(cmd, "normcdf") && sscanf(line, "%*s %lf", &a) == 1) {
            printf("%.17g\n", sturdy_norm_cdf(a));
        } else if (!strcmp(cmd, "normppf") && sscanf(line, "%*s %lf", &a) == 1) {
            printf("%.17g\n", sturdy_norm_ppf(a));
        } else {
            printf("error\n");
            rc = 2;
        }
    }
    return rc;
}
