/* test_pcg.c — properties of sturdy_pcg64: bounded integers, unit doubles, shuffles,
 * signs, jump-ahead and per-replicate streams. Exact agreement with the C++ reference
 * library is checked separately by tests/xcheck_pcg.sh. Fixed seeds throughout. */
#include <stdint.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>

#include "check.h"
#include "sturdy/pcg.h"
#include "resampling/pcg_inline.h"

/* Chi-square goodness-of-fit tests pass when p > CHISQ_P_MIN. Loose on purpose: with
 * fixed seeds the outcome never changes, and a wrong algorithm (wrong shift, off-by-one
 * range, modulo bias at large bounds) gives p far below 1e−6 at these sample sizes. */
#define CHISQ_P_MIN 1e-6
/* Draws per chi-square test. */
#define CHISQ_DRAWS 200000
/* Frequencies of events with probability 1/3 from NFREQ draws must land within
 * FREQ_TOL of 1/3: 0.02 is about 9 standard deviations (sd = √(2/9/NFREQ) ≈ 0.0021);
 * a biased method gives 1/2. */
#define NFREQ 50000
#define FREQ_TOL 0.02
#define SEED UINT64_C(20240917)

static int same_gen(const sturdy_pcg64 *a, const sturdy_pcg64 *b)
{
    return a->state == b->state && a->inc == b->inc;
}

/* Known answer: the first outputs of pcg64 with seed 42, stream 54, as printed by the
 * PCG C demo programs (O'Neill; quoted from memory, confirmed against Debian's
 * libpcg-cpp-dev by tests/xcheck_pcg.sh). */
static void test_known_answer(void)
{
    static const uint64_t expect[6] = {
        UINT64_C(0x86b1da1d72062b68), UINT64_C(0x1304aa46c9853d39),
        UINT64_C(0xa3670e9e0dd50358), UINT64_C(0xf9090e529a7dae00),
        UINT64_C(0xc85b9fd837996f2c), UINT64_C(0x606121f8e3919196)};
    sturdy_pcg64 g;
    int ok = 1;
    sturdy_pcg_seed(&g, 0, 42, 0, 54);
    for (int i = 0; i < 6; i++) ok &= sturdy_pcg_next(&g) == expect[i];
    CHECK("seed 42 stream 54: first 6 outputs match the published PCG demo output", ok);
}

static void test_bounded_range_and_chisq(void)
{
    static const uint64_t bounds[] = {1, 2, 3, 5, 7, 10, 17, 100};
    char name[200];
    for (size_t t = 0; t < sizeof bounds / sizeof bounds[0]; t++) {
        uint64_t b = bounds[t];
        long counts[100] = {0};
        int in_range = 1;
        sturdy_pcg64 g;
        sturdy_pcg_seed(&g, 0, SEED, 0, b);
        for (long i = 0; i < CHISQ_DRAWS; i++) {
            uint64_t v = sturdy_pcg_bounded(&g, b);
            if (v >= b) in_range = 0; else counts[v]++;
        }
        snprintf(name, sizeof name, "bounded(%llu): %d draws all in [0, %llu)",
                 (unsigned long long)b, CHISQ_DRAWS, (unsigned long long)b);
        CHECK(name, in_range);
        if (b < 2) continue;
        double e = (double)CHISQ_DRAWS / (double)b, chi2 = 0;
        for (uint64_t v = 0; v < b; v++) chi2 += (counts[v] - e) * (counts[v] - e) / e;
        double p = gsl_cdf_chisq_Q(chi2, (double)(b - 1));
        snprintf(name, sizeof name,
                 "bounded(%llu) uniform: chi2 %.2f df %llu p %.3g > %.0e (GSL chi-square)",
                 (unsigned long long)b, chi2, (unsigned long long)(b - 1), p, CHISQ_P_MIN);
        CHECK(name, p > CHISQ_P_MIN);
    }
}

/* bound = 3·2^62: multiply-and-shift without rejection maps two outputs onto every
 * value ≡ 0 (mod 3) and one onto the others, so P(v ≡ 0 mod 3) would be 1/2; plain
 * modulo would give P(v < 2^62) = 1/2. Lemire's rejection makes both 1/3. */
