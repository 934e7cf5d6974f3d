#!/usr/bin/env bash
# xcheck_batch.sh — `sturdy batch`: a plan of analyses run in process, one result file
# each, exit 6 when some fail; results complete or absent when the run is killed (-9) at
# any moment, and a --resume run then gives every result and both summaries byte for byte
# as an uninterrupted run; resume compares the data's bytes and the settings, never file
# dates; --compare lists exactly the terms whose verdict changed; plan
# errors stop everything (exit 3, no results folder).
# References: the batch contract in the brief/README (exit codes, file names, resume
# rules); the expected verdict changes follow from the construction of the data (an
# added main effect in a balanced design leaves every other term's F, and its
# Freedman–Lane rearrangements, unchanged), and are also read from the two runs' JSON
# with Python's json module as an independent check.
# Prints "ok  ..." or "FAIL ..." per check and "N passed, N failed" last; exit 1 on any
# failure.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY="${PYTHON:-/usr/bin/python3}"
pass=0; fail=0
ok()   { echo "ok   $1"; pass=$((pass + 1)); }
bad()  { echo "FAIL $1"; fail=$((fail + 1)); }
check() { if [ "$2" = "$3" ]; then ok "$1 ($2)"; else bad "$1: got '$2', expected '$3'"; fi; }
give_up() { bad "$1"; echo "$pass passed, $fail failed"; exit 1; }

[ -x "$BIN" ] || give_up "binary $BIN not built (make sturdy)"
[ -x "$PY" ] || give_up "python $PY missing (needed to write the test data and read JSON)"
BIN=$(cd "$(dirname "$BIN")" && pwd)/$(basename "$BIN")
T=$(mktemp -d) || give_up "mktemp failed"
trap 'rm -rf "$T"' EXIT
mkdir -p "$T/plans" "$T/data"

# Invented data, fixed seeds, standard-library random only: a 3×2×2 factorial with two
# responses, a covariate and a block; a 6-row table (exact enumeration); a ragged file;
# and a pair of 2×3×2 tables that differ only by a shift between the levels of P.
"$PY" - "$T" <<'PY' || give_up "could not write the test data"
import random, sys
out = sys.argv[1]
r = random.Random(20240917)
with open(out + "/data/trial.csv", "w") as fh:
    fh.write("A,B,C,site,dose,y1,y2\n")
    for a in ("a1", "a2", "a3"):
        for b in ("b1", "b2"):
            for c in ("c1", "c2"):
                for k in range(6):
                    x = r.uniform(0, 4)
                    y1 = 5 + 0.9 * (a == "a3") + 0.5 * x + r.expovariate(1.0)
                    y2 = 2 + 0.7 * (b == "b2") * (c == "c1") + r.gauss(0, 1)
                    fh.write("%s,%s,%s,s%d,%.4f,%.5f,%.5f\n" % (a, b, c, k % 3, x, y1, y2))
with open(out + "/data/tiny.csv", "w") as fh:
    fh.write("g,y\n" + "".join("%s,%.3f\n" % (g, r.gauss(0, 1)) for g in "aabbbc"))
with open(out + "/data/ragged.csv", "w") as fh:
    fh.write("g,y\na,1\nb,2,9\na,3\n")
noise = [r.gauss(0, 1) for _ in range(2 * 3 * 2 * 5)]
for name, shift in (("before", 0.0), ("after", 3.0)):
    with open(out + "/data/%s.csv" % name, "w") as fh:
        fh.write("P,Q,R,z,w\n")
        i = 0
        for p in ("p1", "p2"):
            for q in ("q1", "q2", "q3"):
                for rr in ("r1", "r2"):
                    for k in range(5):
                        z = 10 + 4.0 * (q == "q3") + shift * (p == "p2") + noise[i]
                        w = 1 + 3.0 * (rr == "r2") + noise[(i * 7) % len(noise)]
                        fh.write("%s,%s,%s,%.6f,%.6f\n" % (p, q, rr, z, w))
                        i += 1
PY

