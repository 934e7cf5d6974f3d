/* probe_range.c — reads studentized-range queries from stdin, one per line, and prints
 * each answer with %.17g, for tests/xcheck_compare.sh:
 *   upper Q K DF   → P(Q > q)
 *   quant P K DF   → q with P(Q ≤ q) = p
 *   tupper, tquant → the same through a table of the inner tail (sturdy_range_table)
 *   many P K DF... → on one line: 1 when sturdy_range_quantiles interpolated (else 0),
 *                    then its quantiles for the (up to 64) df
 * An unreadable line prints "error" and makes the exit status 2. */
#include <stdio.h>
#include <string.h>

#include "classical/range.h"

int main(void)
{
    char line[4096], cmd[16];
    double a, k, df;
    int rc = 0;
    while (fgets(line, sizeof line, stdin)) {
        if (!strncmp(line, "many ", 5)) {
            double dfs[64], qs[64], work[64];
            size_t n = 0;
            int used = 0, off = 5;
            if (sscanf(line + off, "%lf %lf%n", &a, &k, &used) != 2) {
                printf("error\n");
                rc = 2;
                continue;
            }
            off += used;
            while (n < 64 && sscanf(line + off, "%lf%n", &dfs[n], &used) == 1) {
                off += used;
                n++;
            }
            printf("%d", sturdy_range_quantiles(a, k, dfs, n, qs, work));
            for (size_t i = 0; i < n; i++)
                printf(" %.17g", qs[i]);
            printf("\n");
            continue;
        }
        if (sscanf(line, "%15s %lf %lf %lf", cmd, &a, &k, &df) != 4 || k < 2) {
            printf("error\n");
            rc = 2;
        } else if (!strcmp(cmd, "upper")) {
            printf("%.17g\n", sturdy_range_upper(a, k, df));
        } else if (!strcmp(cmd, "quant")) {
            printf("%.17g\n", sturdy_range_quantile(a, k, df));
        } else if (!strcmp(cmd, "tupper") || !strcmp(cmd, "tquant")) {
            sturdy_range_table *t = sturdy_range_table_new(k);
            if (!t) {
                printf("error\n");
                rc = 2;
                continue;
            }
            printf("%.17g\n", cmd[1] == 'u' ? sturdy_range_upper_tab(t, a, k, df)
                                            : sturdy_range_quantile_tab(t, a, k, df));
            sturdy_range_table_free(t);
        } else {
            printf("error\n");
            rc = 2;
        }
    }
    return rc;
}
