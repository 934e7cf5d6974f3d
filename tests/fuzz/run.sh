#!/usr/bin/env bash
# run.sh — what `make fuzz` runs: every harness in build-fuzz/ for FUZZ_SECONDS (default
# 600) from its seed corpus (tests/fuzz/corpus/<harness>/) plus the inputs kept by earlier
# runs (build-fuzz/corpus/<harness>/, where new ones go), after replaying the crash
# regressions (tests/fuzz/regressions/<harness>/). A crash leaves its input as
# build-fuzz/crash-<harness>-*; copy it to tests/fuzz/regressions/<harness>/ with the fix.
# Prints "N passed, N failed" last (one per harness).
set -u
cd "$(dirname "$0")/../.."
SECS=${FUZZ_SECONDS:-600}
B=${FUZZ_BUILD:-build-fuzz}
pass=0; fail=0
for bin in "$B"/fuzz_*; do
    [ -x "$bin" ] || continue
    h=${bin##*/fuzz_}
    mkdir -p "$B/corpus/$h"
    reg=(tests/fuzz/regressions/"$h"/*)
    if [ -e "${reg[0]}" ] && ! "$bin" -runs=0 "${reg[@]}" >"$B/$h.regress.log" 2>&1; then
        echo "FAIL $h: a regression input crashes again (see $B/$h.regress.log)"
        fail=$((fail + 1)); continue
    fi
    max_len=8192; [ "$h" = read ] && max_len=65536
    echo "fuzzing $h for $SECS s"
    if "$bin" -max_total_time="$SECS" -max_len=$max_len -timeout=60 -rss_limit_mb=4096 \
           -print_final_stats=1 -artifact_prefix="$B/crash-$h-" \
           "$B/corpus/$h" "tests/fuzz/corpus/$h" >"$B/$h.log" 2>&1; then
        echo "ok   $h: $(grep -o 'stat::number_of_executed_units: [0-9]*' "$B/$h.log" | awk '{print $2}') inputs, no crash"
        pass=$((pass + 1))
    else
        echo "FAIL $h: see $B/$h.log; the input is $(ls "$B"/crash-"$h"-* "$B"/leak-"$h"-* "$B"/timeout-"$h"-* 2>/dev/null | head -n 1)"
        tail -n 30 "$B/$h.log"
        fail=$((fail + 1))
    fi
done
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
