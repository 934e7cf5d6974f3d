#!/usr/bin/env bash
# xcheck_fuzz.sh — the libFuzzer harnesses (tests/fuzz/, built by `make fuzz-bins` into
# build-fuzz/ with ASan and UBSan): every seed and every kept crash input
# (tests/fuzz/regressions/<harness>/) replayed, then a short fuzzing run of each harness
# (FUZZ_CHECK_SECONDS, default 20 s; 5 s under STURDY_QUICK) from its seed corpus into
# a temporary folder. `make fuzz` is the long run (FUZZ_SECONDS, 600 s per harness).
# Source of the expectations: nothing the library is given may crash it, read out of
# bounds, overflow or leak (a status other than OK is an answer).
set -u
cd "$(dirname "$0")/.."
pass=0; fail=0
ok()  { pass=$((pass + 1)); echo "ok   $*"; }
bad() { fail=$((fail + 1)); echo "FAIL $*"; }
B=${FUZZ_BUILD:-build-fuzz}
SECS=${FUZZ_CHECK_SECONDS:-20}
[ "${STURDY_QUICK:-}" = 1 ] && SECS=5
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
for h in analysis read; do
    bin="$B/fuzz_$h"
    if [ ! -x "$bin" ]; then
        bad "$bin is not built (make fuzz-bins; needs clang and libomp-dev)"
        continue
    fi
    inputs=(tests/fuzz/corpus/"$h"/* tests/fuzz/regressions/"$h"/*)
    files=()
    for f in "${inputs[@]}"; do [ -f "$f" ] && files+=("$f"); done
    if "$bin" -runs=0 "${files[@]}" >"$T/$h.replay" 2>&1; then
        ok "$h: ${#files[@]} seed and regression inputs replay clean"
    else
        bad "$h: a seed or regression input fails: $(grep -m1 -E 'ERROR|runtime error|abort' "$T/$h.replay")"
    fi
    mkdir -p "$T/corpus_$h"
    max_len=8192; [ "$h" = read ] && max_len=65536
    if "$bin" -max_total_time="$SECS" -max_len=$max_len -timeout=60 -rss_limit_mb=4096 \
           -print_final_stats=1 -artifact_prefix="$T/crash-" "$T/corpus_$h" \
           tests/fuzz/corpus/"$h" >"$T/$h.log" 2>&1; then
        ok "$h: fuzzed $SECS s, $(grep -o 'number_of_executed_units: [0-9]*' "$T/$h.log" | awk '{print $2}') inputs, no crash"
    else
        bad "$h: fuzzing found a failure: $(grep -m1 -E 'ERROR|runtime error' "$T/$h.log")"
        for c in "$T"/crash-*; do
            [ -e "$c" ] && echo "  input (base64): $(base64 -w0 "$c" | head -c 2000)"
        done
    fi
done
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