# Enough rearrangements for the clean run to take a few seconds, so that the kills land
# inside it (fewer in the quick tier: sanitizer builds are several times slower).
B=500000; [ "${STURDY_QUICK:-0}" = 1 ] && B=150000
cat > "$T/plans/nightly.csv" <<EOF
name,data,response,factors,covariates,block,ss,permutations,method,flip,bootstrap-scheme,conf,alpha,seed,order,bootstrap
main3,../data/trial.csv,y1,"A,B,C",,,3,$B,,,,,,,,500
two-resp,../data/trial.csv,"y1, y2","A,B",,,2,$B,,,,,,,,500
with-dose,../data/trial.csv,y1,"A,B",dose,,1,$B,,,,,,,,500
blocked,../data/trial.csv,y2,"B,C",,site,3,$B,ter-braak,,,,,,,500
flipped,../data/trial.csv,y2,"A,B,C",,,3,$B,,yes,wild,,,,2,500
raw.a,../data/trial.csv,y1,A,,,3,$B,raw,no,,0.9,0.1,,,500
cells_bc,../data/trial.csv,y2,"B,C",,,2,$B,,,cells,,,7,,500
broken,../data/ragged.csv,y,g,,,,,,,,,,,,
exact,$T/data/tiny.csv,y,g,,,,5000,,,,,,,,200
bad-method,../data/trial.csv,y1,A,,,,,sideways,,,,,,,
EOF
NAMES="main3 two-resp with-dose blocked flipped raw.a cells_bc exact"

# --- the clean run ----------------------------------------------------------------
t0=$(date +%s.%N)
"$BIN" batch "$T/plans/nightly.csv" -o "$T/A" 2>"$T/a.err"; rc=$?
t1=$(date +%s.%N)
dur=$("$PY" -c "print(round($t1 - $t0, 3))")
check "clean run: exit 6 when one analysis fails" "$rc" 6
ok_all=1; for n in $NAMES; do [ -s "$T/A/$n.json" ] || ok_all=0; done
check "clean run: every good analysis has its result file" "$ok_all" 1
check "clean run: no result for the broken rows" \
    "$(ls "$T/A" | grep -c -e '^broken' -e '^bad-method')" 0
"$PY" - "$T/A" > "$T/statuses" <<'PY'
import csv, json, sys
rows = list(csv.DictReader(open(sys.argv[1] + "/summary.csv", newline="")))
print(" ".join("%s:%s:%s" % (r["name"], r["status"], r["exit_code"]) for r in rows))
bad = [r["name"] for r in rows if r["status"] == "ok" and
       int(r["terms"]) != sum(len(x["terms"]) for x in
                              json.load(open(sys.argv[1] + "/" + r["name"] + ".json"))["responses"])]
print("terms-mismatch:" + ",".join(bad))
PY
check "summary.csv: every row once, in plan order, with status and exit code" \
    "$(head -n 1 "$T/statuses")" \
    "main3:ok:0 two-resp:ok:0 with-dose:ok:0 blocked:ok:0 flipped:ok:0 raw.a:ok:0 cells_bc:ok:0 broken:failed:3 exact:ok:0 bad-method:failed:2"
check "summary.csv: terms column = response × term pairs in each JSON" \
    "$(tail -n 1 "$T/statuses")" "terms-mismatch:"
check "stderr: the failing rows say 'NAME: failed (exit N)'" \
    "$(grep -c -e 'broken: failed (exit 3): ../data/ragged.csv: line 3' \
               -e "bad-method: failed (exit 2): --method wants" "$T/a.err")" 2
check "stderr: no generic 'try --help' line for a row's usage error" \
    "$(grep -c "try 'sturdy" "$T/a.err")" 0
check "stderr: a cost line per computed analysis" \
    "$(grep -c -E "rearrangements × [0-9]+ terms? × 72 rows" "$T/a.err")" 7
check "result = the equivalent 'sturdy check' output, byte for byte" \
    "$(cd "$T/plans" && "$BIN" check ../data/trial.csv -y y1,y2 -f A,B --ss 2 -B $B \
        --bootstrap 500 --format json -q | cmp - "$T/A/two-resp.json" && echo same)" same
grep -q 'exact.*ok' "$T/A/summary.txt" && [ "$(grep -c '"exact": true' "$T/A/exact.json")" = 1 ] \
    && ok "exact enumeration row computed" || bad "exact enumeration row"
echo "     (clean run: $dur s)"

