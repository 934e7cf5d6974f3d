#!/usr/bin/env bash
# xcheck_status.sh — exit codes, statuses and the report's words tell the truth: a model
# where nothing can be tested exits 4 and is "untested" in a batch; the one cause leads
# the report; the run section says why nothing was resampled and how flips treat a
# block; the outlier check says when it cannot run; a row missing in one of two
# responses names every missing column; and the small words (rows each, empty cells,
# main effects only, --compare, long term names, --shard on a terminal, merge's
# default, CSV residual and total rows). Expectations come from the README (exit codes,
# batch summaries, the CSV layout) and rearrange.c (flips ignore the block); Python's
# csv and json modules read the outputs back. The crafted files are in
# tests/data/status/ (README.md there). One line per check, "N passed, N failed" last.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY=/usr/bin/python3
D=tests/data/status
pass=0; fail=0
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

ok()  { pass=$((pass + 1)); echo "ok    $1"; }
bad() { fail=$((fail + 1)); echo "FAIL  $1"; }
expect_rc() {   # expect_rc NAME WANT CMD...
    local name="$1" want="$2"; shift 2
    "$@" >"$T/out" 2>"$T/err"; local rc=$?
    if [ "$rc" = "$want" ]; then ok "$name: exit $rc"
    else bad "$name: exit $rc, expected $want ($(head -c 300 "$T/err"))"; fi
}
has() {   # has NAME FILE TEXT
    if grep -qF -- "$3" "$2"; then ok "$1"; else bad "$1: '$3' not in $(head -c 400 "$2")"; fi
}
lacks() { # lacks NAME FILE TEXT
    if grep -qF -- "$3" "$2"; then bad "$1: '$3' should not be in the output"; else ok "$1"; fi
}
count() { # count NAME FILE TEXT WANT: lines holding TEXT
    local n; n=$(grep -cF -- "$3" "$2")
    if [ "$n" = "$4" ]; then ok "$1 ($n)"; else bad "$1: $n lines with '$3', expected $4"; fi
}

if [ ! -x "$BIN" ]; then
    bad "binary $BIN is missing (make sturdy)"; echo "$pass passed, $fail failed"; exit 1
fi
REP=(check $D/replicate_as_factor.csv -y strength -f temp,primer,rep -B 99 -q)

# --- 10: nothing testable → exit 4, with the message; the report is still written
expect_rc "no residual df: nothing tested" 4 "$BIN" "${REP[@]}"
has "stderr says none of the requested terms could be tested" "$T/err" \
    "none of the requested terms could be tested: no residual degrees of freedom"
has "the report is written all the same" "$T/out" "── Response strength"
cp "$T/out" "$T/rep.txt"
expect_rc "a model with one untestable term still exits 0" 0 "$BIN" check \
    $D/benches_empty_cell.csv -y height_cm -f light,water,feed --block bench -B 0 \
    --bootstrap 0 --ss 1 -q

# --- 11: the cause first and once; the run section says why nothing was resampled
first=$(sed -n '/^In short/{n;p;q}' "$T/rep.txt")
case "$first" in
  *"Nothing could be tested: no residual degrees of freedom"*) ok "the cause is the first line of the headline";;
  *) bad "headline starts with: $first";;
esac
count "the cause is stated once in the headline" "$T/rep.txt" "Nothing could be tested" 1
has "the replicate column is named" "$T/rep.txt" "If 'rep' numbers the replicates or runs"
lacks "no '(--bootstrap 0)' when the bootstrap was not switched off" "$T/rep.txt" \
    "none (--bootstrap 0)"
has "bootstrap line says why" "$T/rep.txt" \
    "none: with no residual degrees of freedom there are no"
has "resampling line says why" "$T/rep.txt" \
    "none: with no residual degrees of freedom there is no F to"
lacks "no footnote claims the bootstrap was not asked for" "$T/rep.txt" \
    "no bootstrap was asked for"

# --- 15: outliers are not checked without residual df
has "outlier check not available" "$T/rep.txt" \
    "outliers      check not available (no residual degrees of freedom)"
lacks "no claim of no outliers" "$T/rep.txt" "no studentized residual beyond"

