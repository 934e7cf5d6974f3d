/* probe_diagnose.c — reads diagnostic queries from stdin, one per line, and prints each
 * answer on one line with %.17g, for tests/xcheck_diagnose.py:
 *   sw N X1 … XN                    → status W p
 *   moments N X1 … XN               → skewness excess_kurtosis
 *   bf N NGROUPS G1 X1 … GN XN      → status F df1 df2 p
 *   stud N DF E1 H1 … EN HN         → r1 t1 … rN tN (internal, external)
 * (status is the sturdy_status number; after a failure the other fields are "-".)
 * An unreadable line prints "error" and makes the exit status 2. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sturdy/diagnose.h"

/* Parses the next number after *pos; returns 0 at the end of the line or on junk. */
static int next_num(char **pos, double *v)
{
    char *end;
    *v = strtod(*pos, &end);
    if (end == *pos) return 0;
    *pos = end;
    return 1;
}

static int run_line(char *line)
{
    char cmd[16];
    int used = 0;
    if (sscanf(line, "%15s%n", cmd, &used) != 1) return 1;
    char *pos = line + used;
    double v;
    if (!next_num(&pos, &v) || v < 0) return 0;
    size_t n = (size_t)v, m = n;
    int pairs = !strcmp(cmd, "bf") || !strcmp(cmd, "stud");
    double extra = 0;
    if (pairs && !next_num(&pos, &extra)) return 0;
    double *a = malloc((m ? m : 1) * sizeof *a), *b = malloc((m ? m : 1) * sizeof *b);
    size_t *g = malloc((m ? m : 1) * sizeof *g);
    int ok = a && b && g;
    for (size_t i = 0; ok && i < n; i++) {
        if (pairs) {
            ok = next_num(&pos, &v);
            g[i] = (size_t)(v < 0 ? 0 : v);
            a[i] = v;
            ok = ok && next_num(&pos, &b[i]);
        } else {
            ok = next_num(&pos, &a[i]);
        }
    }
    if (ok) {
        char err[STURDY_ERR_LEN] = "";
        if (!strcmp(cmd, "sw")) {
            double w, p;
            sturdy_status st = sturdy_shapiro_wilk(a, n, &w, &p, err);
            if (st) printf("%d - - %s\n", (int)st, err);
            else printf("0 %.17g %.17g\n", w, p);
        } else if (!strcmp(cmd, "moments")) {
            double s, k;
            sturdy_moments(a, n, &s, &k);
            printf("%.17g %.17g\n", s, k);
        } else if (!strcmp(cmd, "bf")) {
            double f, d1, d2, p;
            sturdy_status st = sturdy_brown_forsythe(b, g, n, (size_t)extra, &f, &d1, &d2,
                                                     &p, err);
            if (st) printf("%d - - - - %s\n", (int)st, err);
            else printf("0 %.17g %.17g %.17g %.17g\n", f, d1, d2, p);
        } else if (!strcmp(cmd, "stud")) {
            double *r = malloc((m ? m : 1) * sizeof *r), *t = malloc((m ? m : 1) * sizeof *t);
            ok = r && t;
            if (ok) {
                sturdy_studentize(a, b, n, (size_t)extra, r, t);
                for (size_t i = 0; i < n; i++)
                    printf("%s%.17g %.17g", i ? " " : "", r[i], t[i]);
                printf("\n");
            }
            free(r);
            free(t);
        } else {
            ok = 0;
        }
    }
    free(a);
    free(b);
    free(g);
    return ok;
}

int main(void)
{
    char *line = NULL;
    size_t cap = 0;
    int rc = 0;
    while (getline(&line, &cap, stdin) > 0) {
        if (!run_line(line)) {
            printf("error\n");
            rc = 2;
        }
    }
    free(line);
    return rc;
}
