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
echo "load average $(cut -d' ' -f1-3 /proc/loadavg) after the run"
exit $status
