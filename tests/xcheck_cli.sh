#!/usr/bin/env bash
# xcheck_cli.sh — the command line: exit codes, strict option parsing, atomic output,
# format choice, and that every format parses (JSON and CSV read back by Python's own
# json and csv modules, the independent reference here). Expectations come from
# DESIGN.md (exit codes, options) and the writers' documented layout.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY="${PYTHON:-/usr/bin/python3}"
DEMO=examples/demo.csv
pass=0; fail=0
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

ok()   { pass=$((pass + 1)); echo "ok    $1"; }
bad()  { fail=$((fail + 1)); echo "FAIL  $1"; }
# expect_rc NAME WANT CMD...: run, compare the exit status
expect_rc() {
    local name="$1" want="$2"; shift 2
    "$@" >"$T/out" 2>"$T/err"; local rc=$?
    if [ "$rc" = "$want" ]; then ok "$name: exit $rc"
    else bad "$name: exit $rc, expected $want ($(head -c 200 "$T/err"))"; fi
}
has() {   # has NAME FILE TEXT
    if grep -qF -- "$3" "$2"; then ok "$1"; else bad "$1: '$3' not in $(head -c 300 "$2")"; fi
}

if [ ! -x "$BIN" ]; then
    bad "binary $BIN is missing (build it with make)"
    echo "$pass passed, $fail failed"; exit 1
fi

# usage errors → 2 with "sturdy: …" and a hint
M=(-y build_min -f runner,cache,tests)
expect_rc "no command" 2 "$BIN"
expect_rc "unknown command" 2 "$BIN" frobnicate
expect_rc "no data file" 2 "$BIN" check "${M[@]}"
expect_rc "no -y" 2 "$BIN" check $DEMO -f runner
expect_rc "no -f" 2 "$BIN" check $DEMO -y build_min
expect_rc "two data files" 2 "$BIN" check $DEMO $DEMO "${M[@]}"
expect_rc "-B with trailing junk" 2 "$BIN" check $DEMO "${M[@]}" -B 99x
has "message names the bad value" "$T/err" "sturdy: --permutations wants a whole number, not '99x'"
has "message points to help" "$T/err" "try 'sturdy check --help'"
expect_rc "-B negative" 2 "$BIN" check $DEMO "${M[@]}" -B -1
expect_rc "--bootstrap with blank" 2 "$BIN" check $DEMO "${M[@]}" --bootstrap " 5"
expect_rc "--conf 1" 2 "$BIN" check $DEMO "${M[@]}" --conf 1
expect_rc "--conf 95" 2 "$BIN" check $DEMO "${M[@]}" --conf 95
expect_rc "--alpha nan" 2 "$BIN" check $DEMO "${M[@]}" --alpha nan
expect_rc "--ss 4" 2 "$BIN" check $DEMO "${M[@]}" --ss 4
expect_rc "--method unknown" 2 "$BIN" check $DEMO "${M[@]}" --method exact
expect_rc "--bootstrap-scheme unknown" 2 "$BIN" check $DEMO "${M[@]}" --bootstrap-scheme pairs
expect_rc "--shard 0/4" 2 "$BIN" check $DEMO "${M[@]}" --shard 0/4
expect_rc "--shard 5/4" 2 "$BIN" check $DEMO "${M[@]}" --shard 5/4
expect_rc "--shard junk" 2 "$BIN" check $DEMO "${M[@]}" --shard 1-4
expect_rc "--shard with text format" 2 "$BIN" check $DEMO "${M[@]}" --shard 1/2 --format text
expect_rc "--delimiter two chars" 2 "$BIN" check $DEMO "${M[@]}" --delimiter ';;'
expect_rc "--max-levels 0" 2 "$BIN" check $DEMO "${M[@]}" --max-levels 0
expect_rc "empty name in -f" 2 "$BIN" check $DEMO -y build_min -f runner,,cache
expect_rc "unknown option" 2 "$BIN" check $DEMO "${M[@]}" --no-such-option
expect_rc "missing value" 2 "$BIN" check $DEMO "${M[@]}" --seed
expect_rc "unknown column" 2 "$BIN" check $DEMO -y build_min -f runner,colour
expect_rc "demo refuses -f" 2 "$BIN" demo -f runner
expect_rc "demo refuses a file" 2 "$BIN" demo $DEMO
# other statuses
expect_rc "unreadable data → 3" 3 "$BIN" check "$T/none.csv" "${M[@]}"
expect_rc "help" 0 "$BIN" check --help
has "help has an example" "$T/out" "Example"
expect_rc "version" 0 "$BIN" --version
has "version printed" "$T/out" "sturdy "

