/* probe_huber.c — prints the Huber fits and the resistant statistic of every term, for
 * tests/xcheck_resistant.py:
 *   probe_huber DATA.csv SS RESPONSE FACTORS COVARIATES BLOCK
 * (FACTORS and COVARIATES comma-separated, "-" for none; BLOCK "-" for none). Per term:
 * "TERM label", then "STAT stat drop lambda scale it_full it_red", then "FULL" and "RED"
 * lines with the fitted value of every used row (%.17g, in design row order, each line
 * starting with the 1-based data rows' order given once by a "ROWS" line first). A term
 * without an F-test prints "TERM label none". Exit 2 on an error, message on stderr. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "classical/classical.h"
#include "core/core.h"
#include "sturdy/advanced.h"
#include "sturdy/table.h"

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
        fprintf(stderr, "usage: probe_huber DATA SS RESPONSE FACTORS COVARIATES BLOCK\n");
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
    size_t n = d->n, rmax = m->rank;
    for (size_t k = 0; k < m->nterms; k++)
        if (m->terms[k].rank_red > rmax) rmax = m->terms[k].rank_red;
    sturdy_huber_work w;
    uint32_t *g = malloc(n * sizeof *g);
    double *y = malloc(n * sizeof *y);
    if (!g || !y || sturdy_huber_work_alloc(n, m->K, rmax, &w, err)) {
        fprintf(stderr, "out of memory\n");
        return 2;
    }
    printf("ROWS");
    for (size_t i = 0; i < n; i++) {
        g[i] = (uint32_t)d->group[i];
        y[i] = d->y[i] + d->y_ref[0];
        printf(" %zu", d->row[i] + 1);
    }
    printf("\n");
    for (size_t k = 0; k < m->nterms; k++) {
        const sturdy_term_basis *tb = &m->terms[k];
        if (!tb->testable || tb->df == 0) {
            printf("TERM %s none\n", d->terms[k].label);
            continue;
        }
        sturdy_rs_stat st;
        double *Ured = NULL;
        size_t rred = 0;
        if (sturdy_model_reduced_basis(d, m, k, &Ured, &rred, err)) {
            fprintf(stderr, "%s\n", err);
            return 2;
        }
        int ok = sturdy_rs_statistic(y, g, n, m, Ured, rred, &w, &st);
        sturdy_free(Ured);
        printf("TERM %s\nSTAT %.17g %.17g %.17g %.17g %d %d %d\n", d->terms[k].label, st.stat,
               st.drop, st.lambda, st.scale, st.it_full, st.it_red, ok);
        printf("FULL");
        for (size_t i = 0; i < n; i++) printf(" %.17g", w.mu[g[i]]);
        printf("\nRED");
        for (size_t i = 0; i < n; i++) printf(" %.17g", w.mu_red[g[i]]);
        printf("\n");
    }
    sturdy_huber_work_free(&w);
    free(g);
    free(y);
    sturdy_model_free(m);
    sturdy_design_free(d);
    sturdy_table_free(t);
    return 0;
}
