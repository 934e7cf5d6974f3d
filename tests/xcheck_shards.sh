#!/usr/bin/env bash
# Shards: `check --shard I/N` parts merged by `sturdy merge` in any order must give the
# single run's JSON byte for byte (DESIGN.md: the random stream of rearrangement b
# depends only on (seed, b)); parts that do not belong together are refused with a
# message naming the offending file, exit 2, and no output.
set -u
S=${STURDY_BIN:-./sturdy}
case "$S" in /*) ;; *) S="$PWD/$S" ;; esac
pass=0; fail=0
ok()  { pass=$((pass + 1)); echo "ok   $*"; }
bad() { fail=$((fail + 1)); echo "FAIL $*"; }
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
cp examples/demo.csv "$T/demo.csv"
# an invented property-test table: two responses, a covariate and a block
/usr/bin/python3 - "$T/cov.csv" <<'PY'
import random, sys
random.seed(5)
with open(sys.argv[1], "w") as f:
    f.write("site,coat,lot,thick,wear,gloss\n")
    for s in ("n", "e", "w"):
        for c in ("matte", "satin"):
            for i in range(5):
                t = random.uniform(1, 3)
                f.write(f"{s},{c},L{i % 2},{t:.3f},{random.expovariate(1) + 0.4 * t:.4f},"
                        f"{random.gauss(50, 5):.3f}\n")
PY
run_case() { # name data args...
    local name=$1 data=$2; shift 2
    (cd "$T" && "$S" check "$data" "$@" --format json -o "$name.single.json") || { bad "$name: single run failed"; return; }
    for N in 2 4 7; do
        rm -f "$T"/"$name".part*.json
        local i
        for i in $(seq 1 $N); do
            (cd "$T" && "$S" check "$data" "$@" --shard $i/$N --threads $(( (i % 3) + 1 )) \
                -o "$name.part$i.json") || bad "$name: shard $i/$N failed"
        done
        # merge in a shuffled order, from another folder
        local parts; parts=$(ls "$T"/"$name".part*.json | shuf --random-source=<(yes))
        (cd / && "$S" merge $parts -o "$T/$name.merged$N.json")
        if cmp -s "$T/$name.single.json" "$T/$name.merged$N.json"; then
            ok "$name: $N shards merged in shuffled order = single run (cmp)"
        else
            bad "$name: $N shards merged differ from the single run"
        fi
    done
}
run_case demo demo.csv -y build_min -f runner,cache,tests -B 2999 --bootstrap 300
run_case cov cov.csv -y wear,gloss -f site,coat --covariates thick --block lot -B 1999 --bootstrap 250 --ss 2
run_case flip demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 200 --flip --method ter-braak
# the unequal-variance test permuted with the run's rearrangements (blocks, covariate: HC3)
# --tail-fit: every term's largest F* travel in the parts (raw f_top) and merge order-free
run_case tail demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 50 --tail-fit
run_case spread-perm cov.csv -y wear,gloss -f site,coat --covariates thick --block lot -B 999 --bootstrap 0 --spread-scheme permutation

# refusals: each names the offending file, exits 2 and writes nothing
refuse() { # label expected-fragment parts...
    local label=$1 frag=$2; shift 2
    rm -f "$T/out.json"
    local err; err=$("$S" merge "$@" -o "$T/out.json" 2>&1 >/dev/null); local rc=$?
    if [ $rc = 2 ] && [[ "$err" == *"$frag"* ]] && [ ! -e "$T/out.json" ]; then
        ok "refused $label: exit 2, '$frag' named, no output"
    else
        bad "refused $label: exit $rc, message '$err'"
    fi
}
cd "$T"
"$S" check demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 1/3 -o a1.json
"$S" check demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 2/3 -o a2.json
"$S" check demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 3/3 -o a3.json
"$S" check demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 3/3 --seed 7 -o seed.json
"$S" check demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 3/4 -o n4.json
"$S" check demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 3/3 --ss 2 -o ss2.json
sed 's/^\(runner,.*\),\([0-9.]*\)$/\1,\2/' demo.csv | awk 'NR==5{sub(/[0-9]$/,"7")}1' > other.csv
"$S" check other.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 100 --shard 3/3 -o data.json
"$S" check demo.csv -y build_min -f runner,cache,tests -B 99 --bootstrap 10 --format json -o whole.json
refuse "a different seed" "seed.json" a1.json a2.json seed.json
refuse "a different split" "n4.json" a1.json a2.json n4.json
refuse "different settings" "ss2.json" a1.json a2.json ss2.json
refuse "different data" "data.json" a1.json a2.json data.json
refuse "a missing slice" "slice 3/3 is missing" a1.json a2.json
refuse "a repeated slice" "a1.json" a1.json a2.json a1.json
"$S" merge a1.json a2.json a3.json -o good.json && ok "the matching parts merge" || bad "the matching parts do not merge"
rm -f out.json
"$S" merge a1.json whole.json a3.json -o out.json 2>err.txt; rc=$?
if [ $rc = 3 ] && grep -q "whole.json" err.txt && [ ! -e out.json ]; then
    ok "refused a whole result given as a part: exit 3, file named"
else
    bad "whole result as part: exit $rc: $(cat err.txt)"
fi
echo "$pass passed, $fail failed"
[ $fail = 0 ]