# a run: text by default, stderr quiet when not a terminal
expect_rc "demo text" 0 "$BIN" demo -B 199 --bootstrap 50
has "text opens with the headline" "$T/out" "In short"
if [ ! -s "$T/err" ]; then ok "nothing on stderr when it is not a terminal"
else bad "stderr not empty: $(head -c 200 "$T/err")"; fi
if "$PY" -c "import sys; sys.exit(max(len(l) for l in open(sys.argv[1], encoding='utf-8').read().split('\n')) > 100)" "$T/out"; then
    ok "text lines ≤ 100 characters"; else bad "a text line is over 100 characters"; fi
if ! grep -q $'\033' "$T/out"; then ok "no colour when stdout is not a terminal"
else bad "colour codes in redirected output"; fi

# JSON and CSV parse with Python's own modules
expect_rc "demo json" 0 "$BIN" demo -B 199 --bootstrap 50 --format json
if "$PY" - "$T/out" <<'EOF'
import json, sys
d = json.load(open(sys.argv[1]))
keys = list(d)
assert keys == ["version", "input", "design", "settings", "notes", "family", "responses"], keys
t = d["responses"][0]["terms"][0]
assert list(t)[:7] == ["term", "factors", "df", "ss", "ms", "f", "p"], list(t)
assert d["settings"]["permutations"] == 199 and d["settings"]["bootstrap"] == 50
assert "thread" not in open(sys.argv[1]).read()
EOF
then ok "json parses (python json) with the contract's keys"; else bad "json does not parse or keys differ"; fi
expect_rc "demo csv" 0 "$BIN" demo -B 199 --bootstrap 50 --format csv
if "$PY" - "$T/out" <<'EOF'
import csv, sys
rows = list(csv.reader(open(sys.argv[1], newline="")))
assert rows[0][:3] == ["response", "term", "df"], rows[0]
assert len(rows) == 1 + 7 + 2, len(rows)      # 3 factors: 7 terms, residual, total
assert [r[1] for r in rows[-2:]] == ["residual", "total"], rows[-2:]
assert all(len(r) == len(rows[0]) for r in rows)
EOF
then ok "csv parses (python csv): header + 7 term rows + residual + total"; else bad "csv shape"; fi

# shard output: partial JSON with raw material
expect_rc "shard 1/2" 0 "$BIN" demo -B 199 --bootstrap 50 --shard 1/2
if "$PY" - "$T/out" <<'EOF'
import json, sys
d = json.load(open(sys.argv[1]))
assert d["shard"]["index"] == 1 and d["shard"]["count"] == 2
assert len(d["data_checksum"]) == 16
assert "raw" in d["responses"][0]["terms"][0]
EOF
then ok "shard json carries shard, checksum and raw"; else bad "shard json"; fi

# output files: complete or absent, format from the extension
expect_rc "-o FILE.json" 0 "$BIN" demo -B 99 --bootstrap 20 -o "$T/r.json"
if "$PY" -c "import json,sys; json.load(open(sys.argv[1]))" "$T/r.json"; then
    ok "-o .json picks JSON"; else bad "-o .json did not write JSON"; fi
if [ ! -s "$T/out" ]; then ok "-o leaves stdout empty"; else bad "-o also wrote stdout"; fi
expect_rc "-o FILE.csv" 0 "$BIN" demo -B 99 --bootstrap 20 -o "$T/r.csv" --quiet
has "-o .csv picks CSV" "$T/r.csv" "response,term,df"
expect_rc "-o into a missing folder → 5" 5 "$BIN" demo -B 99 -o "$T/nofolder/r.txt"
has "message names the file" "$T/err" "$T/nofolder/r.txt"
expect_rc "-o onto a folder → 5" 5 "$BIN" demo -B 99 -o "$T"
expect_rc "-o /dev/null works in place" 0 "$BIN" demo -B 99 -o /dev/null
if [ -c /dev/null ]; then ok "/dev/null is still a device"; else bad "/dev/null was replaced"; fi
expect_rc "stdout full → 5" 5 sh -c "\"$BIN\" demo -B 99 > /dev/full"
if [ -z "$(ls "$T" | grep '\.tmp\.')" ]; then ok "no temporary files left behind"
else bad "temporary files left: $(ls "$T")"; fi

# standard input and other delimiters
expect_rc "data from stdin" 0 sh -c "\"$BIN\" check - -y build_min -f runner,cache -B 99 \
    --bootstrap 0 --format json < $DEMO"
has "stdin source named" "$T/out" '"file": "<stdin>"'
tr ',' ';' < $DEMO | sed 's/;NA;/;-;/; s/;NA$/;-/' > "$T/semi.csv"
expect_rc "--delimiter ';' --missing -" 0 "$BIN" check "$T/semi.csv" -y build_min -f runner \
    --delimiter ';' --missing=- -B 99 --bootstrap 0 --format json
has "missing token honoured" "$T/out" '"rows_used": 69'

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
