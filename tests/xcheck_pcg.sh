#!/usr/bin/env bash
# xcheck_pcg.sh — sturdy's PCG-XSL-RR 128/64 against the PCG C++ reference library
# (O'Neill), Debian libpcg-cpp-dev: raw outputs of pcg64(seed, stream) and outputs after
# pcg64::advance(k), compared exactly, line by line, with build/tests/probe_pcg.
#
# Bounded integers are NOT compared: the reference's pcg64(bound) rejects by modulo
# ((r mod bound) after a threshold test), sturdy uses Lemire's multiply-and-reject, so no
# bound makes the two coincide (even for powers of two: low bits vs. top bits).
# tests/test_pcg.c checks the bounded integers, shuffles and signs by their properties.
#
# Prints "ok  ..." or "FAIL ..." per output and "N passed, N failed" last; exit 1 on any
# failure. A missing reference header or compiler is a failure, never a skip.
set -u
cd "$(dirname "$0")/.."
SOURCE="PCG C++ reference library (O'Neill), Debian libpcg-cpp-dev"
HEADER=/usr/include/pcg_random.hpp
PROBE="${STURDY_BUILD:-build}/tests/probe_pcg"
pass=0; fail=0

give_up() {
    echo "FAIL $1"
    echo "$pass passed, $((fail + 1)) failed"
    exit 1
}

[ -r "$HEADER" ] || give_up "reference header $HEADER missing: install libpcg-cpp-dev ($SOURCE)"
command -v g++ >/dev/null 2>&1 || give_up "g++ not found: cannot compile the $SOURCE check"
[ -x "$PROBE" ] || give_up "probe $PROBE not built (make test-bins)"

work=$(mktemp -d) || give_up "mktemp failed"
trap 'rm -rf "$work"' EXIT

# Cases: label kind numbers…, 128-bit values as hi lo (see tests/probe_pcg.c).
cat >"$work/cases.txt" <<'CASES'
s42_t54 raw 0 42 0 54 20
s0_t0 raw 0 0 0 0 20
s128bit_t1 raw 0x0123456789ABCDEF 0xFEDCBA9876543210 0 1 20
s12345_t2^64 raw 0 12345 1 0 20
s128bit_t2^127-1 raw 0xDEADBEEFCAFEBABE 0x0F1E2D3C4B5A6978 0x7FFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 20
smax_tmax raw 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 20
s7_t2^127 raw 0 7 0x8000000000000000 0 20
s7_t0 raw 0 7 0 0 20
for_seed20240101_permute_0 for 20240101 1 0 20
for_seed20240101_permute_7 for 20240101 1 7 20
for_seed20240101_bootstrap_7 for 20240101 2 7 20
for_seedmax_bootstrap_max for 0xFFFFFFFFFFFFFFFF 2 0xFFFFFFFFFFFFFFFF 20
s42_t54_adv0 adv 0 42 0 54 0 0 5
s42_t54_adv1 adv 0 42 0 54 0 1 5
s42_t54_adv19 adv 0 42 0 54 0 19 5
s42_t54_adv1000003 adv 0 42 0 54 0 1000003 5
s42_t54_adv2^64 adv 0 42 0 54 1 0 5
s128bit_t2^127-1_adv2^127+12345 adv 0xDEADBEEFCAFEBABE 0x0F1E2D3C4B5A6978 0x7FFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 0x8000000000000000 12345 5
s12345_t2^64_adv2^128-1 adv 0 12345 1 0 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 5
smax_tmax_advhuge adv 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 0xFFFFFFFFFFFFFFFF 0x9E3779B97F4A7C15 0xF39CC0605CEDC834 5
CASES

# The reference program: reads the same cases, prints "LABEL #k VALUE".
cat >"$work/ref.cpp" <<'CPP'
#include <pcg_random.hpp>
#include <cinttypes>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <iostream>
#include <sstream>
#include <string>

typedef pcg64::state_type u128; /* the reference's 128-bit integer */

static u128 join(uint64_t hi, uint64_t lo) { return (u128(hi) << 64) | lo; }

int main()
{
    std::string line;
    while (std::getline(std::cin, line)) {
        std::istringstream in(line);
        std::string label, kind, tok;
        uint64_t a[8];
        int count = 0;
        if (!(in >> label >> kind)) continue;
        while (count < 8 && in >> tok) a[count++] = std::strtoull(tok.c_str(), nullptr, 0);
        pcg64 rng;
        uint64_t n;
        if (kind == "raw" && count == 5) {
            rng = pcg64(join(a[0], a[1]), join(a[2], a[3]));
            n = a[4];
        } else if (kind == "adv" && count == 7) {
            rng = pcg64(join(a[0], a[1]), join(a[2], a[3]));
            rng.advance(join(a[4], a[5]));
            n = a[6];
        } else if (kind == "for" && count == 4) {
            rng = pcg64(u128(a[0]), join(a[1], a[2])); /* stream = purpose·2^64 + index */
            n = a[3];
        } else {
            std::fprintf(stderr, "ref: bad case: %s\n", line.c_str());
            return 2;
        }
        for (uint64_t k = 1; k <= n; k++)
            std::printf("%s #%" PRIu64 " %" PRIu64 "\n", label.c_str(), k, uint64_t(rng()));
    }
    return 0;
}
CPP

g++ -std=c++11 -O1 -o "$work/ref" "$work/ref.cpp" 2>"$work/cxx.log" ||
    give_up "the $SOURCE check program does not compile: $(head -c 400 "$work/cxx.log" | tr '\n' ' ')"
"$work/ref" <"$work/cases.txt" >"$work/expected.txt" || give_up "the $SOURCE check program failed"
"$PROBE" <"$work/cases.txt" >"$work/observed.txt" || give_up "$PROBE failed on the cases"

ne=$(wc -l <"$work/expected.txt"); no=$(wc -l <"$work/observed.txt")
if [ "$ne" -ne "$no" ] || [ "$ne" -eq 0 ]; then
    echo "FAIL line count: observed $no expected $ne ($SOURCE)"; fail=$((fail + 1))
fi

while IFS='|' read -r exp obs; do
    read -r elabel ek ev <<<"$exp"
    read -r olabel ok ov <<<"$obs"
    what="$elabel $ek: observed ${ov:-none} expected ${ev:-none} (exact; $SOURCE)"
    if [ -n "$ev" ] && [ "$elabel" = "$olabel" ] && [ "$ek" = "$ok" ] && [ "$ev" = "$ov" ]; then
        echo "ok   $what"; pass=$((pass + 1))
    else
        echo "FAIL $what"; fail=$((fail + 1))
    fi
done < <(paste -d'|' "$work/expected.txt" "$work/observed.txt")

echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
