/* pcg_inline.h — the PCG step, output and Lemire bound as inline functions, for the hot
 * loops (shuffles in permute.c, draws in bootstrap.c); pcg.c's exported functions are
 * these same functions, so there is one implementation. */
#ifndef STURDY_PCG_INLINE_H
#define STURDY_PCG_INLINE_H

#include "sturdy/pcg.h"

/* The reference library's 128-bit LCG multiplier (pcg_detail::default_multiplier for
 * pcg128_t): 0x2360ED051FC65DA4_4385DF649FCCF645. */
#define PCG_MULT_HI UINT64_C(0x2360ED051FC65DA4)
#define PCG_MULT_LO UINT64_C(0x4385DF649FCCF645)

static inline sturdy_u128 pcg_mult(void)
{
    return ((sturdy_u128)PCG_MULT_HI << 64) | PCG_MULT_LO;
}

static inline void pcg_step(sturdy_pcg64 *g)
{
    g->state = g->state * pcg_mult() + g->inc;
}

/* XSL-RR output of the new state (the reference steps first, then outputs). */
static inline uint64_t pcg_next_inline(sturdy_pcg64 *g)
{
    pcg_step(g);
    uint64_t x = (uint64_t)(g->state >> 64) ^ (uint64_t)g->state;
    unsigned rot = (unsigned)(g->state >> 122);
    return (x >> rot) | (x << ((64u - rot) & 63u));
}

/* Lemire (2019), Algorithm 5: the division is only paid when the low half falls below
 * bound, which is rare for small bounds. */
static inline uint64_t pcg_bounded_inline(sturdy_pcg64 *g, uint64_t bound)
{
    sturdy_u128 m = (sturdy_u128)pcg_next_inline(g) * bound;
    uint64_t low = (uint64_t)m;
    if (low < bound) {
        uint64_t threshold = (0u - bound) % bound; /* (2^64 − bound) mod bound */
        while (low < threshold) {
            m = (sturdy_u128)pcg_next_inline(g) * bound;
            low = (uint64_t)m;
        }
    }
    return (uint64_t)(m >> 64);
}

#endif