# --- kill -9 at three moments, then --resume --------------------------------------
# one kill in each third of the clean run's duration, at a random point within it
RANDOM=4242
for third in 0 1 2; do
    u=$RANDOM      # drawn here: a command substitution would reseed its own $RANDOM
    frac=$("$PY" -c "print(round(($third + 0.1 + 0.7 * $u / 32767) / 3, 3))")
    delay=$("$PY" -c "print(round($frac * $dur, 3))")
    rm -rf "$T/B"
    "$BIN" batch "$T/plans/nightly.csv" -o "$T/B" --quiet 2>/dev/null &
    pid=$!
    sleep "$delay"
    kill -9 "$pid" 2>/dev/null && killed=killed || killed="finished first"
    wait "$pid" 2>/dev/null
    # present: the results --resume keeps, those with their page (a kill between writing
    # a result and its page leaves the result alone, and the row is computed again)
    present=0; intact=1
    for n in $NAMES; do
        if [ -e "$T/B/$n.json" ]; then
            [ -e "$T/B/$n.html" ] && present=$((present + 1))
            cmp -s "$T/B/$n.json" "$T/A/$n.json" || intact=0
        fi
    done
    temps=$(ls "$T/B" 2>/dev/null | grep -c '\.tmp\.')
    check "kill at ${frac} of the run (${delay} s, $killed): each result there is complete" "$intact" 1
    mkdir -p "$T/B"
    : > "$T/B/main3.json.tmp.AbC123"       # as if a write had been cut off
    "$BIN" batch "$T/plans/nightly.csv" -o "$T/B" --resume 2>"$T/b.err"; rc=$?
    kept=$(grep -c ': kept ' "$T/b.err")
    echo "     (killed with $present of 8 results and $temps temporary files; resume kept $kept)"
    check "resume after kill $((third + 1)): exit 6" "$rc" 6
    check "resume after kill $((third + 1)): kept exactly the results that were there" \
        "$kept" "$present"
    same=1; for n in $NAMES; do cmp -s "$T/B/$n.json" "$T/A/$n.json" || same=0; done
    check "resume after kill $((third + 1)): every result byte-identical to the clean run" "$same" 1
    check "resume after kill $((third + 1)): same files, none left over" \
        "$(ls "$T/B" | tr '\n' ' ')" "$(ls "$T/A" | tr '\n' ' ')"
    cmp -s "$T/B/summary.csv" "$T/A/summary.csv" && cmp -s "$T/B/summary.txt" "$T/A/summary.txt" \
        && ok "resume after kill $((third + 1)): summaries byte-identical" \
        || bad "resume after kill $((third + 1)): summaries differ"
done

# --- resume recomputes what does not match ----------------------------------------
printf '{"version": 1, "input": {"file": ' > "$T/B/main3.json"          # cut short
"$BIN" batch "$T/plans/nightly.csv" -o "$T/B" --resume 2>"$T/c.err"
check "resume: a truncated result is computed again" \
    "$(grep -c '^\[1/10\] main3: kept' "$T/c.err"):$(cmp -s "$T/B/main3.json" "$T/A/main3.json" && echo same)" "0:same"
sed 's/^exact,\(.*\),200$/exact,\1,300/' "$T/plans/nightly.csv" > "$T/plans/edited.csv"
cp -r "$T/B" "$T/C"
"$BIN" batch "$T/plans/edited.csv" -o "$T/C" --resume 2>"$T/d.err"
check "resume: a row whose settings changed (bootstrap 200→300) is computed again" \
    "$(grep -c ': kept ' "$T/d.err"):$(grep -c '^\[9/10\] exact: kept' "$T/d.err")" "7:0"
check "the changed row's result has the new setting" \
    "$(grep -c '"bootstrap": 300,' "$T/C/exact.json")" 1

# --- resume compares content, not dates (issue 15, items 3 and 12) ----------------
# before.csv and after.csv differ (P shifted); a replacement dated in the past, as mv,
# cp -p, rsync -t or untar leave it, must not keep the stale result, and a copy of the
# same bytes with a new date must keep it. Settings the JSON does not record (missing
# tokens) count as well, and a factor name that is not UTF-8 (which the JSON writer
# shows as U+FFFD) does not make every resume compute again.
mkdir -p "$T/R"
cp "$T/data/before.csv" "$T/R/d.csv"
printf 'name,data,response,factors,permutations,bootstrap,missing\nr,d.csv,z,"P,Q",999,0,\n' \
    > "$T/R/plan.csv"
