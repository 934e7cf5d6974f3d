/* pcg.h — PCG random numbers (O'Neill 2014, "PCG: A family of simple fast
 * space-efficient statistically good algorithms for random number generation").
 *
 * sturdy_pcg64 is PCG-XSL-RR 128/64 (the C++ library's pcg64 / pcg_engines::
 * setseq_xsl_rr_128_64): a 128-bit LCG, multiplier 0x2360ED051FC65DA4_4385DF649FCCF645,
 * with a selectable odd increment (the stream) and a 64-bit output. Each call steps the
 * LCG first and then permutes the new state (xor the two 64-bit halves, rotate right by
 * the top 6 bits), as the reference does for 128-bit state. Seeding follows the
 * reference library: state = 0, inc = (stream << 1) | 1, step, state += seed, step.
 * Jump-ahead by any distance in O(log distance) (Brown 1994, "Random number generation
 * with arbitrary strides"). Checked output for output against the C++ reference library
 * by tests/xcheck_pcg.sh.
 *
 * A sturdy_pcg64 is a plain value: copy it to fork an identical stream; it needs no
 * free. None of these functions allocate or fail. One generator per thread.
 *
 * Reproducibility rule of the project: the generator for rearrangement or replicate b is
 * sturdy_pcg_for(seed, purpose, b) and depends on nothing else. */
#ifndef STURDY_PCG_H
#define STURDY_PCG_H

#include <stddef.h>
#include <stdint.h>

/* GCC/Clang 128-bit integer; __extension__ keeps -Wpedantic quiet. */
__extension__ typedef unsigned __int128 sturdy_u128;

typedef struct {
    sturdy_u128 state;
    sturdy_u128 inc; /* always odd: (stream << 1) | 1 */
} sturdy_pcg64;

/* Seed as pcg64(seed, stream) of the C++ reference library (128-bit seed and stream
 * given as two 64-bit halves each: value = hi·2^64 + lo). The top bit of the stream is
 * shifted out, as in the reference, so streams s and s + 2^127 coincide. */
void sturdy_pcg_seed(sturdy_pcg64 *g, uint64_t seed_hi, uint64_t seed_lo,
                     uint64_t stream_hi, uint64_t stream_lo);

/* Next 64-bit output (as pcg64::operator()()). */
uint64_t sturdy_pcg_next(sturdy_pcg64 *g);

/* Advance by `delta` steps modulo 2^128 (as pcg64::advance); delta = 2^128 − k steps
 * back by k. */
void sturdy_pcg_advance(sturdy_pcg64 *g, sturdy_u128 delta);

/* Uniform integer in [0, bound), unbiased, by multiply-and-reject (Lemire 2019, "Fast
 * random integer generation in an interval", ACM TOMACS 29:3): the result is the high
 * half of output·bound, redrawn while the low half is below (2^64 − bound) mod bound.
 * Consumes one output, occasionally more. For a power of two 2^k it is the top k bits of
 * one output. bound must be ≥ 1; bound 0 returns 0 (after consuming one output). Note:
 * the C++ reference's pcg64(bound) uses a different (modulo) rejection method and so
 * gives different values. */
uint64_t sturdy_pcg_bounded(sturdy_pcg64 *g, uint64_t bound);

/* Uniform double in [0, 1): the top 53 bits of one output times 2^−53. */
double sturdy_pcg_unit(sturdy_pcg64 *g);

/* Fisher–Yates shuffle of idx[0..n) (Durstenfeld 1964): for i from n−1 down to 1,
 * j = sturdy_pcg_bounded(g, i + 1), swap idx[i] and idx[j]. n ≤ 1 consumes nothing. */
void sturdy_pcg_shuffle(sturdy_pcg64 *g, size_t *idx, size_t n);

/* Rademacher signs s[0..n) ∈ {−1, +1}, one bit each: sign k is bit (k mod 64), counted
 * from the least significant bit, of output ⌊k/64⌋ since the call; bit 1 gives +1, bit 0
 * gives −1. Consumes ⌈n/64⌉ outputs; unused bits of the last one are dropped. */
void sturdy_pcg_signs(sturdy_pcg64 *g, signed char *s, size_t n);

/* Purposes keep the permutation and bootstrap streams of one seed apart. */
enum { STURDY_STREAM_PERMUTE = 1, STURDY_STREAM_BOOTSTRAP = 2, STURDY_STREAM_WILD_TEST = 3 };

/* The generator of rearrangement/replicate `index` for `purpose`: seed = `seed` (high
 * half 0), stream = purpose·2^64 + index, i.e. sturdy_pcg_seed(g, 0, seed, purpose,
 * index). Depends only on its arguments. */
void sturdy_pcg_for(sturdy_pcg64 *g, uint64_t seed, unsigned purpose, uint64_t index);

#endif
