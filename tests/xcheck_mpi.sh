#!/usr/bin/env bash
# MPI: `mpirun -np 3 sturdy check ...` (built with `make MPI=1`) must write exactly the
# JSON of a single process; a rank killed mid-run must fail the whole run with no
# output. Needs Open MPI (Debian openmpi-bin, libopenmpi-dev): missing = FAIL.
set -u
pass=0; fail=0
ok()  { pass=$((pass + 1)); echo "ok   $*"; }
bad() { fail=$((fail + 1)); echo "FAIL $*"; }
S=${STURDY_BIN:-./sturdy}
case "$S" in /*) ;; *) S="$PWD/$S" ;; esac
if ! command -v mpirun >/dev/null || ! command -v mpicc >/dev/null; then
    bad "Open MPI (mpirun, mpicc) is not installed: run 'make deps-test'"
    echo "$pass passed, $fail failed"; exit 1
fi
# the MPI build lives in its own folder so it never replaces ./sturdy
if ! make -s MPI=1 build-mpi/sturdy >/dev/null 2>build-mpi.log; then
    bad "make MPI=1 failed: $(tail -n 5 build-mpi.log)"
    echo "$pass passed, $fail failed"; exit 1
fi
rm -f build-mpi.log
M="$PWD/build-mpi/sturdy"
MPIRUN="mpirun --allow-run-as-root --oversubscribe"
export OMPI_MCA_btl_vader_single_copy_mechanism=none   # containers lack CMA
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
cp examples/demo.csv "$T/demo.csv"
/usr/bin/python3 - "$T/plates.csv" <<'PY'
# invented property-test table: an assay plate study, 3 x 4 with a covariate
import random, sys
random.seed(11)
with open(sys.argv[1], "w") as f:
    f.write("reagent,temp,age,signal\n")
    for r in ("r1", "r2", "r3"):
        for t in ("20", "25", "30", "37"):
            for i in range(random.randint(3, 6)):
                a = random.uniform(0, 10)
                f.write(f"{r},{t},{a:.2f},{random.lognormvariate(0, 0.6) + 0.1 * a:.5f}\n")
PY
compare() { # name data args...
    local name=$1 data=$2; shift 2
    (cd "$T" && "$S" check "$data" "$@" --format json -o "$name.one.json")
    (cd "$T" && $MPIRUN -np 3 "$M" check "$data" "$@" --threads 1 --format json -o "$name.mpi.json") \
        >"$T/$name.log" 2>&1
    local rc=$?
    if [ $rc = 0 ] && cmp -s "$T/$name.one.json" "$T/$name.mpi.json"; then
        ok "$name: mpirun -np 3 = single process (cmp)"
    else
        bad "$name: mpirun exit $rc or output differs: $(tail -n 3 "$T/$name.log")"
    fi
}
compare demo demo.csv -y build_min -f runner,cache,tests -B 4999 --bootstrap 500
compare plates plates.csv -y signal -f reagent,temp --covariates age -B 2999 --bootstrap 400 --ss 1
# the resistant test and the tests without the deciding rows count their share per rank
compare resistant demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 0 --resistant
# --tail-fit: every rank's largest F* gathered to rank 0 and merged (runner is fitted)
compare tail demo.csv -y build_min -f runner,cache,tests -B 999 --bootstrap 0 --tail-fit

# a rank killed mid-run: the run fails, and no output (nor temporary file) appears
big="-y signal -f reagent,temp --covariates age -B 5000000 --bootstrap 0 --threads 1"
(cd "$T" && exec $MPIRUN -np 3 "$M" check plates.csv $big -o killed.json) >"$T/kill.log" 2>&1 &
runner=$!
victim=""
for _ in $(seq 1 100); do
    # a rank's command line starts with the binary (mpirun's starts with mpirun)
    victim=$(pgrep -f "^$M check plates.csv" | tail -n 1)
    [ -n "$victim" ] && break
    sleep 0.1
done
sleep 1
[ -n "$victim" ] && kill -9 "$victim"
wait $runner; rc=$?
left=$(ls "$T" | grep -c "killed.json" || true)
if [ -n "$victim" ] && [ $rc != 0 ] && [ "$left" = 0 ]; then
    ok "a killed rank fails the run (mpirun exit $rc) and leaves no output"
else
    bad "killed rank: victim '$victim', mpirun exit $rc, files left $left"
fi
pkill -9 -f "^$M check plates.csv" 2>/dev/null
echo "$pass passed, $fail failed"
[ $fail = 0 ]
