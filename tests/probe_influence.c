/* probe_influence.c — prints the exact leave-one-out F and p of every term for every used
 * row, for tests/xcheck_influence.py:
 *   probe_influence DATA.csv SS RESPONSE FACTORS COVARIATES BLOCK
 * (FACTORS and COVARIATES comma-separated, "-" for none; BLOCK "-" for none). One line
 * per term and row: "TERM ROW F P" with the 1-based data row and %.17g numbers ("nan"
 * where the row cannot be removed alone); a term without an F-test prints "TERM - none".
 * Exit 2 on a usage or analysis error, with the message on stderr. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "checks/checks.h"
#include "sturdy/advanced.h"
#include "sturdy/table.h"

/* Splits a comma list in place into up to 16 names; "-" is none. */
static size_t split(char *s, const char **out)
{
    size_t n = 0;
    if (!strcmp(s, "-")) return 0;
    for (char *tok = strtok(s, ","); tok && n < 16; tok = strtok(NULL, ",")) out[n++] = tok;
    return n;
}

int main(int argc, char **argv)
{
    if (argc != 7) {
        fprintf(stderr, "usage: probe_influence DATA SS RESPONSE FACTORS COVARIATES BLOCK\n");
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
    const char *resp[1] = { argv[3] }, *fac[16], *cov[16];
    sturdy_model_spec s;
    sturdy_model_spec_init(&s);
    s.responses = resp;
    s.nresponses = 1;
    s.factors = fac;
    s.nfactors = split(argv[4], fac);
    s.covariates = cov;
    s.ncovariates = split(argv[5], cov);
    s.block = strcmp(argv[6], "-") ? argv[6] : NULL;
    sturdy_design *d = NULL;
    sturdy_model *m = NULL;
    if (sturdy_design_build(t, &s, &d, err) || sturdy_model_build(d, atoi(argv[2]), &m, err)) {
        fprintf(stderr, "%s\n", err);
        return 2;
    }
    double *f = malloc(d->n * sizeof *f), *p = malloc(d->n * sizeof *p);
    int rc = 0;
    for (size_t k = 0; k < d->nterms && f && p; k++) {
        sturdy_status st = sturdy_influence_loo(d, m, 0, k, f, p, err);
        if (st == STURDY_EMODEL) {
            printf("%s - none\n", d->terms[k].label);
            continue;
        }
        if (st) {
            fprintf(stderr, "%s\n", err);
            rc = 2;
            break;
        }
        for (size_t i = 0; i < d->n; i++)
            printf("%s %zu %.17g %.17g\n", d->terms[k].label, d->row[i] + 1, f[i], p[i]);
    }
    free(f);
    free(p);
    sturdy_model_free(m);
    sturdy_design_free(d);
    sturdy_table_free(t);
    return rc;
}
