/* probe_readback.c — reads a JSON result back (sturdy_result_read_json) and prints, per
 * response and term, what the accessors give for the single-row sensitivity and the
 * resistant test, for tests/xcheck_sensitivity_io.py:
 *   probe_readback RESULT.json
 * One line per term: "RESP TERM rows p_without p_perm_without rs_stat rs_p_perm", the
 * numbers as %.17g ("nan" for absent). Exit 2 when the file cannot be read back. */
#include <stdio.h>
#include <stdlib.h>

#include "sturdy/sturdy.h"

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: probe_readback RESULT.json\n");
        return 2;
    }
    FILE *f = fopen(argv[1], "rb");
    if (!f) {
        perror(argv[1]);
        return 2;
    }
    static char text[1 << 24];
    size_t len = fread(text, 1, sizeof text, f);
    fclose(f);
    char err[STURDY_ERR_LEN];
    sturdy_result *r = NULL;
    if (sturdy_result_read_json(argv[1], text, len, &r, err)) {
        fprintf(stderr, "%s\n", err);
        return 2;
    }
    static const sturdy_term_value v[] = { STURDY_TV_SENS_ROWS, STURDY_TV_SENS_P_WITHOUT,
                                           STURDY_TV_SENS_P_PERM_WITHOUT, STURDY_TV_RS_STAT,
                                           STURDY_TV_RS_P_PERM };
    for (size_t i = 0; i < sturdy_result_nresponses(r); i++)
        for (size_t k = 0; k < sturdy_result_nterms(r); k++) {
            printf("%zu %s", i, sturdy_result_term(r, k));
            for (size_t j = 0; j < sizeof v / sizeof *v; j++)
                printf(" %.17g", sturdy_term_get(r, i, k, v[j]));
            printf("\n");
        }
    sturdy_result_free(r);
    return 0;
}
