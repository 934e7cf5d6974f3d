#!/usr/bin/env bash
# xcheck_hardening.sh — the output path and the guards against hostile or careless use
# (issue 15, first items): -o never follows a symbolic link onto another file and never
# replaces an input; the coded-column guard neither wraps nor leaks. Under `make
# sanitize` STURDY_BIN is the ASan build, where a leak turns the clean exit 4 into 1.
# Source of the expectations: the README's exit codes and output rules.
set -u
pass=0; fail=0
ok()  { pass=$((pass + 1)); echo "ok   $*"; }
bad() { fail=$((fail + 1)); echo "FAIL $*"; }
S=${STURDY_BIN:-./sturdy}
case "$S" in /*) ;; *) S="$PWD/$S" ;; esac
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
cp examples/demo.csv "$T/d.csv"
cd "$T" || exit 1
Q=(-y build_min -f runner,cache -B 99 --bootstrap 0 --seed 3)

# 1. -o through a symbolic link: refused, the link's target untouched, no file appears
echo precious > victim.txt
ln -s victim.txt out.json
"$S" check d.csv "${Q[@]}" -o out.json 2>err; rc=$?
[ $rc = 5 ] && [ "$(cat victim.txt)" = precious ] && [ "$(readlink out.json)" = victim.txt ] &&
    grep -q "symbolic link" err && [ -z "$(ls | grep '\.tmp\.')" ] &&
    ok "-o onto a link to a file: exit 5, the target and the link unchanged" ||
    bad "-o onto a link: exit $rc, victim '$(cat victim.txt)', $(head -c 200 err)"
ln -s "$T/nowhere/planted.json" dangling.json
"$S" check d.csv "${Q[@]}" -o dangling.json 2>err; rc=$?
[ $rc = 5 ] && [ ! -e nowhere ] && grep -q "does not exist" err &&
    ok "-o onto a dangling link: exit 5, nothing created where it points" ||
    bad "-o onto a dangling link: exit $rc, $(head -c 200 err)"
# a device through a link is still written in place (the usual /dev/stdout)
out=$("$S" check d.csv "${Q[@]}" --format csv -o /dev/stdout 2>err); rc=$?
[ $rc = 0 ] && [ "$(printf '%s\n' "$out" | head -n 1 | cut -d, -f1-2)" = "response,term" ] &&
    ok "-o /dev/stdout (a link to a device) writes in place" ||
    bad "-o /dev/stdout: exit $rc, $(head -c 200 err)"
# a plain file is still replaced atomically
"$S" check d.csv "${Q[@]}" --format json -o plain.json 2>err; rc=$?
[ $rc = 0 ] && grep -q '"version": 1' plain.json && ok "-o onto a plain file works" ||
    bad "-o plain file: exit $rc"

# 10. -o naming the data file (also by another name: a hard link) or a part
cp d.csv keep.csv
"$S" check d.csv "${Q[@]}" -o d.csv 2>err; rc=$?
[ $rc = 2 ] && cmp -s d.csv keep.csv && grep -q "is the data file itself" err &&
    ok "-o naming the data file: exit 2, data unchanged" ||
    bad "-o the data file: exit $rc, $(head -c 200 err)"
ln d.csv hard.csv
"$S" check d.csv "${Q[@]}" -o hard.csv 2>err; rc=$?
[ $rc = 2 ] && cmp -s d.csv keep.csv &&
    ok "-o naming a hard link of the data file (same device and inode): exit 2" ||
    bad "-o a hard link of the data: exit $rc"
"$S" check d.csv "${Q[@]}" --shard 1/2 -o p1.json 2>/dev/null &&
"$S" check d.csv "${Q[@]}" --shard 2/2 -o p2.json 2>/dev/null
cp p1.json p1.keep
"$S" merge p1.json p2.json -o p1.json 2>err; rc=$?
[ $rc = 2 ] && cmp -s p1.json p1.keep && grep -q "is the part" err &&
    ok "merge -o naming one of its parts: exit 2, the part unchanged" ||
    bad "merge -o a part: exit $rc, $(head -c 200 err)"

# 13. the coded-column guard at the largest value does not wrap
"$S" check d.csv "${Q[@]}" --max-columns 18446744073709551615 --format csv -o big.csv 2>err
rc=$?
[ $rc = 0 ] && [ "$(wc -l <big.csv)" -ge 4 ] &&
    ok "--max-columns 2^64-1: no wrap, the model is built (exit 0)" ||
    bad "--max-columns 2^64-1: exit $rc, $(head -c 200 err)"

# 9. the guard's refusal is a clean exit 4 with nothing leaked (ASan: a leak gives 1)
"$S" check d.csv -y build_min -f runner,cache,tests -B 99 --bootstrap 0 --max-columns 3 \
    -o guard.json 2>err; rc=$?
[ $rc = 4 ] && [ ! -e guard.json ] && grep -q "coded columns" err &&
    ok "--max-columns 3: exit 4, message, no output, no leak" ||
    bad "--max-columns guard: exit $rc, $(head -c 300 err)"

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