# --- 10: batch: the untested row is marked, the summary counts tested terms
mkdir -p "$T/plan"
cp $D/replicate_as_factor.csv $D/benches_empty_cell.csv "$T/plan/"
cat >"$T/plan/plan.csv" <<'EOF'
name,data,response,factors,block,ss,permutations,bootstrap
reps,replicate_as_factor.csv,strength,"temp,primer,rep",,3,99,0
bench,benches_empty_cell.csv,height_cm,"light,water,feed",bench,1,99,0
EOF
expect_rc "batch with an untested row → 6" 6 "$BIN" batch "$T/plan/plan.csv" -o "$T/res" --quiet
if "$PY" - "$T/res/summary.csv" <<'EOF'
import csv, sys
rows = {r["name"]: r for r in csv.DictReader(open(sys.argv[1], encoding="utf-8"))}
r, b = rows["reps"], rows["bench"]
assert (r["status"], r["exit_code"], r["terms"]) == ("untested", "4", "0"), r
assert "none of the requested terms could be tested" in r["message"], r
# Type I with an empty cell: the three-way term has no df left; the others are tested
assert b["status"] == "ok" and b["exit_code"] == "0", b
EOF
then ok "summary.csv: untested row with exit 4 and its reason; the other ok"
else bad "summary.csv rows: $(cat "$T/res/summary.csv")"; fi
if "$PY" - "$T/res/bench.json" "$T/res/summary.csv" <<'EOF'
import csv, json, sys
doc = json.load(open(sys.argv[1], encoding="utf-8"))
tested = sum(t["f"] is not None for r in doc["responses"] for t in r["terms"])
total = sum(len(r["terms"]) for r in doc["responses"])
rows = {r["name"]: r for r in csv.DictReader(open(sys.argv[2], encoding="utf-8"))}
assert tested < total, (tested, total)        # the file has an untestable term
assert rows["bench"]["terms"] == str(tested), (rows["bench"]["terms"], tested, total)
EOF
then ok "summary.csv terms counts the terms with an F, not all terms"
else bad "summary terms count: $(cat "$T/res/summary.csv")"; fi
has "summary.txt marks the row" "$T/res/summary.txt" "untested (exit 4): 0 of 7 terms tested"
has "summary.txt head counts it" "$T/res/summary.txt" "1 with no term tested"
has "summary.txt says tested terms" "$T/res/summary.txt" "bench  ok: 7 tested terms of 8"

# --- 17: --compare words: a term the new result lacks, a term without a verdict
sed -i 's/^bench,\(.*\),1,99,0$/bench,\1,1,0,0/' "$T/plan/plan.csv"
sed -i 's/^reps,replicate_as_factor.csv,strength,"temp,primer,rep",,3,99,0$/reps,replicate_as_factor.csv,strength,"temp,primer",,3,99,0/' "$T/plan/plan.csv"
expect_rc "second batch with --compare" 0 "$BIN" batch "$T/plan/plan.csv" -o "$T/res2" \
    --compare "$T/res" --quiet
has "a term gone is said in words" "$T/res2/summary.txt" "(term not in this result)"
has "a term without a verdict is said in words" "$T/res2/summary.txt" "(no verdict)"
lacks "no bare 'absent'" "$T/res2/summary.txt" "→ absent"
lacks "no bare 'none'" "$T/res2/summary.txt" "none →"

# --- 12: flips ignore the block; the run section, the notes and the README agree
expect_rc "--flip with --block" 0 "$BIN" check $D/benches_empty_cell.csv -y height_cm \
    -f light,water --block bench --flip -B 99 --bootstrap 0 -q
tr -s ' \n' ' ' <"$T/out" >"$T/flat"
has "run section: flips row by row, the block does not restrict them" "$T/flat" \
    "sign-flipping, 99 random rearrangements, row by row (the block 'bench' does not restrict the flips"
lacks "run section does not claim flips within the block" "$T/flat" "within levels of bench"
has "notes say the same" "$T/flat" "signs are flipped row by row: the block 'bench' does not restrict the flips"
if "$PY" - "$T/out" <<'EOF'
import re, sys
text = open(sys.argv[1], encoding="utf-8").read()
row = [l for l in text.splitlines() if l.startswith("  bench ")][0]
assert re.fullmatch(r"0\.\d+|<0\.0001", row.split()[5]), row   # the block's p resampled
EOF
then ok "under --flip the block term gets a resampled p (rearrange.c: one block)"
else bad "block row under --flip: $(grep '^  bench ' "$T/out")"; fi
tr -s ' \n' ' ' <README.md >"$T/readme"
has "README says the block does not restrict the flips" "$T/readme" \
    "a block does not restrict the flips"
