/* probe_model.c — the model build alone, for bench/limits.sh and tests/xcheck_limits.sh:
 *   probe_model DATA.csv SS RESPONSE FACTORS [MAX_MEMORY_BYTES | estimate]
 * (FACTORS comma-separated). With "estimate" it prints only
 *   "estimate BYTES FLOPS design BYTES"
 * and builds nothing. Otherwise it prints one line
 *   "estimate BYTES FLOPS design BYTES rss_before KB rss_peak KB seconds S"
 * with sturdy_model_estimate's bytes (plus the coded design's, as the budget counts
 * them), the process's peak resident set (getrusage) just before and just after
 * sturdy_model_build, and the build's wall-clock seconds; then "TERM label df" per term
 * and "RANK r DFE e". Exit 2 on an error (message on stderr), 4 when the budget refuses. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include "sturdy/advanced.h"
#include "sturdy/table.h"

static size_t split(char *s, const char **out)
{
    size_t n = 0;
    for (char *tok = strtok(s, ","); tok && n < 16; tok = strtok(NULL, ",")) out[n++] = tok;
    return n;
}

static long peak_kb(void)
{
    struct rusage u;
    getrusage(RUSAGE_SELF, &u);
    return u.ru_maxrss;
}

int main(int argc, char **argv)
{
    if (argc != 5 && argc != 6) {
        fprintf(stderr, "usage: probe_model DATA SS RESPONSE FACTORS [MAX_MEMORY]\n");
        return 2;
    }
    char err[STURDY_ERR_LEN];
    sturdy_table_opts to;
    sturdy_table_opts_init(&to);
    sturdy_table *t = NULL;
    if (sturdy_table_load(argv[1], &to, &t, err)) {
        fprintf(stderr, "%s\n", err);
        return 2;
    }
    const char *resp[1] = { argv[3] }, *fac[16];
    sturdy_model_spec s;
    sturdy_model_spec_init(&s);
    s.responses = resp;
    s.nresponses = 1;
    s.factors = fac;
    s.nfactors = split(argv[4], fac);
    int only = argc == 6 && !strcmp(argv[5], "estimate");
    if (argc == 6 && !only) s.max_memory = strtoull(argv[5], NULL, 10);
    int ss = atoi(argv[2]);
    sturdy_design *d = NULL;
    sturdy_model *m = NULL;
    if (sturdy_design_build(t, &s, &d, err)) {
        fprintf(stderr, "%s\n", err);
        return 2;
    }
    double bytes = 0, flops = 0;
    sturdy_model_estimate(d, ss, &bytes, &flops);
    double design = (double)d->ngroups * (double)d->p * sizeof(double);
    if (only) {
        printf("estimate %.0f %.3g design %.0f\n", bytes + design, flops, design);
        sturdy_design_free(d);
        sturdy_table_free(t);
        return 0;
    }
    long before = peak_kb();
    struct timespec a, b;
    clock_gettime(CLOCK_MONOTONIC, &a);
    sturdy_status st = sturdy_model_build(d, ss, &m, err);
    clock_gettime(CLOCK_MONOTONIC, &b);
    if (st) {
        fprintf(stderr, "%s\n", err);
        return st == STURDY_EMODEL ? 4 : 2;
    }
    printf("estimate %.0f %.3g design %.0f rss_before %ld rss_peak %ld seconds %.3f\n",
           bytes + design, flops, design, before, peak_kb(),
           (double)(b.tv_sec - a.tv_sec) + 1e-9 * (double)(b.tv_nsec - a.tv_nsec));
    for (size_t k = 0; k < m->nterms; k++)
        printf("TERM %s %zu\n", d->terms[k].label, m->terms[k].df);
    printf("RANK %zu DFE %zu\n", m->rank, m->df_error);
    sturdy_model_free(m);
    sturdy_design_free(d);
    sturdy_table_free(t);
    return 0;
}
