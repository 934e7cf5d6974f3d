/* fuzz_analysis.c — libFuzzer harness: CSV text → table → design → analysis → the
 * writers (text, JSON, CSV, comparisons CSV, a shard part) → the JSON read back, through
 * the public API only (include/sturdy/). The first two bytes choose the settings (number
 * of factors, a covariate, a block, the sums of squares, the method, sign flips, the
 * bootstrap scheme, the unequal-variance scheme, the resistant test, comparisons); the
 * rest is the CSV, whose first column is the response and the next ones the factors,
 * covariate and block in turn. Few rearrangements and replicates (19) and small guards
 * keep every input fast. A status other than OK is fine; a crash, a sanitizer report or
 * a leak is the finding. Built by `make fuzz-bins` (clang -fsanitize=fuzzer). */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sturdy/sturdy.h>

#define MAX_INPUT 8192

static void write_all(const sturdy_result *r, int partial)
{
    sturdy_report_opts ro;
    sturdy_report_opts_init(&ro);
    ro.partial = partial;
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_report_text(r, &ro, &b);
    b.len = 0;
    sturdy_report_csv(r, &ro, &b);
    b.len = 0;
    sturdy_report_csv_comparisons(r, &ro, &b);
    b.len = 0;
    if (sturdy_report_json(r, &ro, &b) == STURDY_OK && b.data) {
        char err[STURDY_ERR_LEN];
        if (partial) {
            sturdy_part *p = NULL;
            if (sturdy_part_read_json("fuzz.json", b.data, b.len, &p, err) != STURDY_OK) {
                fprintf(stderr, "a part as written is refused: %s\n", err);
                abort();
            }
            sturdy_part_free(p);
        } else {
            sturdy_result *back = NULL;
            if (sturdy_result_read_json("fuzz.json", b.data, b.len, &back, err) != STURDY_OK) {
                fprintf(stderr, "a result as written is refused: %s\n", err);
                abort();
            }
            sturdy_result_free(back);
        }
    }
    sturdy_buf_free(&b);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 2 || size > MAX_INPUT)
        return 0;
    uint8_t a = data[0], c = data[1];
    const char *csv = (const char *)data + 2;
    size_t len = size - 2;
    char err[STURDY_ERR_LEN];
    sturdy_table *t = NULL;
    if (sturdy_table_load_buffer("fuzz.csv", csv, len, NULL, &t, err) != STURDY_OK)
        return 0;
    size_t ncols = sturdy_table_ncols(t);
    size_t nf = 1 + (a & 3), col = 1;
    int want_cov = (a >> 2) & 1, want_block = (a >> 3) & 1;
    if (ncols < 2) {
        sturdy_table_free(t);
        return 0;
    }
    const char *resp = sturdy_table_column(t, 0);
    const char *factors[4], *cov = NULL, *block = NULL;
    size_t k = 0;
    for (; k < nf && col < ncols; k++)
        factors[k] = sturdy_table_column(t, col++);
    if (want_cov && col < ncols) cov = sturdy_table_column(t, col++);
    if (want_block && col < ncols) block = sturdy_table_column(t, col++);

    sturdy_options o;
    sturdy_options_init(&o);
    o.model.responses = &resp;
    o.model.nresponses = 1;
    o.model.factors = factors;
    o.model.nfactors = k;
    o.model.covariates = cov ? &cov : NULL;
    o.model.ncovariates = cov ? 1 : 0;
    o.model.block = block;
    o.model.max_levels = 40;
    o.model.max_columns = 200;
    o.model.max_memory = (size_t)64 << 20;
    o.model.merge_numeric_levels = (c >> 7) & 1;
    o.ss_type = 1 + ((a >> 4) & 3) % 3;
    o.method = (sturdy_method)(((a >> 6) & 3) % 3);
    o.flip = c & 1;
    o.boot_scheme = (sturdy_boot_scheme)((int)((c >> 1) & 3) - 1);  /* −1 (default) to 2 */
    o.spread_scheme = (sturdy_spread_scheme)(((c >> 3) & 3) % 3);
    o.resistant = (c >> 5) & 1;
    o.compare_mode = (c >> 6) & 1 ? STURDY_COMPARE_ALL : STURDY_COMPARE_NONE;
    o.permutations = 19;
    o.bootstrap = 19;
    o.seed = 7;
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.threads = 1;
    sturdy_result *r = NULL;
    if (sturdy_options_validate(&o, err) == STURDY_OK &&
        sturdy_analyze(t, &o, &ctx, &r, err) == STURDY_OK) {
        write_all(r, 0);
        sturdy_result_free(r);
        r = NULL;
        /* the same run as one shard of two: its part must read back */
        o.shard_index = 1;
        o.shard_count = 2;
        if (sturdy_analyze(t, &o, &ctx, &r, err) == STURDY_OK)
            write_all(r, 1);
    }
    sturdy_result_free(r);
    sturdy_table_free(t);
    return 0;
}
