#!/usr/bin/env bash
# xcheck_determinism.sh — sturdy's JSON result must not depend on the thread count, and
# must depend on the seed only through the random streams (DESIGN.md: the stream of
# rearrangement b and of bootstrap replicate b depends only on (seed, b); counts are
# integers and decisive sums are reduced in a fixed order).
#
# Two invented datasets: an unbalanced 3×2×2 factorial, and a 3×2 factorial with a
# covariate and a 4-level block. For each, `check --format json -B 9999 --bootstrap 2000`
# with every method (Freedman–Lane, ter Braak, raw), sign flipping, and the cells (3×2×2)
# or wild (covariate set) bootstrap scheme, run with --threads 1, 2, 3 and 8: every output must be byte-identical
# to the --threads 1 output (cmp). Then the same --seed twice must give identical bytes,
# and a different --seed must change at least one p_perm.
# Reference: the contract itself (bit-identical for a seed whatever the thread count).
# Prints "ok  ..." or "FAIL ..." per comparison and "N passed, N failed" last; exit 1 on
# any failure.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY="${PYTHON:-/usr/bin/python3}"
pass=0; fail=0
ok()   { echo "ok   $1"; pass=$((pass + 1)); }
bad()  { echo "FAIL $1"; fail=$((fail + 1)); }
give_up() { bad "$1"; echo "$pass passed, $fail failed"; exit 1; }

[ -x "$BIN" ] || give_up "binary $BIN not built (make sturdy)"
[ -x "$PY" ] || give_up "python $PY missing (needed to write the test data and read JSON)"

work=$(mktemp -d) || give_up "mktemp failed"
trap 'rm -rf "$work"' EXIT

# Invented data, fixed seed; standard-library random only.
"$PY" - "$work" <<'PY' || give_up "could not write the test data"
import random, sys
out = sys.argv[1]
r = random.Random(8675309)
with open(out + "/three.csv", "w") as fh:
    fh.write("A,B,C,y\n")
    for a in ("a1", "a2", "a3"):
        for b in ("b1", "b2"):
            for c in ("c1", "c2"):
                for _ in range(r.randint(2, 6)):
                    y = 10 + (a == "a2") * 0.8 + (b == "b1") * (c == "c2") * 0.6 \
                        + r.expovariate(1.0)
                    fh.write("%s,%s,%s,%.6f\n" % (a, b, c, y))
with open(out + "/cov.csv", "w") as fh:
    fh.write("site,P,Q,dose,y\n")
    for s in ("s1", "s2", "s3", "s4"):
        shift = r.gauss(0, 1)
        for p in ("p1", "p2", "p3"):
            for q in ("q1", "q2"):
                for _ in range(r.randint(1, 3)):
                    x = r.uniform(0, 5)
                    y = shift + 0.4 * x + (p == "p3") * 0.7 + r.gauss(0, 0.8) ** 3
                    fh.write("%s,%s,%s,%.4f,%.6f\n" % (s, p, q, x, y))
PY

common="--format json -B 9999 --bootstrap 2000"
set_three="$work/three.csv -y y -f A,B,C"
set_cov="$work/cov.csv -y y -f P,Q --covariates dose --block site"

# run NAME THREADS ARGS... : writes $work/NAME.t<THREADS>.json; returns sturdy's status
run() {
    local name="$1" threads="$2"; shift 2
    # shellcheck disable=SC2086
    "$BIN" check "$@" $common --threads "$threads" >"$work/$name.t$threads.json" \
        2>"$work/$name.t$threads.err"
}

compare_threads() {
    local name="$1"; shift
    if ! run "$name" 1 "$@"; then
        bad "$name: sturdy --threads 1 failed: $(head -c 300 "$work/$name.t1.err")"
        return
    fi
    for t in 2 3 8; do
        if ! run "$name" "$t" "$@"; then
            bad "$name: sturdy --threads $t failed: $(head -c 300 "$work/$name.t$t.err")"
        elif cmp -s "$work/$name.t1.json" "$work/$name.t$t.json"; then
            ok "$name: JSON with --threads $t byte-identical to --threads 1 ($(wc -c <"$work/$name.t1.json") bytes) [contract]"
        else
            bad "$name: JSON with --threads $t differs from --threads 1 at $(cmp "$work/$name.t1.json" "$work/$name.t$t.json" | head -n 1) [contract]"
        fi
    done
}

for d in three cov; do
    eval "args=\$set_$d"
    # shellcheck disable=SC2086
    {
        compare_threads "$d-freedman-lane" $args --method freedman-lane
        compare_threads "$d-ter-braak" $args --method ter-braak
        compare_threads "$d-raw" $args --method raw
        compare_threads "$d-flip" $args --flip
        compare_threads "$d-spread-perm" $args --spread-scheme permutation
        # cells needs a model without covariates: the covariate set uses wild instead
        if [ "$d" = three ]; then
            compare_threads "$d-cells" $args --bootstrap-scheme cells
        else
            compare_threads "$d-wild" $args --bootstrap-scheme wild
        fi
    }
done

# Same seed twice; another seed.
# shellcheck disable=SC2086
{
    "$BIN" check $set_three $common --seed 12345 --threads 2 >"$work/s1.json" 2>/dev/null &&
    "$BIN" check $set_three $common --seed 12345 --threads 2 >"$work/s2.json" 2>/dev/null &&
    "$BIN" check $set_three $common --seed 54321 --threads 2 >"$work/s3.json" 2>/dev/null
} || give_up "sturdy failed in the seed runs"
if cmp -s "$work/s1.json" "$work/s2.json"; then
    ok "three: --seed 12345 twice gives byte-identical JSON [contract]"
else
    bad "three: --seed 12345 twice differs at $(cmp "$work/s1.json" "$work/s2.json" | head -n 1) [contract]"
fi
pp() { "$PY" -c 'import json,sys; d=json.load(open(sys.argv[1])); print(" ".join(repr(t["p_perm"]) for r in d["responses"] for t in r["terms"]))' "$1"; }
p1=$(pp "$work/s1.json") || give_up "cannot read p_perm from $work/s1.json"
p3=$(pp "$work/s3.json") || give_up "cannot read p_perm from $work/s3.json"
if [ "$p1" != "$p3" ]; then
    ok "three: --seed 54321 changes p_perm ($p1 vs $p3) [independent streams]"
else
    bad "three: --seed 54321 gives the same p_perm as --seed 12345 ($p1) [independent streams]"
fi

echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
