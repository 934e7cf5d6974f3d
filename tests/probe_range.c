/* probe_range.c — reads studentized-range queries from stdin, one per line, and prints
 * each answer with %.17g, for tests/xcheck_compare.sh:
 *   upper Q K DF   → P(Q > q)
 *   quant P K DF   → q with P(Q ≤ q) = p
 * An unreadable line prints "error" and makes the exit status 2. */
#include <stdio.h>
#include <string.h>

#include "classical/range.h"

int main(void)
{
    char line[256], cmd[16];
    double a, k, df;
    int rc = 0;
    while (fgets(line, sizeof line, stdin)) {
        if (sscanf(line, "%15s %lf %lf %lf", cmd, &a, &k, &df) != 4 || k < 2) {
            printf("error\n");
            rc = 2;
        } else if (!strcmp(cmd, "upper")) {
            printf("%.17g\n", sturdy_range_upper(a, k, df));
        } else if (!strcmp(cmd, "quant")) {
            printf("%.17g\n", sturdy_range_quantile(a, k, df));
        } else {
            printf("error\n");
            rc = 2;
        }
    }
    return rc;
}
