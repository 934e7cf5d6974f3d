/* fuzz_read.c — libFuzzer harness for the readers of sturdy's JSON: the same bytes are
 * read as a result (sturdy_result_read_json, then every accessor over what it holds and
 * the text writer, which declines a result read back) and as a shard part
 * (sturdy_part_read_json, then its slice added to nothing and freed). A status other
 * than OK is fine; a crash, a sanitizer report or a leak is the finding. Built by
 * `make fuzz-bins` (clang -fsanitize=fuzzer). */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sturdy/sturdy.h>

#define MAX_INPUT 65536

static volatile double sink;

static void touch(const char *s)
{
    if (s)
        sink += (double)strlen(s);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > MAX_INPUT)
        return 0;
    /* the readers take a length; the copy is not terminated, so reading past it is seen */
    char *text = malloc(size ? size : 1);
    if (!text)
        return 0;
    memcpy(text, data, size);
    char err[STURDY_ERR_LEN];
    sturdy_result *r = NULL;
    if (sturdy_result_read_json("fuzz.json", text, size, &r, err) == STURDY_OK) {
        for (size_t i = 0; i < sturdy_result_nresponses(r); i++) {
            touch(sturdy_result_response(r, i));
            for (size_t j = 0; j < sturdy_result_nterms(r); j++) {
                touch(sturdy_result_term(r, j));
                for (int v = 0; v < STURDY_TV_COUNT; v++)
                    sink += sturdy_term_get(r, i, j, (sturdy_term_value)v);
                for (int e = 0; e < STURDY_NES; e++) {
                    double lo, hi;
                    sink += sturdy_term_effect(r, i, j, e);
                    for (int m = STURDY_CI_PERCENTILE; m <= STURDY_CI_STUDENTIZED; m++)
                        if (sturdy_term_interval(r, i, j, e, (sturdy_ci_method)m, &lo, &hi))
                            sink += lo + hi;
                    sturdy_ci_method how;
                    touch(sturdy_term_recommended(r, i, j, e, &how, &lo, &hi));
                }
                for (int n = STURDY_NOTE_CLASSICAL; n <= STURDY_NOTE_INTERVALS; n++)
                    touch(sturdy_term_note(r, i, j, (sturdy_note_kind)n));
            }
        }
        sturdy_buf b;
        sturdy_buf_init(&b);
        sturdy_report_text(r, NULL, &b);
        sturdy_buf_free(&b);
        sturdy_result_free(r);
    }
    sturdy_part *p = NULL;
    if (sturdy_part_read_json("fuzz.json", text, size, &p, err) == STURDY_OK) {
        const sturdy_slice *s = sturdy_part_slice(p);
        sink += (double)(s->perm_end - s->perm_begin);
        sturdy_part_origin o;
        sturdy_part_origin_get(p, &o);
        for (size_t i = 0; i < o.nargs; i++)
            touch(o.args[i]);
    }
    sturdy_part_free(p);
    free(text);
    return 0;
}