"$BIN" batch "$T/R/plan.csv" -q; rc=$?
cp "$T/R/plan.results/r.json" "$T/R/first.json"
key_data=$(sed -n 's/^data //p' "$T/R/plan.results/.r.key")
check "key file: exit 0, data digest = sha256sum of the data file" \
    "$rc:$key_data" "0:$(sha256sum < "$T/R/d.csv" | cut -d' ' -f1)"
cp "$T/data/after.csv" "$T/R/d.csv"
touch -d '2001-02-03 04:05:06' "$T/R/d.csv"          # older than the result
"$BIN" batch "$T/R/plan.csv" --resume 2>"$T/r.err"
fresh=$(cd "$T/R" && "$BIN" check d.csv -y z -f P,Q -B 999 --bootstrap 0 --format json -q |
        cmp -s - plan.results/r.json && echo fresh)
check "resume: data replaced by older-dated different bytes is computed again" \
    "$(grep -c ': kept ' "$T/r.err"):$fresh" "0:fresh"
cp "$T/R/plan.results/r.json" "$T/R/second.json"
cp "$T/data/after.csv" "$T/R/d2.csv"; mv "$T/R/d2.csv" "$T/R/d.csv"   # same bytes, newer
touch -d '+1 hour' "$T/R/d.csv"
"$BIN" batch "$T/R/plan.csv" --resume 2>"$T/r.err"
check "resume: the same bytes with a newer date are kept" \
    "$(grep -c '^\[1/1\] r: kept ' "$T/r.err"):$(cmp -s "$T/R/second.json" \
       "$T/R/plan.results/r.json" && echo same)" "1:same"
sed 's/,$/,NA/' "$T/R/plan.csv" > "$T/R/plan2.csv"; mv "$T/R/plan2.csv" "$T/R/plan.csv"
touch -d '2001-02-03 04:05:06' "$T/R/d.csv"          # dates alone would keep it
"$BIN" batch "$T/R/plan.csv" --resume 2>"$T/r.err"
check "resume: a changed setting the JSON does not record (missing NA) is computed again" \
    "$(grep -c ': kept ' "$T/r.err")" 0
"$PY" - "$T/R" <<'PY'
import sys
src = open(sys.argv[1] + "/d.csv", "rb").read().split(b"\n", 1)
open(sys.argv[1] + "/latin.csv", "wb").write(src[0].replace(b"P", b"Pr\xe9", 1) + b"\n" + src[1])
open(sys.argv[1] + "/latin_plan.csv", "wb").write(
    b'name,data,response,factors,permutations,bootstrap\nl,latin.csv,z,"Pr\xe9,Q",999,0\n')
PY
"$BIN" batch "$T/R/latin_plan.csv" -q; rc1=$?
"$BIN" batch "$T/R/latin_plan.csv" --resume 2>"$T/r.err"; rc2=$?
check "resume: a factor name that is not UTF-8 is kept the second time" \
    "$rc1:$rc2:$(grep -c '^\[1/1\] l: kept ' "$T/r.err")" "0:0:1"

# --- --compare --------------------------------------------------------------------
mkdir -p "$T/old" "$T/new"
printf 'name,data,response,factors,permutations,bootstrap\nshift,../data/before.csv,"z,w","P,Q,R",4999,0\nsame,../data/after.csv,z,"Q,R",4999,0\n' \
    > "$T/old/plan.csv"
printf 'name,data,response,factors,permutations,bootstrap\nshift,../data/after.csv,"z,w","P,Q,R",4999,0\nsame,../data/after.csv,z,"Q,R",4999,0\nfresh,../data/after.csv,w,R,999,0\n' \
    > "$T/new/plan.csv"
"$BIN" batch "$T/old/plan.csv" -q; rc1=$?
"$BIN" batch "$T/new/plan.csv" -q --compare "$T/old/plan.results"; rc2=$?
check "compare runs: exit 0 both" "$rc1:$rc2" "0:0"
expected=$("$PY" - "$T/old/plan.results" "$T/new/plan.results" <<'PY'
import json, sys
for name in ("shift", "same"):
    o, n = (json.load(open("%s/%s.json" % (d, name))) for d in sys.argv[1:3])
    for ro, rn in zip(o["responses"], n["responses"]):
        for to, tn in zip(ro["terms"], rn["terms"]):
            if to["verdict"] != tn["verdict"]:
                print("  %s / %s / %s: %s → %s" % (name, rn["response"], tn["term"],
                                                   to["verdict"], tn["verdict"]))
PY
)
check "compare: Python finds only z's term P changed (neither → both)" \
    "$expected" "  shift / z / P: neither → both"
