/* pcg.c — PCG-XSL-RR 128/64 with selectable stream (O'Neill 2014), jump-ahead (Brown
 * 1994), unbiased bounded integers (Lemire 2019), unit doubles, shuffles and signs. */
#include "resampling/pcg_inline.h"

/* 2^−53: turns the top 53 bits of an output into a double in [0, 1) exactly. */
#define PCG_UNIT_SCALE (1.0 / 9007199254740992.0)

void sturdy_pcg_seed(sturdy_pcg64 *g, uint64_t seed_hi, uint64_t seed_lo,
                     uint64_t stream_hi, uint64_t stream_lo)
{
    sturdy_u128 seed = ((sturdy_u128)seed_hi << 64) | seed_lo;
    sturdy_u128 stream = ((sturdy_u128)stream_hi << 64) | stream_lo;
    g->state = 0;
    g->inc = (stream << 1) | 1u;
    pcg_step(g);
    g->state += seed;
    pcg_step(g);
}

uint64_t sturdy_pcg_next(sturdy_pcg64 *g)
{
    return pcg_next_inline(g);
}

/* Brown (1994): square the affine map x → m·x + c repeatedly and compose the powers
 * named by the bits of delta. */
void sturdy_pcg_advance(sturdy_pcg64 *g, sturdy_u128 delta)
{
    sturdy_u128 cur_mult = pcg_mult(), cur_plus = g->inc;
    sturdy_u128 acc_mult = 1, acc_plus = 0;
    while (delta > 0) {
        if (delta & 1u) {
            acc_mult *= cur_mult;
            acc_plus = acc_plus * cur_mult + cur_plus;
        }
        cur_plus = (cur_mult + 1u) * cur_plus;
        cur_mult *= cur_mult;
        delta >>= 1;
    }
    g->state = acc_mult * g->state + acc_plus;
}

uint64_t sturdy_pcg_bounded(sturdy_pcg64 *g, uint64_t bound)
{
    return pcg_bounded_inline(g, bound);
}

double sturdy_pcg_unit(sturdy_pcg64 *g)
{
    return (double)(sturdy_pcg_next(g) >> 11) * PCG_UNIT_SCALE;
}

void sturdy_pcg_shuffle(sturdy_pcg64 *g, size_t *idx, size_t n)
{
    for (size_t i = n; i > 1; i--) { /* position i − 1 takes one of idx[0 .. i−1] */
        size_t j = (size_t)sturdy_pcg_bounded(g, (uint64_t)i);
        size_t t = idx[i - 1];
        idx[i - 1] = idx[j];
        idx[j] = t;
    }
}

void sturdy_pcg_signs(sturdy_pcg64 *g, signed char *s, size_t n)
{
    uint64_t bits = 0;
    for (size_t k = 0; k < n; k++) {
        if (k % 64 == 0) bits = sturdy_pcg_next(g);
        s[k] = (bits & 1u) ? 1 : -1;
        bits >>= 1;
    }
}

void sturdy_pcg_for(sturdy_pcg64 *g, uint64_t seed, unsigned purpose, uint64_t index)
{
    sturdy_pcg_seed(g, 0, seed, (uint64_t)purpose, index);
}
