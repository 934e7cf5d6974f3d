#!/usr/bin/env bash
# Runs every test: C unit tests (build/tests/test_*), then the cross-check scripts
# (tests/xcheck_*.py with Debian's python3, tests/xcheck_*.sh). Each prints
# "N passed, N failed" last; this script adds them up and prints the total last.
# STURDY_BIN / STURDY_BUILD choose the binary and build folder (the sanitizer run
# sets them); STURDY_QUICK=1 asks the slow property tests for their short tier.
# STURDY_TEST_JOBS tests run at once (default: the number of cores; every test keeps its
# files in its own temporary folder). Each test's output is printed as one block when it
# ends, with its wall and CPU time; the slowest come first in the start order, so that
# the last ones to finish are short.
set -u
cd "$(dirname "$0")/.."
export STURDY_BIN="${STURDY_BIN:-./sturdy}"
export STURDY_BUILD="${STURDY_BUILD:-build}"
export PYTHON=/usr/bin/python3      # Debian's, where python3-scipy & co. are installed
jobs="${STURDY_TEST_JOBS:-$(nproc 2>/dev/null || echo 1)}"
[ "$jobs" -ge 1 ] 2>/dev/null || jobs=1
total_pass=0; total_fail=0; broken=""
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

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

# start_one NAME CMD...: runs the test in the background; its log, exit status, CPU and
# wall time land in $work/NAME.*, and $work/NAME.done last
start_one() {
    local name="$1"; shift
    (
        t0=${EPOCHREALTIME/[.,]/}
        # in a subshell, whose `times` then gives the test's CPU time alone
        ( "$@" >"$work/$name.log" 2>&1; rc=$?; times >"$work/$name.cpu"; exit $rc )
        echo $? >"$work/$name.rc"
        echo $(( ${EPOCHREALTIME/[.,]/} - t0 )) >"$work/$name.wall"
        : >"$work/$name.done"
    ) &
}

# report NAME: prints a finished test's block and adds its counts
report() {
    local name="$1" log="$work/$1.log"
    local rc; rc=$(cat "$work/$name.rc")
    local us; us=$(cat "$work/$name.wall")
    local cpu; cpu=$(cpu_ms "$work/$name.cpu")
    echo "=== $name"
    grep -v '^ok  ' "$log"
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
}

# The queue: name and command, one test per entry. The long ones first (measured CPU
# time, README "Tests"), then the rest in name order.
names=(); cmds=()
add() { names+=("$1"); shift; cmds+=("$(printf '%q ' "$@")"); }
first="test_alloc_fail xcheck_coverage.py xcheck_batch.sh xcheck_advice_rates.py"
for f in $first; do
    case $f in
    test_*) [ -x "$STURDY_BUILD/tests/$f" ] && add "$f" "$STURDY_BUILD/tests/$f" ;;
    *.py) [ -e "tests/$f" ] && add "$f" "$PYTHON" "tests/$f" ;;
    *.sh) [ -e "tests/$f" ] && add "$f" bash "tests/$f" ;;
    esac
done
queued() { case " $first " in *" $1 "*) return 0 ;; esac; return 1; }
for t in "$STURDY_BUILD"/tests/test_*; do
    [ -x "$t" ] && ! queued "$(basename "$t")" && add "$(basename "$t")" "$t"
done
for t in tests/xcheck_*.py; do
    [ -e "$t" ] && ! queued "$(basename "$t")" && add "$(basename "$t")" "$PYTHON" "$t"
done
for t in tests/xcheck_*.sh; do
    [ -e "$t" ] && ! queued "$(basename "$t")" && add "$(basename "$t")" bash "$t"
done

running=()
reap() {   # reports every running test that has finished; keeps the others
    local still=() n
    for n in "${running[@]}"; do
        if [ -e "$work/$n.done" ]; then report "$n"; else still+=("$n"); fi
    done
    running=("${still[@]+"${still[@]}"}")
}
for i in "${!names[@]}"; do
    while [ "${#running[@]}" -ge "$jobs" ]; do
        wait -n 2>/dev/null || sleep 0.2
        reap
    done
    eval "start_one \"\${names[$i]}\" ${cmds[$i]}"
    running+=("${names[$i]}")
done
while [ "${#running[@]}" -gt 0 ]; do
    wait -n 2>/dev/null || sleep 0.2
    reap
done
[ -n "$broken" ] && echo "failing:$broken"
echo "$total_pass passed, $total_fail failed"
[ "$total_fail" = 0 ]
