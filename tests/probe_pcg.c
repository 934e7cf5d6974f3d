/* probe_pcg.c — prints sturdy_pcg64 outputs for the cases that tests/xcheck_pcg.sh
 * feeds on standard input, in the same format as its C++ reference program.
 *
 * One case per line (numbers in decimal or 0x-hex, 128-bit values as hi lo halves):
 *   LABEL raw SEED_HI SEED_LO STREAM_HI STREAM_LO N            first N outputs
 *   LABEL adv SEED_HI SEED_LO STREAM_HI STREAM_LO D_HI D_LO N  N outputs after advance(D)
 *   LABEL for SEED PURPOSE INDEX N                             first N of sturdy_pcg_for
 * Each output is printed as "LABEL #k VALUE" (k from 1, VALUE in decimal). Exit 2 on a
 * line it cannot read. */
#include <errno.h>
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sturdy/pcg.h"

#define PROBE_MAX_NUMS 8

/* Reads up to PROBE_MAX_NUMS unsigned 64-bit numbers after the label and kind; returns
 * how many, or −1 on a malformed number. */
static int read_numbers(char *rest, uint64_t *a)
{
    int count = 0;
    for (char *tok = strtok(rest, " \t\r\n"); tok; tok = strtok(NULL, " \t\r\n")) {
        char *end;
        if (count == PROBE_MAX_NUMS || tok[0] == '-') return -1;
        errno = 0;
        unsigned long long v = strtoull(tok, &end, 0);
        if (errno || *end) return -1;
        a[count++] = (uint64_t)v;
    }
    return count;
}

int main(void)
{
    char line[1024];
    int lineno = 0;
    while (fgets(line, sizeof line, stdin)) {
        char label[256], kind[16];
        int used = 0;
        uint64_t a[PROBE_MAX_NUMS], n;
        sturdy_pcg64 g;
        lineno++;
        if (sscanf(line, "%255s %15s %n", label, kind, &used) != 2) continue; /* blank */
        int got = read_numbers(line + used, a);
        if (strcmp(kind, "raw") == 0 && got == 5) {
            sturdy_pcg_seed(&g, a[0], a[1], a[2], a[3]);
            n = a[4];
        } else if (strcmp(kind, "adv") == 0 && got == 7) {
            sturdy_pcg_seed(&g, a[0], a[1], a[2], a[3]);
            sturdy_pcg_advance(&g, ((sturdy_u128)a[4] << 64) | a[5]);
            n = a[6];
        } else if (strcmp(kind, "for") == 0 && got == 4 && a[1] <= 0xffffffffu) {
            sturdy_pcg_for(&g, a[0], (unsigned)a[1], a[2]);
            n = a[3];
        } else {
            fprintf(stderr, "probe_pcg: cannot read line %d: %s", lineno, line);
            return 2;
        }
        for (uint64_t k = 1; k <= n; k++)
            printf("%s #%" PRIu64 " %" PRIu64 "\n", label, k, sturdy_pcg_next(&g));
    }
    return 0;
}