static void test_bounded_large_bound(void)
{
    const uint64_t b = UINT64_C(3) << 62;
    long mod3 = 0, low = 0;
    int in_range = 1;
    sturdy_pcg64 g;
    sturdy_pcg_seed(&g, 0, SEED, 0, 99);
    for (long i = 0; i < NFREQ; i++) {
        uint64_t v = sturdy_pcg_bounded(&g, b);
        in_range &= v < b;
        mod3 += v % 3 == 0;
        low += v < (UINT64_C(1) << 62);
    }
    CHECK("bounded(3*2^62): all in range", in_range);
    CHECK_ABS("bounded(3*2^62): P(v mod 3 = 0) (no multiply-shift bias)",
              (double)mod3 / NFREQ, 1.0 / 3.0, FREQ_TOL);
    CHECK_ABS("bounded(3*2^62): P(v < 2^62) (no modulo bias)", (double)low / NFREQ,
              1.0 / 3.0, FREQ_TOL);
}

/* For bound 2^k the threshold is 0 and Lemire's result is the top k bits of one
 * output (Lemire 2019); bound 1 gives 0 and still consumes one output. */
static void test_bounded_power_of_two(void)
{
    char name[160];
    for (int k = 0; k <= 63; k += 7) {
        sturdy_pcg64 g, twin;
        int ok = 1;
        sturdy_pcg_seed(&g, 1, SEED, 2, (uint64_t)k);
        twin = g;
        for (int i = 0; i < 1000; i++) {
            uint64_t raw = sturdy_pcg_next(&twin);
            uint64_t want = k == 0 ? 0 : raw >> (64 - k);
            ok &= sturdy_pcg_bounded(&g, UINT64_C(1) << k) == want;
        }
        ok &= same_gen(&g, &twin);
        snprintf(name, sizeof name, "bounded(2^%d) = top %d bits of one output, 1000 draws",
                 k, k);
        CHECK(name, ok);
    }
    sturdy_pcg64 g, twin;
    sturdy_pcg_seed(&g, 0, SEED, 0, 5);
    twin = g;
    (void)sturdy_pcg_next(&twin);
    CHECK_INT("bounded(0) returns 0 (documented misuse)", sturdy_pcg_bounded(&g, 0), 0);
    CHECK("bounded(0) consumes exactly one output", same_gen(&g, &twin));
}

static void test_unit(void)
{
    sturdy_pcg64 g, twin;
    int in_range = 1, top53 = 1;
    double sum = 0;
    const long n = 100000;
    sturdy_pcg_seed(&g, 0, SEED, 0, 11);
    twin = g;
    for (long i = 0; i < n; i++) {
        double u = sturdy_pcg_unit(&g);
        uint64_t raw = sturdy_pcg_next(&twin);
        in_range &= u >= 0.0 && u < 1.0;
        top53 &= u == (double)(raw >> 11) / 9007199254740992.0;
        sum += u;
    }
    CHECK("unit(): 100000 draws in [0, 1)", in_range);
    CHECK("unit() = (output >> 11) * 2^-53", top53);
    /* sd of the mean = √(1/12/n) ≈ 0.00091; 0.005 is about 5.5 sd. */
    CHECK_ABS("unit() mean", sum / n, 0.5, 0.005);
}

