#!/usr/bin/env bash
# xcheck_badinput.sh — `sturdy check` on malformed data and bad command lines: the exit
# code, a message on stderr that names the file (or the option) and says what is wrong,
# and no output file left behind (no partial results).
#
# Source of the expectations: tests/data/bad/README.md for the data files (exit code and
# message fragment per file, the path as given on the command line in the message), and
# DESIGN.md's exit codes for the usage cases (2 usage, 3 bad input data, 4 model cannot
# be tested, 5 output could not be written). One line per case, "N passed, N failed"
# last, exit 1 on any failure.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
BAD=tests/data/bad
pass=0; fail=0

give_up() {
    echo "FAIL $1"
    echo "$pass passed, $((fail + 1)) failed"
    exit 1
}

[ -x "$BIN" ] || give_up "binary $BIN not built (make sturdy)"
[ -r "$BAD/README.md" ] || give_up "$BAD/README.md missing"
work=$(mktemp -d) || give_up "mktemp failed"
trap 'rm -rf "$work"' EXIT

# expect NAME WANT_RC OUTFILE STDIN FRAGMENT... -- ARGS...: runs sturdy, checks the exit
# code, that stderr holds every fragment (fixed strings), and that OUTFILE is absent.
expect() {
    local name="$1" want="$2" outfile="$3" input="$4"; shift 4
    local frags=()
    while [ "$1" != "--" ]; do frags+=("$1"); shift; done
    shift
    local rc
    timeout 30 "$BIN" "$@" <"$input" >"$work/stdout" 2>"$work/stderr"; rc=$?
    local why=""
    [ "$rc" = "$want" ] || why="$why exit $rc (want $want);"
    local f
    for f in "${frags[@]}"; do
        grep -qF -- "$f" "$work/stderr" || why="$why stderr lacks '$f';"
    done
    [ -s "$work/stderr" ] || why="$why stderr is empty;"
    if [ -n "$outfile" ] && [ -e "$outfile" ]; then
        why="$why output file $outfile was left behind;"
        rm -f "$outfile"
    fi
    local msg; msg=$(head -c 300 "$work/stderr" | tr '\n' ' ')
    if [ -z "$why" ]; then
        echo "ok   $name: exit $rc, message: $msg"; pass=$((pass + 1))
    else
        echo "FAIL $name:$why message: $msg"; fail=$((fail + 1))
    fi
}

trim() { # strip surrounding blanks, without forking
    local v="$1"
    v="${v#"${v%%[![:space:]]*}"}"; v="${v%"${v##*[![:space:]]}"}"
    printf '%s' "$v"
}

# ---- the malformed data files, as the README lists them
nfiles=0
while IFS='|' read -r _ file stage _ code frag _; do
    file=$(trim "$file"); stage=$(trim "$stage"); code=$(trim "$code")
    frag=$(trim "$frag"); frag=${frag#\`}; frag=${frag%\`}
    case "$file" in *.csv) ;; *) continue ;; esac
    [ -e "$BAD/$file" ] || { echo "FAIL $file: listed in the README but missing"; fail=$((fail + 1)); continue; }
    nfiles=$((nfiles + 1))
    out="$work/out_${file%.csv}.json"
    expect "$file ($stage stage; source: $BAD/README.md)" "$code" "$out" /dev/null \
        "$frag" "$BAD/$file" -- \
        check "$BAD/$file" -y yield -f variety,dose -B 0 --bootstrap 0 -o "$out"
