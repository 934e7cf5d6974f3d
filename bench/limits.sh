#!/usr/bin/env bash
# limits.sh — timings of the guards against hostile input (issue 15), not asserted:
# the duplicate-column check on headers of 10 000 to 400 000 names (hashed: linear; the
# pairwise check took 11.7 s at 100 000), and the memory budget's refusal of full
# models of 9 to 12 two-level factors (estimated before anything is built; 12 factors
# meet the 4000-column guard first).
# STURDY_BIN chooses the binary (default ./sturdy). About 10 s on 2 cores.
set -u
cd "$(dirname "$0")/.."
S=${STURDY_BIN:-./sturdy}
case "$S" in /*) ;; *) S="$PWD/$S" ;; esac
PY=/usr/bin/python3
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
ms() { local s=$(date +%s%N); "$@" >/dev/null 2>&1; echo $(( ($(date +%s%N) - s) / 1000000 )); }
echo "names in the header   duplicate at the end (ms)   all distinct (ms)"
for n in 10000 100000 400000; do
    "$PY" - "$n" "$T" <<'PYEOF'
import sys
n, d = int(sys.argv[1]), sys.argv[2]
names = ["c%d" % i for i in range(n)]
open(d + "/ok.csv", "w").write(",".join(names) + "\n" + ",".join("1" * 1 for _ in names) + "\n")
names[-1] = names[0]
open(d + "/dup.csv", "w").write(",".join(names) + "\n" + ",".join("1" for _ in names) + "\n")
PYEOF
    printf '%-21s %-27s %s\n' "$n" "$(ms "$S" check "$T/dup.csv" -y c1 -f c2 -B 9)" \
        "$(ms "$S" check "$T/ok.csv" -y c1 -f c2 -B 9)"
done
echo
echo "two-level factors   refusal of the full model (ms)"
for k in 9 10 11 12; do
    "$PY" - "$k" "$T/f.csv" <<'PYEOF'
import itertools, sys
k = int(sys.argv[1])
with open(sys.argv[2], "w") as f:
    f.write(",".join("f%d" % i for i in range(k)) + ",y\n")
    for i, cell in enumerate(itertools.product("ab", repeat=k)):
        f.write(",".join(cell) + ",%d\n" % (i % 7))
        f.write(",".join(cell) + ",%d\n" % (i % 5))
PYEOF
    fs=$(seq -s, -f 'f%g' 0 $((k - 1)))
    # 9 factors fit the default 2 GiB: a 1G budget shows the refusal's own cost
    lim=(); [ "$k" = 9 ] && lim=(--max-memory 1G)
    printf '%-19s %s\n' "$k" "$(ms "$S" check "$T/f.csv" -y y -f "$fs" -B 9 "${lim[@]}")"
done