listed=$(sed -n '/^Verdict changes/,$p' "$T/new/plan.results/summary.txt" | grep ' → ')
check "compare: summary.txt lists exactly that change" "$listed" "$expected"
check "compare: changed column (shift 1, same 0, fresh empty)" \
    "$(cut -d, -f1,7 "$T/new/plan.results/summary.csv" | tail -n +2 | tr '\n' ' ')" \
    "shift,1 same,0 fresh, "
check "compare: an analysis without an earlier result says so" \
    "$(grep -c 'fresh: no earlier result' "$T/new/plan.results/summary.txt")" 1

# --- plan errors: exit 3, nothing run, no folder ----------------------------------
plan_error() {   # label, plan text, expected message fragment
    printf '%s' "$2" > "$T/plans/err.csv"
    rm -rf "$T/plans/err.results"
    "$BIN" batch "$T/plans/err.csv" -q 2>"$T/e.err"; local rc=$?
    local named; named=$(grep -c -F -- "$3" "$T/e.err")
    local made; [ -e "$T/plans/err.results" ] && made=made || made=none
    check "plan error, $1: exit 3, message, no folder" "$rc:$named:$made" "3:1:none"
}
plan_error "unknown column" $'name,data,response,factors,colour\nx,../data/tiny.csv,y,g,red\n' \
    "err.csv: line 1, column 5 ('colour'): unknown column"
plan_error "duplicate name" $'name,data,response,factors\nx,../data/tiny.csv,y,g\nx,../data/tiny.csv,y,g\n' \
    "err.csv: line 3, column 1 ('name'): the name 'x' is already used on line 2"
plan_error "unsafe name" $'name,data,response,factors\n../x,../data/tiny.csv,y,g\n' \
    "err.csv: line 2, column 1 ('name'): '../x' is not a safe name"
plan_error "hidden name" $'name,data,response,factors\n.x,../data/tiny.csv,y,g\n' \
    "'.x' is not a safe name"
plan_error "missing column" $'name,data,response\nx,../data/tiny.csv,y\n' \
    "the required column 'factors' is missing"
plan_error "batch-wide option as a column" $'name,data,response,factors,threads\nx,../data/tiny.csv,y,g,2\n' \
    "column 5 ('threads'): 'threads' is an option of the whole batch"

# --- a library message in the summary names the option (hints.c) -----------------
cat > "$T/plans/hint.csv" <<'EOF'
name,data,response,factors,levels,term-order
lv,../data/tiny.csv,y,g,"h=a,b",
to,../data/tiny.csv,y,g,,"g,g"
EOF
"$BIN" batch "$T/plans/hint.csv" -q -o "$T/hint" 2>/dev/null
check "failed rows: the summary's messages name --levels and --term-order" \
    "$(grep -c -e "^lv,failed,2,\"an order of levels is given (--levels) for 'h'" \
                -e "^to,failed,2,the order of terms given (--term-order) lists 'g' twice" \
                "$T/hint/summary.csv")" 2

