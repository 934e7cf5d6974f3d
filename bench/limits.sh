#!/usr/bin/env bash
# limits.sh — timings of the guards against hostile input (issue 15), not asserted:
# the duplicate-column check on headers of 10 000 to 400 000 names (hashed: linear; the
# pairwise check took 11.7 s at 100 000), the memory budget's refusal of full models of
# 9 to 12 two-level factors (estimated before anything is built; 12 factors meet the
# 4000-column guard first), and the model build of 8 and 9 factors measured alone.
# STURDY_BIN chooses the binary (default ./sturdy), STURDY_BUILD the folder of
# tests/probe_model (make test-bins). About a minute on 2 cores.
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
    # Type III full models of 9 to 11 factors now fit the default 2 GiB (the build keeps
    # each term's reduced model in its smaller form): Type I and a 64M budget show the
    # refusal's own cost
    printf '%-19s %s\n' "$k" "$(ms "$S" check "$T/f.csv" -y y -f "$fs" -B 9 --ss 1 --max-memory 64M)"
done
# the model build alone (tests/probe_model, one BLAS thread): the estimate, the growth of
# the resident set during the build and its CPU seconds, for full models of 8 and 9
# factors under Type III (LIMITS_BIG=1 adds 10 factors: minutes)
PM=${STURDY_BUILD:-build}/tests/probe_model
echo
echo "two-level factors   estimate (MiB)   resident set growth (MiB)   build CPU (s)"
ks="8 9"; [ "${LIMITS_BIG:-0}" = 1 ] && ks="8 9 10"
for k in $ks; do
    "$PY" - "$k" "$T/f$k.csv" <<'PYEOF'
import itertools, sys
k = int(sys.argv[1])
with open(sys.argv[2], "w") as f:
    f.write(",".join("f%d" % i for i in range(k)) + ",y\n")
    for i, cell in enumerate(itertools.product("ab", repeat=k)):
        f.write(",".join(cell) + ",%d\n" % (i % 7))
        f.write(",".join(cell) + ",%d\n" % (i % 5))
PYEOF
    fs=$(seq -s, -f 'f%g' 0 $((k - 1)))
    OPENBLAS_NUM_THREADS=1 /usr/bin/time -f "cpu %U %S" -o "$T/time" \
        "$PM" "$T/f$k.csv" 3 y "$fs" > "$T/out"
    read -r _ est _ _ _ _ before _ peak _ _ < "$T/out"
    read -r _ u sy < "$T/time"
    printf '%-19s %-16s %-27s %s\n' "$k" "$(awk "BEGIN{printf \"%.1f\", $est/1048576}")" \
        "$(awk "BEGIN{printf \"%.1f\", ($peak-$before)/1024}")" "$(awk "BEGIN{print $u+$sy}")"
done