static void test_shuffle(void)
{
    enum { N = 1000, M = 5 };
    static size_t idx[N];
    static int seen[N];
    sturdy_pcg64 g, twin;
    int perm = 1, moved = 0;
    sturdy_pcg_seed(&g, 0, SEED, 0, 21);
    for (size_t i = 0; i < N; i++) idx[i] = i;
    sturdy_pcg_shuffle(&g, idx, N);
    for (size_t i = 0; i < N; i++) {
        if (idx[i] >= N || seen[idx[i]]++) perm = 0;
        moved += idx[i] != i;
    }
    CHECK("shuffle(1000) is a permutation of 0..999", perm);
    CHECK("shuffle(1000) moved most elements (> 990)", moved > 990);

    /* n = 0 and n = 1 draw nothing. */
    size_t one = 7;
    twin = g;
    sturdy_pcg_shuffle(&g, NULL, 0);
    sturdy_pcg_shuffle(&g, &one, 1);
    CHECK("shuffle of 0 or 1 items consumes nothing and keeps the item",
          same_gen(&g, &twin) && one == 7);

    /* Order of the draws, as specified: for i = n-1 down to 1, j = bounded(i+1), swap
     * positions i and j. Replayed on a twin generator for a few short lists. */
    int order_ok = 1;
    for (size_t n = 2; n <= 20; n++) {
        size_t got[20], want[20], t;
        for (size_t i = 0; i < n; i++) got[i] = want[i] = 100 + i;
        twin = g;
        for (size_t i = n - 1; i >= 1; i--) {
            size_t j = (size_t)sturdy_pcg_bounded(&twin, (uint64_t)i + 1);
            t = want[i]; want[i] = want[j]; want[j] = t;
        }
        sturdy_pcg_shuffle(&g, got, n);
        for (size_t i = 0; i < n; i++) order_ok &= got[i] == want[i];
        order_ok &= same_gen(&g, &twin);
    }
    CHECK("shuffle(n), n = 2..20: j = bounded(i+1) for i = n-1 down to 1 (Durstenfeld 1964)",
          order_ok);

    /* The rearrangements' shuffle of 32-bit labels (four interleaved generator copies,
     * pcg_inline.h) against this one-output-at-a-time shuffle: the same result and the
     * generator left in the same state, for every length 0..300 (so every position of
     * the last output in a round of four) over 40 streams each. */
    int inter_ok = 1;
    for (size_t n = 0; n <= 300 && inter_ok; n++)
        for (uint64_t b = 0; b < 40; b++) {
            static size_t want[300];
            static uint32_t got[300];
            sturdy_pcg64 one, four;
            sturdy_pcg_for(&one, 2026, 1, b * 1000 + n);
            four = one;
            for (size_t i = 0; i < n; i++) want[i] = got[i] = (uint32_t)(7 * i % 301);
            sturdy_pcg_shuffle(&one, want, n);
            pcg_shuffle_u32_inline(&four, got, n);
            for (size_t i = 0; i < n; i++) inter_ok &= got[i] == want[i];
            inter_ok &= same_gen(&one, &four);
        }
    CHECK("shuffle of 32-bit labels from four interleaved generators = the plain shuffle, "
          "n = 0..300, 40 streams each: same order, same generator state after", inter_ok);

    /* All 5! = 120 orders of 5 items equally likely. */
    static long counts[120];
    const long reps = 120000;
    for (long r = 0; r < reps; r++) {
        size_t s[M] = {0, 1, 2, 3, 4};
        int code = 0;
        sturdy_pcg_shuffle(&g, s, M);
        /* Lehmer code of the permutation: a number in 0..119 */
        for (int i = 0; i < M; i++) {
            int smaller = 0;
            for (int k = i + 1; k < M; k++) smaller += s[k] < s[i];
            code = code * (M - i) + smaller;
        }
        counts[code]++;
    }
    double e = (double)reps / 120.0, chi2 = 0;
    for (int c = 0; c < 120; c++) chi2 += (counts[c] - e) * (counts[c] - e) / e;
    double p = gsl_cdf_chisq_Q(chi2, 119.0);
    char name[160];
    snprintf(name, sizeof name,
             "shuffle(5): all 120 orders uniform, chi2 %.1f df 119 p %.3g > %.0e", chi2, p,
             CHISQ_P_MIN);
    CHECK(name, p > CHISQ_P_MIN);
}

static void test_signs(void)
{
    enum { N = 1000 };
    signed char s[N];
    sturdy_pcg64 g, twin;
    int bits_ok = 1, values_ok = 1;
    long sum = 0;
    sturdy_pcg_seed(&g, 0, SEED, 0, 31);
    twin = g;
    sturdy_pcg_signs(&g, s, N);
    uint64_t raw = 0;
    for (int k = 0; k < N; k++) {
        if (k % 64 == 0) raw = sturdy_pcg_next(&twin);
        values_ok &= s[k] == 1 || s[k] == -1;
        bits_ok &= s[k] == (((raw >> (k % 64)) & 1u) ? 1 : -1);
        sum += s[k];
    }
    CHECK("signs: every value is +1 or -1", values_ok);
    CHECK("signs: sign k is bit k mod 64 (LSB first) of output k/64", bits_ok);
    CHECK("signs(1000) consumes ceil(1000/64) = 16 outputs", same_gen(&g, &twin));
    /* sd of the sum = √N ≈ 31.6; 160 is about 5 sd. */
    CHECK("signs(1000): |sum| < 160 (balanced)", labs(sum) < 160);
    twin = g;
    sturdy_pcg_signs(&g, s, 0);
    CHECK("signs(0) consumes nothing", same_gen(&g, &twin));
}

