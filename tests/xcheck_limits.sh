#!/usr/bin/env bash
# xcheck_limits.sh — the library's limits against hostile or careless input (issue 15):
# a part edited by hand is refused by its digest even when every number stays in range;
# duplicated column names are still found, at any place in a header of 100 000 names
# (the check is hashed, no longer pairwise); designs whose model build would exhaust
# memory are refused before the build, within the stated budget that --max-memory
# raises; under a memory limit (ulimit -v) a large run fails with "out of memory"
# instead of hanging. Each check fails on the binary before the fix.
# Source of the expectations: the README's exit codes and its Limits section.
set -u
pass=0; fail=0
ok()  { pass=$((pass + 1)); echo "ok   $*"; }
bad() { fail=$((fail + 1)); echo "FAIL $*"; }
S=${STURDY_BIN:-./sturdy}
case "$S" in /*) ;; *) S="$PWD/$S" ;; esac
PM=${STURDY_BUILD:-build}/tests/probe_model
case "$PM" in /*) ;; *) PM="$PWD/$PM" ;; esac
PY=${PYTHON:-/usr/bin/python3}
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
cp examples/demo.csv "$T/d.csv"
cd "$T" || exit 1
Q=(-y build_min -f runner,cache -B 99 --bootstrap 40 --seed 3)

# --- a part edited by hand within the ranges: refused by the raw digest, file named
"$S" check d.csv "${Q[@]}" --shard 1/2 -o p1.json 2>/dev/null &&
"$S" check d.csv "${Q[@]}" --shard 2/2 -o p2.json 2>/dev/null
"$S" merge p1.json p2.json --format csv -o whole.csv 2>err; rc=$?
[ $rc = 0 ] && ok "untouched parts merge (exit 0)" || bad "untouched parts: exit $rc, $(head -c 300 err)"
# one count one lower (higher at 0), still within the part's rearrangements
"$PY" - <<'PYEOF'
import json, re
s = open("p2.json").read()
i = s.index('"raw": {')
m = re.compile(r'"exceed": (\d+),').search(s, i)
v = int(m.group(1)); w = v - 1 if v else v + 1
open("p2_count.json", "w").write(s[:m.start()] + '"exceed": %d,' % w + s[m.end():])
# one replicate value (an effect size) changed to another number in [0, 1]
j = s.index('"boot": [', i)
m = re.compile(r'\[\s*(-?[0-9.eE+-]+|null),').search(s, j)
new = "0.5" if m.group(1) != "0.5" else "0.25"
open("p2_boot.json", "w").write(s[:m.start(1)] + new + s[m.end(1):])
PYEOF
for f in p2_count.json p2_boot.json; do
    "$S" merge p1.json "$f" --format csv -o edited.csv 2>err; rc=$?
    [ $rc = 3 ] && grep -q "^sturdy: $f: .*raw_digest does not match" err && [ ! -e edited.csv ] &&
        ok "merge refuses $f (edited within range): exit 3, the file named" ||
        bad "merge of $f: exit $rc, $(head -c 300 err)"
done

# --- duplicated column names in a header of 100 000: found wherever they are
"$PY" - <<'PYEOF'
import random
random.seed(15)
n = 100000
names = ["c%d" % i for i in range(n)]
open("wide_ok.csv", "w").write(",".join(names) + "\n" + ",".join("1" for _ in names) + "\n")
cases = []
for k in range(3):
    a, b = sorted(random.sample(range(n), 2))
    if k == 0: a, b = 0, n - 1
    nm = list(names); nm[b] = nm[a]
    open("wide_dup%d.csv" % k, "w").write(",".join(nm) + "\n" + ",".join("1" for _ in nm) + "\n")
    cases.append("%d %d %s" % (a + 1, b + 1, nm[a]))
open("wide_cases.txt", "w").write("\n".join(cases) + "\n")
PYEOF
k=0
while read -r a b name; do
    start=$(date +%s%N)
    timeout 20 "$S" check "wide_dup$k.csv" -y c1 -f c2 -B 9 2>err; rc=$?
    ms=$(( ($(date +%s%N) - start) / 1000000 ))
    grep -q "duplicated column name '$name' (columns $a and $b)" err && [ $rc = 3 ] &&
        ok "duplicate '$name' at columns $a and $b of 100000 found (exit 3, ${ms} ms)" ||
        bad "duplicate at $a, $b: exit $rc, $(head -c 300 err)"
    k=$((k + 1))
done < wide_cases.txt
timeout 20 "$S" check wide_ok.csv -y c1 -f c2 -B 9 2>err; rc=$?
! grep -q "duplicated column name" err && [ $rc != 124 ] &&
    ok "100000 distinct names: no duplicate reported (exit $rc)" ||
    bad "distinct names: exit $rc, $(head -c 300 err)"
printf 'a,b,a,,b\n1,2,3,4,5\n' > dup_small.csv
"$S" check dup_small.csv -y a -f b 2>err
grep -q "duplicated column name 'a' (columns 1 and 3)" err &&
    ok "the first duplicate left to right is the one named" ||
    bad "small header: $(head -c 300 err)"
printf 'a,,b,a\n1,2,3,4\n' > empty_first.csv
"$S" check empty_first.csv -y a -f b 2>err
grep -q "column 2 has an empty name" err &&
    ok "an empty name before the duplicate is reported first" ||
    bad "empty name first: $(head -c 300 err)"

# --- designs whose model build would exhaust memory: refused before the build; the
# build keeps each term's reduced model in the smaller of two forms (its own basis or its
# complement within the full model; fit.h), so that under Type III a full factorial keeps
# only K × p numbers per model instead of K × p per term
"$PY" - <<'PYEOF'
import itertools, random
random.seed(4)
for k in (6, 8, 10, 11):
    with open("f%d.csv" % k, "w") as f:
        f.write(",".join("f%d" % i for i in range(k)) + ",y\n")
        for cell in itertools.product("ab", repeat=k):
            for r in range(2):
                f.write(",".join(cell) + ",%.3f\n" % random.gauss(0, 1))
PYEOF
F11=$(seq -s, -f 'f%g' 0 10)
for ss in 1 2; do
    start=$(date +%s%N)
    timeout 20 "$S" check f11.csv -y y -f "$F11" --ss $ss -B 19 --bootstrap 0 -q -o big.json 2>err; rc=$?
    ms=$(( ($(date +%s%N) - start) / 1000000 ))
    [ $rc = 4 ] && [ $ms -lt 2000 ] && [ ! -e big.json ] &&
        grep -q "the model would need about [0-9.]* GiB of memory" err &&
        grep -q "limit on memory (--max-memory) of 2 GiB" err &&
        ok "11 two-level factors, full model, Type $ss: refused in ${ms} ms (exit 4), the estimate and --max-memory named" ||
        bad "11 factors, Type $ss: exit $rc in ${ms} ms, $(head -c 400 err)"
done
# Type III keeps no basis per term beyond the term's own: 10 factors (8.02 GiB before)
# and 11 (64.1 GiB before) fit the default budget. Only the estimate is read here (the
# 10-factor build itself takes minutes: 1023 QR factorisations of 1024 × 1023), then the
# CLI is seen to start the build instead of refusing it.
read -r _ est10 _ _ des10 < <("$PM" f10.csv 3 y "$(seq -s, -f 'f%g' 0 9)" estimate)
read -r _ est11 _ _ _ < <("$PM" f11.csv 3 y "$F11" estimate)
[ -n "$est10" ] && [ "$est10" -lt $((64 << 20)) ] && [ "$est11" -lt $((256 << 20)) ] &&
    ok "Type III full models: 10 factors estimated at $((est10 >> 20)) MiB (coded design $((des10 >> 20)) MiB included), 11 at $((est11 >> 20)) MiB" ||
    bad "Type III estimates: 10 factors ${est10:-?} bytes, 11 factors ${est11:-?} bytes"
timeout 4 "$S" check f10.csv -y y -f "$(seq -s, -f 'f%g' 0 9)" -B 0 --bootstrap 0 --compare none \
    -q -o big10.json 2>err; rc=$?
{ [ $rc = 124 ] || [ $rc = 0 ]; } && ! grep -q "would need" err &&
    ok "10 two-level factors, full model, Type III: the default budget admits the build (exit $rc)" ||
    bad "10 factors, Type III: exit $rc, $(head -c 400 err)"
# The build's time is budgeted too (--max-build-work, default 1e13 floating-point
# operations): 11 factors under Type III fit in memory (160 MiB) but their 2047 QR
# factorisations (7e13 operations, hours) are refused at once; a lower budget refuses 10.
start=$(date +%s%N)
timeout 20 "$S" check f11.csv -y y -f "$F11" -B 19 --bootstrap 0 -q -o big.json 2>err; rc=$?
ms=$(( ($(date +%s%N) - start) / 1000000 ))
[ $rc = 4 ] && [ $ms -lt 2000 ] && [ ! -e big.json ] &&
    grep -q "the model would take about 7e+13 floating-point operations" err &&
    grep -q "limit on build work (--max-build-work) of 1e+13" err &&
    ok "11 two-level factors, full model, Type III: refused by the work budget in ${ms} ms (exit 4), the estimate and --max-build-work named" ||
    bad "11 factors, Type III, work budget: exit $rc in ${ms} ms, $(head -c 400 err)"
"$S" check f10.csv -y y -f "$(seq -s, -f 'f%g' 0 9)" --max-build-work 1e12 -B 0 \
    --bootstrap 0 -q -o big10w.json 2>err; rc=$?
[ $rc = 4 ] && [ ! -e big10w.json ] && grep -q "about 4.4e+12 floating-point operations" err &&
    ok "10 factors under --max-build-work 1e12: refused (estimate 4.4e12, exit 4)" ||
    bad "10 factors under --max-build-work 1e12: exit $rc, $(head -c 300 err)"
wrong=""
for bad_ops in 0 0.5 abc -5 inf nan 1e999 12x; do
    "$S" check f10.csv -y y -f f0,f1 --max-build-work "$bad_ops" -o x.json 2>err; rc=$?
    [ $rc = 2 ] && grep -q -- "--max-build-work wants a number" err && [ ! -e x.json ] ||
        wrong="$wrong $bad_ops(exit $rc)"
done
[ -z "$wrong" ] && ok "malformed work budgets (0, 0.5, abc, -5, inf, nan, 1e999, 12x) are usage errors" ||
    bad "malformed work budgets accepted or misreported:$wrong"
"$S" check f10.csv -y y -f "$(seq -s, -f 'f%g' 0 9)" --order 2 -B 19 --bootstrap 0 -q \
    --format csv -o order2.csv 2>err; rc=$?
[ $rc = 0 ] && [ "$(grep -c '^y,' order2.csv)" = 57 ] &&
    ok "the same 10 factors to order 2 run within the default budget (55 terms, residual, total)" ||
    bad "10 factors, order 2: exit $rc, $(head -c 300 err)"
# the estimate against the build's measured growth of the resident set (getrusage),
# for 8 two-level factors under each type: within a factor of 2, give or take 4 MiB of
# the allocator's and the BLAS library's own (measured: 36.2, 16.1 and 3.6 MiB of growth
# for estimates of 34.5, 14.8 and 2.5 MiB under Types I, II and III)
# (not on an AddressSanitizer build: its quarantine keeps freed blocks resident, so the
# resident set grows with everything allocated, not with what is live)
F8=$(seq -s, -f 'f%g' 0 7)
if ldd "$PM" 2>/dev/null | grep -q libasan || nm "$PM" 2>/dev/null | grep -q __asan_init; then
    echo "note the estimate against the resident set: not measured on an AddressSanitizer build"
else
for ss in 1 2 3; do
    rm -f msg; line=$(OPENBLAS_NUM_THREADS=1 "$PM" f8.csv $ss y "$F8" | head -1)
    "$PY" - "$ss" "$line" <<'PYEOF' && ok "8 factors, Type $ss: $(cat msg)" || bad "8 factors, Type $ss: $(cat msg)"
import sys
ss, f = sys.argv[1], sys.argv[2].split()
est, before, peak = float(f[1]), float(f[6]) * 1024, float(f[8]) * 1024
grow = peak - before
msg = "estimate %.1f MiB, resident set grew %.1f MiB during the build" % (est / 2**20, grow / 2**20)
open("msg", "w").write(msg)
sys.exit(0 if grow <= 2 * est + 4 * 2**20 and est <= 2 * grow + 4 * 2**20 else 1)
PYEOF
done
fi
# the table of a full factorial whose terms all keep the complement form (Type III) or a
# mix (Types I and II), on unequal cells (1 to 3 rows: the terms are not orthogonal),
# against least squares in numpy: for each term the rise in the residual sum of squares
# when its columns leave the reduced-versus-augmented pair of its type (sum-to-zero
# ±1 coding, products for interactions), F on the full model's residual mean square
"$PY" - <<'PYEOF'
import itertools, random
random.seed(15)
with open("f7u.csv", "w") as f:
    f.write(",".join("f%d" % i for i in range(7)) + ",y\n")
    for cell in itertools.product("ab", repeat=7):
        for r in range(random.randint(1, 3)):
            mu = 0.4 * (cell[0] == "a") + 0.3 * (cell[1] == cell[2])
            f.write(",".join(cell) + ",%.4f\n" % (mu + random.gauss(0, 1)))
PYEOF
for ss in 3 1 2; do
    rm -f msg; "$S" check f7u.csv -y y -f "$(seq -s, -f 'f%g' 0 6)" --ss $ss -B 0 --bootstrap 0 \
        --compare none -q --format json -o t$ss.json 2>err; rc=$?
    "$PY" - "$ss" "t$ss.json" <<'PYEOF' && ok "7 factors on unequal cells, Type $ss: $(cat msg)" ||
import csv, json, sys
import numpy as np
from scipy import stats
ss, res = int(sys.argv[1]), json.load(open(sys.argv[2]))
rows = list(csv.reader(open("f7u.csv")))
head, rows = rows[0], rows[1:]
y = np.array([float(r[-1]) for r in rows])
z = {h: np.array([1.0 if r[i] == "a" else -1.0 for r in rows]) for i, h in enumerate(head[:-1])}
terms = res["responses"][0]["terms"]
fs = [tuple(t["factors"]) for t in terms]
col = {f: np.prod([z[x] for x in f], axis=0) for f in fs}
def resid(keep, v):
    X = np.column_stack([np.ones(len(y))] + [col[f] for f in keep])
    return v - X @ np.linalg.lstsq(X, v, rcond=None)[0]
e = resid(fs, y)
full = e @ e
dfe = len(y) - 1 - len(fs)
worst = 0.0
for i, (f, t) in enumerate(zip(fs, terms)):
    if ss == 3: red = [g for g in fs if g != f]
    elif ss == 1: red = fs[:i]
    else: red = [g for g in fs if g != f and not set(f) < set(g)]
    # the rise in RSS when the term joins, without a difference of two large sums:
    # (rᵀy)² / rᵀr with r the term's column residualised against the reduced model
    r = resid(red, col[f])
    s = (r @ y) ** 2 / (r @ r)
    F = s / (full / dfe)
    p = stats.f.sf(F, 1, dfe)
    assert t["df"] == 1, t
    for a, b in ((t["ss"], s), (t["f"], F)):
        worst = max(worst, abs(a - b) / max(abs(b), 1e-300))
    worst = max(worst, abs(t["p"] - p) / max(p, 1e-3))
e = res["responses"][0]["error"]
worst = max(worst, abs(e["ss"] - full) / full)
assert e["df"] == dfe, e
msg = "%d terms, n = %d: SS, F and p of every term and the error SS agree to %.1e (p below 0.001: absolute)" % (len(fs), len(y), worst)
open("msg", "w").write(msg)
sys.exit(0 if worst < 1e-9 and len(fs) == 127 else 1)
PYEOF
    bad "7 factors, Type $ss: exit $rc, $(cat msg 2>/dev/null) $(head -c 300 err)"
done
# six factors (about 159 KiB with the coded design; 2.06 MiB before): refused under
# 100K, run under 160K
F6=(f6.csv -y y -f f0,f1,f2,f3,f4,f5 -B 19 --bootstrap 0 -q)
"$S" check "${F6[@]}" --max-memory 100K -o small.json 2>err; rc=$?
[ $rc = 4 ] && grep -q "about 159 KiB of memory" err && grep -q "of 100 KiB" err &&
    ok "--max-memory 100K refuses a model of about 159 KiB (exit 4)" ||
    bad "--max-memory 100K: exit $rc, $(head -c 300 err)"
"$S" check "${F6[@]}" --max-memory 160K --format csv -o small.csv 2>err; rc=$?
[ $rc = 0 ] && [ "$(grep -c '^y,' small.csv)" = 65 ] &&
    ok "--max-memory 160K (just enough) runs the six-factor model: 63 terms, residual, total" ||
    bad "--max-memory 160K: exit $rc, $(head -c 300 err)"
"$S" check "${F6[@]}" --max-memory 163840 --format csv -o bytes.csv 2>/dev/null &&
    cmp -s small.csv bytes.csv && ok "--max-memory in bytes = with a suffix" ||
    bad "--max-memory 163840 differs from 160K"
wrong=""
for bad_size in 0 1X 1.5G -1 99999999999T; do
    "$S" check "${F6[@]}" --max-memory "$bad_size" -o x.json 2>err; rc=$?
    [ $rc = 2 ] && grep -q -- "--max-memory wants a size" err && [ ! -e x.json ] ||
        wrong="$wrong $bad_size(exit $rc)"
done
[ -z "$wrong" ] && ok "malformed sizes (0, 1X, 1.5G, -1, beyond 2^64) are usage errors" ||
    bad "malformed sizes accepted or misreported:$wrong"

# --- under an address-space limit (as schedulers set): a 1,000,000-row run fails with
# exit 1 and "out of memory" within seconds, never hangs (bounded by timeout)
"$PY" - <<'PYEOF'
import random
random.seed(5)
with open("rows1m.csv", "w") as f:
    f.write("a,b,y\n")
    f.writelines("%s,%s,%.3f\n" % ("abc"[i % 3], "wxyz"[(i // 3) % 4], random.gauss(0, 1))
                 for i in range(1000000))
PYEOF
# AddressSanitizer reserves terabytes of address space for its shadow memory, so a
# sanitized binary cannot start under this limit at all: the check belongs to the plain
# build (make check), and the sanitizer run says so rather than failing on ASan itself
if ldd "$S" 2>/dev/null | grep -q libasan || nm "$S" 2>/dev/null | grep -q __asan_init; then
    echo "note 1,000,000 rows under ulimit -v 450M: not run on an AddressSanitizer build" \
         "(its shadow memory cannot be mapped under the limit); make check runs it"
else
start=$(date +%s%N)
# (450 MB: since the comparisons' rearranged vectors are built from a row form instead of
# an n × 2C matrix, this run fits in 600 MB and then computes for minutes, as it should)
( ulimit -v 450000; exec timeout 60 "$S" check rows1m.csv -y y -f a,b -q -o lim.json ) 2>err
rc=$?
ms=$(( ($(date +%s%N) - start) / 1000000 ))
[ $rc = 1 ] && [ $ms -lt 30000 ] && grep -q "out of memory" err && [ ! -e lim.json ] &&
    ok "1,000,000 rows under ulimit -v 450M: exit 1, 'out of memory' in ${ms} ms" ||
    bad "1,000,000 rows under ulimit -v 450M: exit $rc after ${ms} ms, $(head -c 300 err)"
fi

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
