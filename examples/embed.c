/* embed.c — libsturdy inside another program: load a CSV table, set the options, run
 * the analysis, print each term's F, p and resampled p, and write the JSON report.
 *
 *   embed [DATA.csv [RESPONSE [FACTOR,FACTOR... [OUT.json]]]]
 *
 * Without arguments it analyses examples/demo.csv (build_min by runner, cache, tests).
 * The JSON goes to OUT.json, or to standard output after the term lines when OUT.json
 * is absent or "-". Rearrangements, replicates and seed are fixed here (999, 200, 12345)
 * so that the result equals
 *   sturdy check DATA.csv -y RESPONSE -f FACTORS -B 999 --bootstrap 200 --seed 12345 \
 *       --format json
 * Build: cc embed.c $(pkg-config --cflags --libs sturdy) -o embed
 * The exit status is the library's status, as the sturdy program's is. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sturdy/sturdy.h>

/* BLAS threads are the application's to set (sturdy.h). A program linked with OpenBLAS
 * would call openblas_set_num_threads(1) here, since the library runs LAPACK inside its
 * own threads; this example links libsturdy alone, so it leaves BLAS as it finds it
 * (set OPENBLAS_NUM_THREADS=1 in the environment for the same effect). */

#define MAX_FACTORS STURDY_MAX_FACTORS

/* Every read of the result is here: one line per response and term, through the
 * accessors (the result is opaque). */
static void print_terms(const sturdy_result *r, FILE *f)
{
    for (size_t i = 0; i < sturdy_result_nresponses(r); i++) {
        fprintf(f, "response %s\n", sturdy_result_response(r, i));
        for (size_t j = 0; j < sturdy_result_nterms(r); j++) {
            /* NaN marks a value that could not be computed; the note says why */
            fprintf(f, "term %s\tF %.17g\tp %.17g\tp_resampled %.17g\n",
                    sturdy_result_term(r, j), sturdy_term_get(r, i, j, STURDY_TV_F),
                    sturdy_term_get(r, i, j, STURDY_TV_P),
                    sturdy_term_get(r, i, j, STURDY_TV_P_PERM));
            double lo, hi;
            if (sturdy_term_interval(r, i, j, STURDY_ES_PARTIAL_ETA2, STURDY_CI_BCA, &lo, &hi))
                fprintf(f, "     partial eta2 %.17g\tBCa [%.17g, %.17g]\n",
                        sturdy_term_effect(r, i, j, STURDY_ES_PARTIAL_ETA2), lo, hi);
            else if (sturdy_term_note(r, i, j, STURDY_NOTE_BOOTSTRAP))
                fprintf(f, "     no interval: %s\n",
                        sturdy_term_note(r, i, j, STURDY_NOTE_BOOTSTRAP));
        }
    }
}

/* Split a comma-separated list in place into at most `max` names; returns the count,
 * or 0 when there are too many or an empty one. */
static size_t split_names(char *s, const char **names, size_t max)
{
    size_t n = 0;
    for (char *tok = s;; ) {
        char *comma = strchr(tok, ',');
        if (comma) *comma = '\0';
        if (*tok == '\0' || n == max) return 0;
        names[n++] = tok;
        if (!comma) return n;
        tok = comma + 1;
    }
}

/* Write `len` bytes to `path` ("-": standard output); 0 on success. */
static int write_all(const char *path, const char *data, size_t len)
{
    int to_stdout = strcmp(path, "-") == 0;
    FILE *f = to_stdout ? stdout : fopen(path, "wb");
    if (!f) return -1;
    int bad = fwrite(data, 1, len, f) != len;
    if (to_stdout) bad |= fflush(f) != 0;
    else bad |= fclose(f) != 0;
    return bad ? -1 : 0;
}

int main(int argc, char **argv)
{
    const char *data = argc > 1 ? argv[1] : "examples/demo.csv";
    const char *response = argc > 2 ? argv[2] : "build_min";
    const char *out_path = argc > 4 ? argv[4] : "-";
    char factor_list[1024];
    snprintf(factor_list, sizeof factor_list, "%s", argc > 3 ? argv[3] : "runner,cache,tests");
    const char *factors[MAX_FACTORS];
    size_t nfactors = split_names(factor_list, factors, MAX_FACTORS);
    if (argc > 5 || nfactors == 0) {
        fprintf(stderr, "usage: embed [DATA.csv [RESPONSE [FACTOR,FACTOR... [OUT.json]]]]\n");
        return STURDY_EUSAGE;
    }

    printf("libsturdy %s (built against %s)\n", sturdy_version(), STURDY_VERSION);
    char err[STURDY_ERR_LEN];
    sturdy_table *table = NULL;
    sturdy_result *result = NULL;
    sturdy_buf json;
    sturdy_buf_init(&json);

    /* default CSV reading: ',' separates, the empty field and NA are missing */
    sturdy_status st = sturdy_table_load(data, NULL, &table, err);
    if (st == STURDY_OK) {
        sturdy_options o;
        sturdy_options_init(&o);
        o.model.responses = &response;
        o.model.nresponses = 1;
        o.model.factors = factors;
        o.model.nfactors = nfactors;
        o.permutations = 999;   /* fewer than the default 9999: a quick example */
        o.bootstrap = 200;
        o.seed = 12345;
        st = sturdy_options_validate(&o, err);
        /* how the run uses the machine: two threads, no progress, no cancellation */
        sturdy_context ctx;
        sturdy_context_init(&ctx);
        ctx.threads = 2;
        if (st == STURDY_OK) st = sturdy_analyze(table, &o, &ctx, &result, err);
    }
    if (st == STURDY_OK) {
        print_terms(result, stdout);
        if (sturdy_result_tested_terms(result) == 0)
            fprintf(stderr, "embed: nothing tested: %s\n", sturdy_result_untested_reason(result));
        st = sturdy_report_json(result, NULL, &json);
        if (st != STURDY_OK) snprintf(err, sizeof err, "out of memory writing the report");
    }
    if (st == STURDY_OK && write_all(out_path, json.data, json.len) != 0) {
        snprintf(err, sizeof err, "cannot write %s", out_path);
        st = STURDY_EOUTPUT;
    }
    if (st != STURDY_OK) fprintf(stderr, "embed: %s (%s)\n", err, sturdy_status_name(st));

    sturdy_buf_free(&json);
    sturdy_result_free(result);   /* each *_free accepts NULL */
    sturdy_table_free(table);
    return (int)st;
}
