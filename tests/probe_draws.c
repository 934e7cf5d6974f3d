/* probe_draws.c — the residual bootstrap's draws of replicate b through the public PCG
 * interface (sturdy/pcg.h), for tests/xcheck_sti.py to rebuild replicates independently.
 * Arguments: SEED NPOOL N B0 B1; prints, for each replicate b in [B0, B1), one line of N
 * positions in the pool (0 … NPOOL−1): position k of row i is the i-th draw
 * sturdy_pcg_bounded(g, NPOOL) of generator sturdy_pcg_for(SEED, BOOTSTRAP, b), the order
 * bootstrap.c draws the first response's residuals in. */
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>

#include "sturdy/pcg.h"

int main(int argc, char **argv)
{
    if (argc != 6) {
        fprintf(stderr, "usage: probe_draws SEED NPOOL N B0 B1\n");
        return 2;
    }
    uint64_t seed = strtoull(argv[1], NULL, 10), npool = strtoull(argv[2], NULL, 10);
    uint64_t n = strtoull(argv[3], NULL, 10), b0 = strtoull(argv[4], NULL, 10);
    uint64_t b1 = strtoull(argv[5], NULL, 10);
    for (uint64_t b = b0; b < b1; b++) {
        sturdy_pcg64 g;
        sturdy_pcg_for(&g, seed, STURDY_STREAM_BOOTSTRAP, b);
        for (uint64_t i = 0; i < n; i++)
            printf("%" PRIu64 "%c", sturdy_pcg_bounded(&g, npool), i + 1 < n ? ' ' : '\n');
    }
    return 0;
}