done < <(grep -E '^\| *[A-Za-z0-9_]+\.csv *\|' "$BAD/README.md")
listed=$(ls "$BAD"/*.csv | wc -l)
if [ "$nfiles" -eq "$listed" ]; then
    echo "ok   README lists all $listed files in $BAD"; pass=$((pass + 1))
else
    echo "FAIL README lists $nfiles files, $BAD holds $listed"; fail=$((fail + 1))
fi

# ---- the same malformed table read from standard input
out="$work/out_stdin.json"
expect "ragged_short.csv on standard input (source: $BAD/README.md)" 3 "$out" \
    "$BAD/ragged_short.csv" "line 4 (row 3): 3 fields, but the header has 4" -- \
    check - -y yield -f variety,dose -B 0 --bootstrap 0 -o "$out"

# ---- bad command lines on a valid table (source: DESIGN.md exit codes)
good="$work/trial.csv"
printf 'plot,variety,dose,yield\n1,Amber,low,4.1\n2,Amber,low,4.4\n3,Amber,high,5.0\n4,Amber,high,5.3\n5,Birch,low,3.8\n6,Birch,low,3.6\n7,Birch,high,4.9\n8,Birch,high,5.2\n' >"$good"
out="$work/out_usage.json"
base=(-B 0 --bootstrap 0 -o "$out")
usage() { # NAME RC FRAGMENT ARGS...
    local name="$1" rc="$2" frag="$3"; shift 3
    expect "$name (source: DESIGN.md exit codes)" "$rc" "$out" /dev/null "$frag" -- "$@"
}
usage "unknown option --frobnicate" 2 "frobnicate" check "$good" -y yield -f variety,dose --frobnicate "${base[@]}"
usage "unknown command" 2 "frobnicate" frobnicate "$good"
usage "no command" 2 "" "${base[@]}"
usage "missing -y" 2 "-y" check "$good" -f variety,dose "${base[@]}"
usage "missing -f" 2 "-f" check "$good" -y yield "${base[@]}"
usage "missing data file argument" 2 "" check -y yield -f variety,dose "${base[@]}"
usage "--ss 4" 2 "ss" check "$good" -y yield -f variety,dose --ss 4 "${base[@]}"
usage "--conf 2" 2 "(e.g. 0.95)" check "$good" -y yield -f variety,dose --conf 2 "${base[@]}"
usage "--conf 0" 2 "conf" check "$good" -y yield -f variety,dose --conf 0 "${base[@]}"
usage "--alpha 1.5 (the example is an alpha)" 2 "(e.g. 0.05)" check "$good" -y yield -f variety,dose --alpha 1.5 "${base[@]}"
usage "--shard 3/2" 2 "shard" check "$good" -y yield -f variety,dose --shard 3/2 "${base[@]}"
usage "--shard 0/2" 2 "shard" check "$good" -y yield -f variety,dose --shard 0/2 "${base[@]}"
usage "--shard two" 2 "shard" check "$good" -y yield -f variety,dose --shard two "${base[@]}"
usage "--method foo" 2 "foo" check "$good" -y yield -f variety,dose --method foo "${base[@]}"
usage "--bootstrap-scheme foo" 2 "foo" check "$good" -y yield -f variety,dose --bootstrap-scheme foo "${base[@]}"
usage "--format xml" 2 "xml" check "$good" -y yield -f variety,dose --format xml "${base[@]}"
usage "-B abc" 2 "abc" check "$good" -y yield -f variety,dose -B abc --bootstrap 0 -o "$out"
usage "--bootstrap 12x" 2 "12x" check "$good" -y yield -f variety,dose -B 0 --bootstrap 12x -o "$out"
usage "--threads=abc" 2 "abc" check "$good" -y yield -f variety,dose --threads=abc "${base[@]}"
usage "--seed -1" 2 "seed" check "$good" -y yield -f variety,dose --seed=-1 "${base[@]}"
usage "--delimiter ab" 2 "delimiter" check "$good" -y yield -f variety,dose --delimiter ab "${base[@]}"
usage "factor named twice" 2 "variety" check "$good" -y yield -f variety,variety "${base[@]}"
usage "response used as a factor" 2 "yield" check "$good" -y yield -f variety,yield "${base[@]}"
usage "unknown response column" 2 "harvest" check "$good" -y harvest -f variety,dose "${base[@]}"
usage "unknown covariate column" 2 "moisture" check "$good" -y yield -f variety,dose --covariates moisture "${base[@]}"
usage "nonexistent data file" 3 "$work/no_such_trial.csv" check "$work/no_such_trial.csv" -y yield -f variety,dose "${base[@]}"
usage "data file is a folder" 3 "$work" check "$work" -y yield -f variety,dose "${base[@]}"
expect "unwritable -o /nonexistent/dir/out.json (source: DESIGN.md exit codes)" 5 \
    /nonexistent/dir/out.json /dev/null "/nonexistent/dir/out.json" -- \
    check "$good" -y yield -f variety,dose -B 0 --bootstrap 0 -o /nonexistent/dir/out.json

echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
