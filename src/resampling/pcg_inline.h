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

/* The XSL-RR output of a state (pcg_next_inline's, without the step). */
static inline uint64_t pcg_output_of(sturdy_u128 s)
{
    uint64_t x = (uint64_t)(s >> 64) ^ (uint64_t)s;
    unsigned rot = (unsigned)(s >> 122);
    return (x >> rot) | (x << ((64u - rot) & 63u));
}

/* One output of a shuffle (below): Lemire's draw from 0..i−1 with the output of state S;
 * an accepted draw swaps x[i − 1] with x[j] and counts i down, and the shuffle ends, with
 * the generator left at S, when i reaches 1. A rejected draw takes the next output, as
 * pcg_bounded_inline's loop does. */
#define PCG_SHUFFLE_STEP(S)                                                              \
    do {                                                                                 \
        sturdy_u128 m_ = (sturdy_u128)pcg_output_of(S) * i;                              \
        uint64_t low_ = (uint64_t)m_;                                                    \
        if (!(low_ < i && low_ < (0u - (uint64_t)i) % i)) {                              \
            size_t j_ = (size_t)(m_ >> 64);                                              \
            uint32_t t_ = x[i - 1];                                                      \
            x[i - 1] = x[j_];                                                            \
            x[j_] = t_;                                                                  \
            if (--i < 2) {                                                               \
                g->state = (S);                                                            \
                return;                                                                  \
            }                                                                            \
        }                                                                                \
    } while (0)

/* Durstenfeld's shuffle of x[0..m): for i = m down to 2 swap x[i − 1] with x[j], j drawn
 * from 0..i−1 by pcg_bounded_inline, leaving g where that loop leaves it. The same
 * outputs in the same order, but from four interleaved copies of the generator, each
 * stepping four states at once (s_{k+4} = a⁴ s_k + c(1 + a + a² + a³)): the four 128-bit
 * multiplications of a round do not wait on each other, where one chain waits on each
 * (2.1 → 1.5 ns per row at n = 2000). Outputs drawn past the last one used are dropped. */
static inline void pcg_shuffle_u32_inline(sturdy_pcg64 *g, uint32_t *x, size_t m)
{
    if (m < 2)
        return;
    sturdy_u128 a = pcg_mult(), c = g->inc, a2 = a * a, a4 = a2 * a2;
    sturdy_u128 c4 = c * (1 + a + a2 + a2 * a);
    sturdy_u128 s0 = g->state * a + c, s1 = s0 * a + c, s2 = s1 * a + c, s3 = s2 * a + c;
    size_t i = m;
    for (;;) {
        PCG_SHUFFLE_STEP(s0);
        PCG_SHUFFLE_STEP(s1);
        PCG_SHUFFLE_STEP(s2);
        PCG_SHUFFLE_STEP(s3);
        s0 = s0 * a4 + c4;
        s1 = s1 * a4 + c4;
        s2 = s2 * a4 + c4;
        s3 = s3 * a4 + c4;
    }
}
#undef PCG_SHUFFLE_STEP

#endif
