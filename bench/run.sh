#!/usr/bin/env bash
# run.sh — what `make bench` runs: writes the benchmark designs, times sturdy (one thread
# and all cores), the vectorised numpy baseline and the base-R refit loop on the same
# files with the same B, checks that their p-values agree, prints the table and the
# performance targets, then the callgrind instruction count (the regression baseline).
# STURDY_BIN chooses the binary (default ./sturdy). Takes about 4 minutes on 2 cores.
set -eu
cd "$(dirname "$0")/.."
export STURDY_BIN="${STURDY_BIN:-./sturdy}"
PY=/usr/bin/python3        # Debian's, with numpy (python3 on PATH may lack it)
OUT=bench/out
[ -x "$STURDY_BIN" ] || { echo "FAIL no sturdy binary at $STURDY_BIN (run make first)"; exit 1; }
for tool in "$PY" Rscript valgrind; do
    command -v "$tool" >/dev/null || { echo "FAIL $tool not found (make deps-test installs it)"; exit 1; }
done
mkdir -p $OUT
echo "sturdy: $STURDY_BIN ($("$STURDY_BIN" --version 2>&1 | head -n 1)); $(nproc) cores;" \
     "load average $(cut -d' ' -f1-3 /proc/loadavg) before the run"
$PY bench/gen_designs.py > $OUT/designs.txt
status=0
$PY bench/measure.py "$STURDY_BIN" $OUT/designs.txt $OUT || status=$?
echo
bash bench/callgrind.sh || status=$?
# BENCH_ALL=1: also the two targets of issue 17 that need runs of their own, so that one
# run reports every target (about 10 more minutes on 2 cores)
if [ "${BENCH_ALL:-0}" = 1 ]; then
    echo
    echo "== f3_200k, B=999, one thread: the cell-count path against the gather path, which is"
    echo "   what the release before it ran (STURDY_PERM_PATH=gather; target >= 3x)"
    printf '#!/bin/sh\nSTURDY_PERM_PATH=gather exec "%s" "$@"\n' "$(realpath "$STURDY_BIN")" \
        > $OUT/sturdy_gather.sh
    chmod +x $OUT/sturdy_gather.sh
    RUNS=${CELLS_RUNS:-3} bash bench/cells.sh $OUT/sturdy_gather.sh "$STURDY_BIN" f3_200k ||
        status=$?
    echo
    echo "== a batch of 50 null analyses (n = 200, 3 factors) with and without --stop-early"
    echo "   (target >= 10x less CPU)"
    STURDY_BIN="$STURDY_BIN" REPS=3 TAGS=lean bash bench/stop_early.sh || status=$?
fi
echo "load average $(cut -d' ' -f1-3 /proc/loadavg) after the run"
exit $status
