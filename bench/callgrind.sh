#!/usr/bin/env bash
# callgrind.sh — instruction count of the permutation stage, the regression baseline.
# Counts instructions (valgrind --tool=callgrind) of `sturdy check` on the balanced
# 2×5×8 design (n = 2000, 7 terms) with -B $CG_B and with -B 0, one thread, no
# bootstrap, and prints (Ir(B) − Ir(0)) / (B · 7 · 2000): instructions per
# rearrangement·term·observation, then the hottest functions of the B run; and the
# set-up's own count (the -B 0 run: reading, fit, classical table, comparisons,
# diagnostics, sensitivity, intervals, output) against its baseline, with the inclusive
# cost of its stages.
# Instruction counts do not depend on the machine's load, unlike wall time.
# OpenBLAS is pinned to one thread and the Haswell kernel so the count is reproducible.
set -eu
cd "$(dirname "$0")/.."
STURDY="${STURDY_BIN:-./sturdy}"
CG_B="${CG_B:-999}"
BASELINE=11.96   # instructions per rearrangement·term·observation, measured 2026-12-01 (README)
SETUP_BASELINE=539749867     # instructions at -B 0, measured 2026-12-03 after LAPACK without LAPACKE, the hashed levels, the F quantile replay and the short appends (bench/README.md, "Set-up")
SETUP_TARGET=30000000        # issue 17's target for the set-up at n = 2000
OUT=bench/out
command -v valgrind >/dev/null || { echo "FAIL valgrind not installed (Debian package valgrind)"; exit 1; }
[ -f $OUT/bal2000.csv ] || /usr/bin/python3 bench/gen_designs.py >/dev/null

# ir_of NAME B [OPTION...] -> total instructions, profile left in $OUT/callgrind.NAME.out
ir_of() {
    local name=$1 b=$2
    shift 2
    OPENBLAS_NUM_THREADS=1 OPENBLAS_CORETYPE=Haswell valgrind --tool=callgrind \
        --callgrind-out-file="$OUT/callgrind.$name.out" "$STURDY" check $OUT/bal2000.csv \
        -y hours -f treatment,adhesive,cure -B "$b" --bootstrap 0 --threads 1 --quiet \
        --format json -o "$OUT/callgrind.$name.json" "$@" 2>"$OUT/callgrind.$name.log"
    sed -n 's/.*Collected : *\([0-9]*\).*/\1/p' "$OUT/callgrind.$name.log" | tail -n 1
}
# The per-rearrangement figure is taken without the pairwise comparisons (--compare
# none): their permutation-adjusted p-values add range-distribution tails that grow with
# B too, and they did not exist when the baseline was measured. The set-up figure is the
# default run at -B 0, comparisons included.
ir0=$(ir_of 0 0 --compare none)
irb=$(ir_of "$CG_B" "$CG_B" --compare none)
irs=$(ir_of setup 0)
[ -n "$ir0" ] && [ -n "$irb" ] && [ -n "$irs" ] ||
    { echo "FAIL callgrind gave no instruction count"; exit 1; }
echo "callgrind (--compare none): Ir at -B 0 = $ir0, at -B $CG_B = $irb"
awk -v a="$ir0" -v b="$irb" -v B="$CG_B" -v base="$BASELINE" 'BEGIN {
    x = (b - a) / (B * 7 * 2000)
    printf "instructions per rearrangement*term*observation: %.3f (B=%d, 7 terms, n=2000)\n", x, B
    printf "regression baseline %.3f (bench/README.md): now %.2fx of it%s\n", base, x / base,
           (x > base * 1.1) ? "  <-- more than 10% above: a slowdown" : "" }'
# The difference of the two runs also holds the re-tests of each term without its
# deciding rows (analysis/without.c: one more pass of the engine per distinct row set,
# over n − |S| rows, with the set's terms only). The engine's own figure is the main
# pass alone: sturdy_permute_run's inclusive count as called from sturdy_analyze.
main_pass=$(callgrind_annotate --tree=caller --inclusive=yes "$OUT/callgrind.$CG_B.out" 2>/dev/null |
    grep -B4 '\*  .*permute.c:sturdy_permute_run \[' | grep 'sturdy_analyze' | head -n 1 |
    awk '{gsub(",", "", $1); print $1}')
without=$(callgrind_annotate --tree=caller --inclusive=yes "$OUT/callgrind.$CG_B.out" 2>/dev/null |
    grep -B4 '\*  .*permute.c:sturdy_permute_run \[' | grep 'without.c:' | head -n 1 |
    awk '{gsub(",", "", $1); print $1}')
awk -v m="${main_pass:-0}" -v w="${without:-0}" -v B="$CG_B" -v base="$BASELINE" 'BEGIN {
    x = m / (B * 7 * 2000)
    printf "the engine alone (main pass, sturdy_permute_run from sturdy_analyze): %.3f per r*t*o, %.2fx the baseline%s\n",
           x, x / base, (x > base * 1.1) ? "  <-- more than 10% above" : ""
    printf "the re-tests without the deciding rows (without.c): %.1f M instructions, %.2fx the main pass\n",
           w / 1e6, (m > 0) ? w / m : 0 }'
echo "hottest functions at -B $CG_B --compare none (self instructions, whole run):"
callgrind_annotate "$OUT/callgrind.$CG_B.out" 2>/dev/null |
    grep -E '^ *[0-9,]+ \([ 0-9.]+%\) ' | head -n 8
awk -v a="$ir0" -v tgt="$SETUP_TARGET" 'BEGIN {
    printf "set-up without the comparisons (-B 0 --bootstrap 0 --compare none, the options of the issue-17 target when it was set): %.1f M instructions; target %.0f M: %s\n",
           a / 1e6, tgt / 1e6, (a <= tgt) ? "reached" : "not reached" }'
awk -v a="$irs" -v base="$SETUP_BASELINE" -v tgt="$SETUP_TARGET" 'BEGIN {
    printf "set-up (-B 0 --bootstrap 0): %.1f M instructions; baseline %.1f M (bench/README.md): now %.2fx of it%s; target %.0f M: %s\n",
           a / 1e6, base / 1e6, a / base, (a > base * 1.1) ? "  <-- more than 10% above: a slowdown" : "",
           tgt / 1e6, (a <= tgt) ? "reached" : "not reached" }'
echo "set-up stages (inclusive instructions at -B 0):"
callgrind_annotate --inclusive=yes --threshold=100 --auto=no "$OUT/callgrind.setup.out" 2>/dev/null |
    grep -E ':(sturdy_compare_adjust|sturdy_sensitivity_term|sturdy_compare_stage|cli_render|sturdy_model_build|sturdy_design_build|sturdy_table_load|sturdy_anova_response|sturdy_ncf_eta2_interval|sturdy_diagnose_response|sturdy_uv_response|sturdy_permute_run|_dl_start) ' |
    sed -e 's#/[^ ]*/src/#src/#' -e 's# \[[^]]*\]$##'