expect_rc "permutation with --block" 0 "$BIN" check $D/benches_empty_cell.csv -y height_cm \
    -f light,water --block bench -B 99 --bootstrap 0 -q
tr -s ' \n' ' ' <"$T/out" >"$T/flat"
has "without --flip: within levels of the block" "$T/flat" "within levels of bench"

# --- 16: both missing columns named; the rule stated
expect_rc "two responses" 0 "$BIN" check $D/two_responses.csv -y y1,y2 -f a,b -B 0 \
    --bootstrap 0 --format json -q
if "$PY" - "$T/out" <<'EOF'
import json, sys
d = json.load(open(sys.argv[1], encoding="utf-8"))["input"]["rows_dropped"]
why = {r["row"]: r["reason"] for r in d}
assert why[2] == "missing value in column 'y2'; the row is left out of every response", why
assert why[3] == "missing values in columns 'y1' and 'y2'", why
EOF
then ok "dropped rows name every missing column and say the row leaves both responses"
else bad "dropped reasons: $(grep -A2 reason "$T/out" | head -12)"; fi

# --- 17: small words
expect_rc "balanced design" 0 "$BIN" check $D/long_names.csv -y pull_off_MPa \
    -f cure_temperature_c,primer_type,surface_prep -B 0 --bootstrap 0 -q
tr -s ' \n' ' ' <"$T/out" >"$T/flat"
has "'3 rows each', not '3–3'" "$T/flat" "8 of 8 cells filled, 3 rows each, balanced."
if grep -qE '^  cure_temperature_c×primer_type +1 +[0-9.e-]+ +[0-9.e-]+ ' "$T/out"; then
    ok "a 30-character term keeps its numbers on its line (tests table)"
else bad "30-character term row: $(grep -A1 '^  cure_temperature_c×primer_type' "$T/out" | head -2)"; fi
if grep -qE '^  cure_temperature_c×primer_type +[0-9.e-]+ +[0-9.e-]+ ' "$T/out"; then
    ok "a 30-character term keeps its numbers on its line (effect sizes)"
else bad "30-character term in the effect sizes"; fi
expect_rc "--order 1" 0 "$BIN" check $D/long_names.csv -y pull_off_MPa \
    -f cure_temperature_c,primer_type,surface_prep --order 1 -B 0 --bootstrap 0 -q
tr -s ' \n' ' ' <"$T/out" >"$T/flat"
has "--order 1 says main effects only" "$T/flat" "main effects only (--order 1)"
lacks "not 'interactions up to order 1'" "$T/flat" "up to order 1"
expect_rc "one empty cell" 0 "$BIN" check $D/benches_empty_cell.csv -y height_cm \
    -f light,water,feed --ss 1 -B 0 --bootstrap 0 -q
tr -s ' \n' ' ' <"$T/out" >"$T/flat"
has "'1 of the 8 possible cells is empty'" "$T/flat" "1 of the 8 possible cells is empty"
lacks "no 'cells are empty' for one cell" "$T/flat" "1 of the 8 possible cells are empty"

# CSV: residual and total rows
expect_rc "csv" 0 "$BIN" check $D/long_names.csv -y pull_off_MPa \
    -f cure_temperature_c,primer_type -B 0 --bootstrap 0 --format csv -q
