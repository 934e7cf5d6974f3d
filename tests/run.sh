#!/usr/bin/env bash
# Runs every test: C unit tests (build/tests/test_*), then the cross-check scripts
# (tests/xcheck_*.py with Debian's python3, tests/xcheck_*.sh). Each prints
# "N passed, N failed" last; this script adds them up and prints the total last.
# STURDY_BIN / STURDY_BUILD choose the binary and build folder (the sanitizer run
# sets them); STURDY_QUICK=1 asks the slow property tests for their short tier.
set -u
cd "$(dirname "$0")/.."
export STURDY_BIN="${STURDY_BIN:-./sturdy}"
export STURDY_BUILD="${STURDY_BUILD:-build}"
export PYTHON=/usr/bin/python3      # Debian's, where python3-scipy & co. are installed
total_pass=0; total_fail=0; broken=""
# CPU time (user + system, ms) from the last line of `times` (the children's)
cpu_ms() {
    local line; line=$(tail -n 1 "$1")
    local u=${line%% *} s=${line##* }
    echo $(( $(to_ms "$u") + $(to_ms "$s") ))
}
to_ms() {   # 1m2.345s -> 62345
    local m=${1%%m*} rest=${1#*m}; rest=${rest%s}
    local sec=${rest%%[.,]*} frac=${rest#*[.,]}
    echo $(( m * 60000 + 10#$sec * 1000 + 10#${frac:0:3} ))
}
run_one() {
    local name="$1"; shift
    local log; log=$(mktemp)
    echo "=== $name"
    local t0=${EPOCHREALTIME/[.,]/} tf; tf=$(mktemp)
    # in a subshell, whose `times` then gives the test's CPU time alone
    ( "$@" >"$log" 2>&1; rc=$?; times >"$tf"; exit $rc ); local rc=$?
    grep -v '^ok  ' "$log"
    local us=$(( ${EPOCHREALTIME/[.,]/} - t0 ))
    local cpu; cpu=$(cpu_ms "$tf"); rm -f "$tf"
    printf '    (%s: %d.%d s wall, %d.%d s CPU)\n' "$name" $((us / 1000000)) $((us / 100000 % 10)) \
        $((cpu / 1000)) $((cpu / 100 % 10))
    local last; last=$(grep -E '^[0-9]+ passed, [0-9]+ failed' "$log" | tail -n 1)
    if [ -z "$last" ]; then
        echo "!!! $name printed no summary (exit $rc)"; total_fail=$((total_fail + 1)); broken="$broken $name"
    else
        local p f; p=${last%% passed*}; f=${last#*passed, }; f=${f%% failed*}
        total_pass=$((total_pass + p)); total_fail=$((total_fail + f))
        if [ "$rc" != 0 ] && [ "$f" = 0 ]; then total_fail=$((total_fail + 1)); broken="$broken $name"; fi
        [ "$f" != 0 ] && broken="$broken $name"
    fi
    rm -f "$log"
}
for t in "$STURDY_BUILD"/tests/test_*; do
    [ -x "$t" ] && run_one "$(basename "$t")" "$t"
done
for t in tests/xcheck_*.py; do
    [ -e "$t" ] && run_one "$(basename "$t")" "$PYTHON" "$t"
done
for t in tests/xcheck_*.sh; do
    [ -e "$t" ] && run_one "$(basename "$t")" bash "$t"
done
[ -n "$broken" ] && echo "failing:$broken"
echo "$total_pass passed, $total_fail failed"
[ "$total_fail" = 0 ]