# --- the data table kept between rows (batch_data.c) ------------------------------
# Rows of one file share its parsed table only when the name, the bytes (SHA-256) and
# the table options (missing tokens, delimiter) are the same; each row's result must be
# byte for byte what `check` gives alone. Reference: `check` on the same file.
mkdir -p "$T/K"
cp "$T/data/before.csv" "$T/K/d.csv"
cp "$T/data/after.csv" "$T/K/e.csv"
tr ',' ';' < "$T/data/before.csv" > "$T/K/semi.csv"
cat > "$T/K/plan.csv" <<'EOF'
name,data,response,factors,permutations,bootstrap,missing,missing-only,delimiter
k1,d.csv,z,"P,Q",999,0,,,
k2,d.csv,w,"P,R",999,0,,,
k3,./d.csv,z,"P,Q",999,0,,,
k4,d.csv,z,"P,Q",999,0,,q3,
k5,d.csv,z,"P,Q",999,0,,q1,
k6,d.csv,z,"P,Q",999,0,q1,,
k10,e.csv,z,"P,Q",999,0,,,
k7,semi.csv,z,"P,Q",999,0,,,;
k8,d.csv,w,"Q,R",999,0,,,
k9,d.csv,w,"Q,R",999,0,,,;
EOF
"$BIN" batch "$T/K/plan.csv" -q -o "$T/K/res" 2>"$T/k.err"; rc=$?
same=0
while IFS=, read -r n d y f1 f2 b bb m mo dl; do
    [ "$n" = name ] || [ "$n" = k9 ] && continue
    f="${f1#\"},${f2%\"}"
    args=(-y "$y" -f "$f" -B 999 --bootstrap 0 --format json -q)
    [ -n "$m" ] && args+=(--missing "$m")
    [ -n "$mo" ] && args+=(--missing-only "$mo")
    [ -n "$dl" ] && args+=(--delimiter "$dl")
    if (cd "$T/K" && "$BIN" check "$d" "${args[@]}") | cmp -s - "$T/K/res/$n.json"; then
        same=$((same + 1))
    else
        echo "  row $n differs from check alone"
    fi
done < "$T/K/plan.csv"
check "kept table: every row equals check alone (other missing tokens, delimiter, name)" \
    "$rc:$same" "6:9"
check "kept table: the row named ./d.csv reports that name" \
    "$(grep -c '"file": "./d.csv"' "$T/K/res/k3.json")" 1
(cd "$T/K" && "$BIN" check d.csv -y w -f Q,R --delimiter ';' -q >/dev/null 2>&1); k9=$?
check "kept table: d.csv read with ';' fails as check alone does, with no result" \
    "$(grep -c "^k9,failed,$k9," "$T/K/res/summary.csv"):$([ -e "$T/K/res/k9.json" ] || echo none)" \
    "1:none"

# The file replaced while a row runs: the next row of the same name must see the new
# bytes, and each row's key must digest the bytes its analysis read.
cp "$T/data/before.csv" "$T/K/d.csv"
printf 'name,data,response,factors,permutations,bootstrap\nm1,d.csv,z,"P,Q",%s,0\nm2,d.csv,z,"P,Q",999,0\n' \
    "$B" > "$T/K/plan2.csv"
"$BIN" batch "$T/K/plan2.csv" -o "$T/K/res2" 2>"$T/m.err" & bpid=$!
swapped=no
for _ in $(seq 3000); do
    if grep -q '^\[1/2\] m1:' "$T/m.err" 2>/dev/null; then
        grep -q '^\[1/2\] m1: ok' "$T/m.err" || {
            cp "$T/data/after.csv" "$T/K/d.new" && mv "$T/K/d.new" "$T/K/d.csv" && swapped=yes; }
        break
    fi
    sleep 0.01
done
wait "$bpid"; rc=$?
# the swap counts only if row 1 was still running when it was made
[ "$swapped" = yes ] && grep -q '^\[2/2\]' "$T/m.err" || swapped="no: $(head -c 300 "$T/m.err")"
m2=$(cd "$T/K" && "$BIN" check d.csv -y z -f P,Q -B 999 --bootstrap 0 --format json -q |
     cmp -s - res2/m2.json && echo new)
check "kept table: a file replaced while a row runs is read again by the next row" \
    "$rc:$swapped:$m2" "0:yes:new"
check "kept table: each row's key digests the bytes its analysis read" \
    "$(sed -n 's/^data //p' "$T/K/res2/.m1.key"):$(sed -n 's/^data //p' "$T/K/res2/.m2.key")" \
    "$(sha256sum < "$T/data/before.csv" | cut -d' ' -f1):$(sha256sum < "$T/data/after.csv" | cut -d' ' -f1)"

# --- usage ------------------------------------------------------------------------
"$BIN" batch 2>/dev/null; check "no plan: usage error" "$?" 2
"$BIN" batch "$T/plans/nightly.csv" --threads x 2>/dev/null; check "bad --threads: usage error" "$?" 2
check "--help lists the plan columns and an example" \
    "$("$BIN" batch --help | grep -c -e '^Plan columns' -e '^Example plan')" 2
mkdir -p "$T/ro"; : > "$T/ro/blocker"
"$BIN" batch "$T/plans/nightly.csv" -o "$T/ro/blocker" -q 2>/dev/null
check "results folder cannot be made: exit 5" "$?" 5

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