if "$PY" - "$T/out" <<'EOF'
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1], encoding="utf-8")))
res, tot = rows[-2], rows[-1]
assert res["term"] == "residual" and tot["term"] == "total", (res["term"], tot["term"])
assert res["df"] == "20" and tot["df"] == "23", (res["df"], tot["df"])
ss = sum(float(r["ss"]) for r in rows[:-2]) + float(res["ss"])
assert abs(ss - float(tot["ss"])) <= 1e-9 * float(tot["ss"]), (ss, tot["ss"])  # balanced
assert abs(float(res["ms"]) - float(res["ss"]) / 20) <= 1e-12 * float(res["ms"])
assert tot["ms"] == "" and tot["f"] == "" and res["p"] == ""
assert len({len(r) for r in rows}) == 1 and None not in rows[-1]
EOF
then ok "csv ends with residual and total rows (df, ss, ms; SS add up in a balanced design)"
else bad "csv residual/total rows: $(tail -2 "$T/out" | cut -c1-200)"; fi
expect_rc "csv without residual df" 4 "$BIN" "${REP[@]}" --format csv
if "$PY" - "$T/out" <<'EOF'
import csv, sys
res = list(csv.DictReader(open(sys.argv[1], encoding="utf-8")))[-2]
assert res["term"] == "residual" and res["df"] == "0", res
assert res["note"].startswith("no residual degrees of freedom"), res["note"]
EOF
then ok "csv residual row carries the residual note"
else bad "csv residual note: $(tail -2 "$T/out" | cut -c1-300)"; fi

# --shard: refused on a terminal, fine into a pipe or -o
if "$PY" - "$BIN" <<'EOF'
import os, pty, sys
pid, fd = pty.fork()
if pid == 0:
    os.execv(sys.argv[1], [sys.argv[1], "demo", "-B", "99", "--bootstrap", "0", "--shard", "1/2", "-q"])
out = b""
while True:
    try:
        chunk = os.read(fd, 4096)
    except OSError:
        break
    if not chunk:
        break
    out += chunk
_, status = os.waitpid(pid, 0)
assert os.WEXITSTATUS(status) == 2, (os.WEXITSTATUS(status), out[:300])
assert b"give -o FILE.json" in out and b'"version"' not in out, out[:300]
EOF
then ok "--shard without -o on a terminal: usage error, no JSON"
else bad "--shard on a terminal was not refused"; fi
expect_rc "--shard into a pipe" 0 "$BIN" demo -B 99 --bootstrap 0 --shard 1/2 -q
cp "$T/out" "$T/p1.json"
expect_rc "--shard 2/2 with -o" 0 "$BIN" demo -B 99 --bootstrap 0 --shard 2/2 -q -o "$T/p2.json"

# merge: text by default on standard output, like check; JSON by -o's extension
expect_rc "merge to stdout" 0 "$BIN" merge "$T/p1.json" "$T/p2.json" -q
has "merge writes text by default" "$T/out" "factorial ANOVA, checked by resampling"
expect_rc "merge -o .json" 0 "$BIN" merge "$T/p1.json" "$T/p2.json" -q -o "$T/m.json"
if "$PY" -c "import json,sys; json.load(open(sys.argv[1]))" "$T/m.json"; then
    ok "merge -o FILE.json writes JSON"; else bad "merge -o FILE.json is not JSON"; fi

# --- 20: --term-order usage errors (the sequence itself: xcheck_anova_r.sh against R)
expect_rc "--term-order with an unknown term" 2 "$BIN" check $D/long_names.csv \
    -y pull_off_MPa -f cure_temperature_c,primer_type -B 0 --term-order primer_type×nope
has "names the unknown term" "$T/err" "the model has no term 'primer_type×nope'"
has "names the option" "$T/err" "the order of terms given (--term-order)"
expect_rc "--term-order interaction before its main effect" 2 "$BIN" check \
    $D/long_names.csv -y pull_off_MPa -f cure_temperature_c,primer_type -B 0 \
    --term-order primer_type×cure_temperature_c,primer_type
has "says which term contains which" "$T/err" \
    "(--term-order) puts 'cure_temperature_c×primer_type' before 'primer_type'"
expect_rc "--term-order main effects reversed" 0 "$BIN" check $D/long_names.csv \
    -y pull_off_MPa -f cure_temperature_c,primer_type -B 0 --bootstrap 0 --ss 1 \
    --term-order primer_type --format csv
if [ "$(cut -d, -f2 "$T/out" | sed -n '2,4p' | tr '\n' ' ')" = \
     "primer_type cure_temperature_c cure_temperature_c×primer_type " ]; then
    ok "listed terms first, the rest after in the default order"
else bad "order: $(cut -d, -f2 "$T/out" | tr '\n' ' ')"; fi

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
