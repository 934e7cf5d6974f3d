#!/bin/bash
# stop_early.sh — the nightly-batch target of sequential stopping (--stop-early): a batch
# of 50 null responses (n = 200; factors A 2 × B 5 × C 4, 5 rows per cell; standard
# normal, numpy seed 17), one analysis per response, -B 9999, with and without a
# stop-early column in the plan. Reports the CPU seconds (user + system of the batch
# process, one thread) of each, their ratio, the same at -B 0 (the floor: everything
# but the rearrangements), the ratio of the permutation stage alone (each minus the
# floor), and how many terms changed their decision at alpha = 0.05. Two settings:
# --bootstrap 0 --compare none (the rearrangements' own cost) and the defaults
# (bootstrap 2000, comparisons). Run alone: bash bench/stop_early.sh (about 3 minutes
# on 2 cores; TAGS=lean runs only the first setting, REPS=N repeats each batch N times
# and keeps the smallest CPU time, default 3). Needs /usr/bin/python3 with numpy and scipy.
set -eu
BIN=${STURDY_BIN:-./build/sturdy}
OUT=${OUT:-bench/out/stop_early}
REPS=${REPS:-3}
mkdir -p "$OUT"
PY=/usr/bin/python3
$PY - "$OUT" <<'PYEOF'
import sys, numpy as np
out = sys.argv[1]
rng = np.random.default_rng(17)
n = 200
A = np.repeat(["a1", "a2"], 100)
B = np.tile(np.repeat(["b1", "b2", "b3", "b4", "b5"], 20), 2)
C = np.tile(["c1", "c2", "c3", "c4"], 50)
Y = rng.standard_normal((n, 50))
with open(out + "/null.csv", "w") as f:
    f.write("A,B,C," + ",".join("y%d" % i for i in range(50)) + "\n")
    for i in range(n):
        f.write("%s,%s,%s," % (A[i], B[i], C[i]) + ",".join("%.6f" % v for v in Y[i]) + "\n")
for tag, extra_h, extra_v in (("lean", ",bootstrap,compare", ",0,none"), ("default", "", "")):
    for b in (0, 9999):
        for stop in ("no", "yes"):
            with open("%s/plan_%s_%d_%s.csv" % (out, tag, b, stop), "w") as f:
                f.write("name,data,response,factors,permutations,stop-early%s\n" % extra_h)
                for j in range(50):
                    f.write('r%d,null.csv,y%d,"A,B,C",%d,%s%s\n' % (j, j, b, stop, extra_v))
PYEOF
cpu() {   # CPU seconds of one batch run (user + system), the smallest of $REPS
    local plan=$1 best=
    for r in $(seq "$REPS"); do
        rm -rf "$OUT/res"
        local t
        /usr/bin/time -o "$OUT/time.txt" -f "%U %S" "$BIN" batch "$plan" -o "$OUT/res" \
            --threads 1 --quiet >/dev/null 2>&1 || true
        t=$(tail -1 "$OUT/time.txt" | awk '{print $1 + $2}')
        if [ -z "$best" ] || awk "BEGIN{exit !($t < $best)}"; then best=$t; fi
    done
    echo "$best"
}
decisions() {  # "changed/total" decisions at 0.05 between two result folders
    $PY - "$1" "$2" <<'PYEOF'
import json, sys, glob, os, math
from scipy.stats import binom
a, b = sys.argv[1:3]
H, ALPHA = 20, 0.05
def within_error(p, B=9999):
    # the band of tests/xcheck_stop_early.py: some p within 3 SE of the full-B estimate
    # makes the sequential decision differ with probability > 1e-3
    se = math.sqrt(max(p * (1 - p), 1.0 / B) / B)
    lo, hi = max(p - 3 * se, 0.0), min(p + 3 * se, 1.0)
    if (lo <= ALPHA) != (hi <= ALPHA):
        return True
    m = math.ceil(H / ALPHA) - 1
    q = [lo + (hi - lo) * k / 40 for k in range(41)]
    f = [binom.cdf(H - 1, m, x) if x > ALPHA else 1 - binom.cdf(H - 1, m, x) for x in q]
    return max(f) > 1e-3
ch = tot = stopped = decided = outside = 0
used = []
for fa in sorted(glob.glob(a + "/r*.json")):
    da = json.load(open(fa)); db = json.load(open(os.path.join(b, os.path.basename(fa))))
    used.append(db["settings"]["permutations"])
    for ra, rb in zip(da["responses"], db["responses"]):
        for ta, tb in zip(ra["terms"], rb["terms"]):
            if ta["p_perm"] is None: continue
            tot += 1
            stopped += tb.get("stop_rule") == "exceedances"
            decided += tb.get("stop_rule") == "decision"
            if (ta["p_perm"] <= ALPHA) != (tb["p_perm"] <= ALPHA):
                ch += 1
                outside += not within_error(ta["p_perm"])
used.sort()
print("%d of %d terms changed decision at 0.05 (%d outside their Monte Carlo error band); "
      "%d stopped at their 20th exceedance, %d by the decision rule; rearrangements made per "
      "analysis: mean %.0f, median %d, max %d"
      % (ch, tot, outside, stopped, decided, sum(used) / len(used), used[len(used)//2],
         used[-1]))
PYEOF
}
for tag in ${TAGS:-lean default}; do
    c0=$(cpu "$OUT/plan_${tag}_0_no.csv")
    cfull=$(cpu "$OUT/plan_${tag}_9999_no.csv")
    rm -rf "$OUT/full"; cp -r "$OUT/res" "$OUT/full"
    cseq=$(cpu "$OUT/plan_${tag}_9999_yes.csv")
    echo "== $tag ($( [ $tag = lean ] && echo '--bootstrap 0 --compare none' || echo 'default bootstrap and comparisons'))"
    echo "   CPU s, 50 analyses: -B 0 $c0; -B 9999 $cfull; -B 9999 --stop-early $cseq"
    awk -v f="$cfull" -v s="$cseq" -v z="$c0" 'BEGIN{printf "   whole batch: %.2fx less CPU; permutation stage (minus the -B 0 floor): %.1fx; ceiling (full / floor): %.2fx\n", f/s, (f-z)/(s-z>0?s-z:1e-9), f/z}'
    echo "   $(decisions "$OUT/full" "$OUT/res")"
done