static void test_advance(void)
{
    const sturdy_u128 big_a = ((sturdy_u128)UINT64_C(0x9E3779B97F4A7C15) << 64) | 12345u;
    const sturdy_u128 big_b = ((sturdy_u128)UINT64_C(0xF39CC0605CEDC834) << 64) | 999u;
    const sturdy_u128 pairs[][2] = {{0, 0}, {1, 0}, {3, 7}, {1000, 24}, {big_a, 17},
                                    {big_a, big_b}}; /* the last wraps modulo 2^128 */
    char name[160];
    for (size_t t = 0; t < sizeof pairs / sizeof pairs[0]; t++) {
        sturdy_pcg64 g, h;
        sturdy_pcg_seed(&g, UINT64_C(0xABCDEF), SEED, UINT64_C(0x1234), 77);
        h = g;
        sturdy_pcg_advance(&g, pairs[t][0]);
        sturdy_pcg_advance(&g, pairs[t][1]);
        sturdy_pcg_advance(&h, pairs[t][0] + pairs[t][1]);
        snprintf(name, sizeof name, "advance(a) then advance(b) = advance(a+b), pair %zu", t);
        CHECK(name, same_gen(&g, &h));
    }
    sturdy_pcg64 g, h;
    sturdy_pcg_seed(&g, 0, SEED, 0, 3);
    h = g;
    for (int i = 0; i < 1000; i++) (void)sturdy_pcg_next(&g);
    sturdy_pcg_advance(&h, 1000);
    CHECK("advance(1000) = 1000 calls of next", same_gen(&g, &h));
    sturdy_pcg_advance(&h, ~(sturdy_u128)0); /* 2^128 − 1 steps: one step back */
    sturdy_pcg_advance(&g, ~(sturdy_u128)0 - 999u);
    sturdy_pcg64 start;
    sturdy_pcg_seed(&start, 0, SEED, 0, 3);
    sturdy_pcg_advance(&start, 999);
    CHECK("advance(2^128-1) steps back by one", same_gen(&h, &start));
    sturdy_pcg_seed(&start, 0, SEED, 0, 3);
    CHECK("advance(2^128-1000) after 1000 steps returns to the start", same_gen(&g, &start));
}

static void test_for(void)
{
    enum { N = 1000 };
    static uint64_t a[N], b[N];
    sturdy_pcg64 g, h, s;
    sturdy_pcg_for(&g, SEED, STURDY_STREAM_PERMUTE, 5);
    sturdy_pcg_for(&h, SEED, STURDY_STREAM_PERMUTE, 5);
    sturdy_pcg_seed(&s, 0, SEED, STURDY_STREAM_PERMUTE, 5);
    CHECK("pcg_for is reproducible", same_gen(&g, &h));
    CHECK("pcg_for(seed, p, i) = seed(0, seed, p, i)", same_gen(&g, &s));

    static const struct { unsigned p; uint64_t i; } other[] = {
        {STURDY_STREAM_PERMUTE, 6}, {STURDY_STREAM_PERMUTE, 0},
        {STURDY_STREAM_BOOTSTRAP, 5}, {STURDY_STREAM_PERMUTE, UINT64_C(5) | (UINT64_C(1) << 63)}};
    for (int i = 0; i < N; i++) a[i] = sturdy_pcg_next(&g);
    for (size_t t = 0; t < sizeof other / sizeof other[0]; t++) {
        char name[200];
        sturdy_pcg_for(&h, SEED, other[t].p, other[t].i);
        for (int i = 0; i < N; i++) b[i] = sturdy_pcg_next(&h);
        /* A shifted copy of the same sequence within 1000 steps would share values; two
         * independent 1000-draw sets share one with probability ~ 1e6 / 2^64. */
        int shared = 0;
        for (int i = 0; i < N && !shared; i++)
            for (int k = 0; k < N; k++)
                if (a[i] == b[k]) { shared = 1; break; }
        snprintf(name, sizeof name,
                 "pcg_for(permute, 5) and pcg_for(purpose %u, index %llu) share no output "
                 "in their first %d",
                 other[t].p, (unsigned long long)other[t].i, N);
        CHECK(name, !shared);
    }
    sturdy_pcg_for(&h, SEED + 1, STURDY_STREAM_PERMUTE, 5);
    CHECK("pcg_for: another seed gives another first output",
          sturdy_pcg_next(&h) != a[0]);
}

int main(void)
{
    test_known_answer();
    test_bounded_range_and_chisq();
    test_bounded_large_bound();
    test_bounded_power_of_two();
    test_unit();
    test_shuffle();
    test_signs();
    test_advance();
    test_for();
    return check_done();
}
