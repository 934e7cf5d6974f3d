#!/usr/bin/env bash
# xcheck_hardening.sh — the output path and the guards against hostile or careless use
# (issue 15): -o never follows a symbolic link onto another file and never replaces an
# input; the coded-column guard neither wraps nor leaks; control characters from data
# are escaped wherever they are echoed; a signal removes the temporary output file; a
# batch folder is locked against a second batch. Under `make
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

# 8. text from data (level, column and plan names, part fields, library messages quoting
# them) reaches standard error and the batch summaries with its control characters
# escaped (\x1b, \x07), never as raw bytes a terminal would obey; a stray byte that is
# not UTF-8 (0x9b, the 8-bit CSI) likewise
raw() { LC_ALL=C grep -c -a -e "$(printf '[\001-\010\013-\037\177\233]')" "$@" | awk -F: '{ n += $NF } END { print n + 0 }'; }
ESC=$(printf '\033'); BEL=$(printf '\a'); CSI8=$(printf '\233')
{ printf 'g,y,h%s[2J\n' "$ESC"
  for i in 1 2 3 4 5 6; do printf 'a%s[31mX%s%s,%d,1\nb,%d.5,2\n' "$ESC" "$BEL" "$CSI8" $i $((i * 2)); done
} > esc.csv
"$S" check esc.csv -y y -f g -B 99 --bootstrap 0 --levels g=zz >out1 2>err1
"$S" check esc.csv -y nope -f g -B 99 --bootstrap 0 >out2 2>err2
"$S" check esc.csv -y y -f g -B 99 --bootstrap 0 >out3 2>err3   # the text report
printf 'name,data,response,factors\nx,esc.csv,y,"g,q%s]0;t%s"\n' "$ESC" "$BEL" > escplan.csv
"$S" batch escplan.csv -q -o escdir >out4 2>err4
printf 'name,data,response,factors\na%s[2J,esc.csv,y,g\n' "$ESC" > escplan2.csv
"$S" batch escplan2.csv -q -o escdir2 >out5 2>err5
"$S" check esc.csv -y y -f g -B 99 --bootstrap 0 --shard 1/2 -o part1.json 2>/dev/null
"$S" check esc.csv -y y -f g -B 99 --bootstrap 0 --shard 2/2 -o part2.json 2>/dev/null
# a part whose recorded command holds an escape (a hand edit, or a hostile file)
sed 's/"--bootstrap"/"--bootstrap\\u001b[2J"/' part1.json > part1e.json
"$S" merge part1e.json part2.json >out6 2>err6
n=$(raw out1 err1 out2 err2 out3 err3 out4 err4 escdir/summary.txt escdir/summary.csv out5 err5 \
    out6 err6)
grep -qF "'a\\x1b[31mX\\x07\\x9b'" err1 && grep -qF 'h\x1b[2J' err2 &&
    grep -qF 'q\x1b]0;t\x07' err4 && grep -qF 'q\x1b]0;t\x07' escdir/summary.txt &&
    grep -qF 'q\x1b]0;t\x07' escdir/summary.csv && grep -qF 'a\x1b[2J' err5 &&
    grep -qF 'bootstrap\x1b[2J' err6 && [ "$n" = 0 ] &&
    ok "ESC, BEL and a stray 0x9b from data: escaped on stderr, stdout and in the summaries" ||
    bad "escapes: $n raw control bytes; $(cat -v err1 err2 err4 err5 err6 | head -c 600)"

# 11. a signal while the output's temporary file exists removes it and ends the run by
# that signal; 7. a second batch on a folder in use refuses to start and leaves the
# first one's files alone. fsync is made slow (a preloaded shim that sleeps in its
# first call) so that the signal, or the second batch, comes while FILE.tmp.XXXXXX is
# complete and not yet renamed.
cat > slow.c <<'C'
#define _GNU_SOURCE
#include <stdlib.h>
#include <sys/syscall.h>
#include <unistd.h>
int fsync(int fd)
{
    static int calls;
    const char *s = getenv("SLOW_FSYNC");
    if (s && !calls++) sleep((unsigned)atoi(s));    /* the first call only */
    return (int)syscall(SYS_fsync, fd);
}
C
CC=${CC:-cc}
if "$CC" -shared -fPIC -o slow.so slow.c 2>/dev/null; then
    # the ASan build accepts a shim loaded before its runtime with this option
    export ASAN_OPTIONS="${ASAN_OPTIONS:+$ASAN_OPTIONS:}verify_asan_link_order=0"
    # wait_tmp PATTERN: up to 20 s for a temporary file to appear
    wait_tmp() { for _ in $(seq 200); do ls $1 >/dev/null 2>&1 && return 0; sleep 0.1; done; return 1; }
    for sig in TERM HUP; do
        rm -f sig.json sig.json.tmp.*
        SLOW_FSYNC=30 LD_PRELOAD="$T/slow.so" "$S" check d.csv "${Q[@]}" --format json \
            -o sig.json 2>err &
        pid=$!
        wait_tmp 'sig.json.tmp.*'; seen=$?
        kill -$sig $pid; { wait $pid; } 2>/dev/null; rc=$?
        want=$((128 + $(kill -l $sig)))
        [ $seen = 0 ] && [ $rc = $want ] && [ -z "$(ls | grep 'sig\.json')" ] &&
            ok "SIG$sig during the write of -o: exit $rc, no sig.json.tmp.* left, no sig.json" ||
            bad "SIG$sig during -o: temp seen $seen, exit $rc (want $want), left: $(ls | grep sig)"
    done
    # the same inside a batch: the result's temporary file goes with the run
    printf 'name,data,response,factors,permutations,bootstrap\none,d.csv,build_min,runner,99,0\n' \
        > sigplan.csv
    SLOW_FSYNC=30 LD_PRELOAD="$T/slow.so" "$S" batch sigplan.csv -q -o sigdir 2>err &
    pid=$!
    wait_tmp 'sigdir/.one.key.tmp.*'; seen=$?   # the key file is written first
    kill -TERM $pid; wait $pid; rc=$?
    [ $seen = 0 ] && [ $rc = 143 ] && [ -z "$(ls -A sigdir | grep -e '\.tmp\.' -e 'one')" ] &&
        ok "SIGTERM during a batch's write: exit 143, no temporary file left in the folder" ||
        bad "SIGTERM during batch: temp seen $seen, exit $rc, left: $(ls -A sigdir)"
    # 7. the folder's lock: the second batch refuses (exit 5, the holder named) while the
    # first is writing, removes nothing of it, and the first ends well
    SLOW_FSYNC=4 LD_PRELOAD="$T/slow.so" "$S" batch sigplan.csv -q -o lockdir 2>err1 &
    pid=$!
    wait_tmp 'lockdir/.one.key.tmp.*'; seen=$?
    "$S" batch sigplan.csv -q -o lockdir 2>err2; rc2=$?
    live=$(ls -A lockdir | grep -c '\.one\.key\.tmp\.')
    wait $pid; rc1=$?
    [ $seen = 0 ] && [ $rc2 = 5 ] && grep -q "is in use by another batch (process $pid)" err2 &&
        [ "$live" = 1 ] && [ $rc1 = 0 ] && [ -s lockdir/one.json ] &&
        grep -q '^one,ok,0' lockdir/summary.csv &&
        ok "a second batch on a folder in use: exit 5, names process $pid; the first's live temporary file stays and its run ends ok" ||
        bad "folder lock: temp seen $seen, second exit $rc2 ($(head -c 200 err2)), live temps $live, first exit $rc1 ($(head -c 200 err1))"
    "$S" batch sigplan.csv -q -o lockdir --resume 2>err2; rc2=$?
    [ $rc2 = 0 ] && ok "the lock ends with the batch: the next one runs (exit 0)" ||
        bad "after the first batch: exit $rc2, $(head -c 200 err2)"
else
    echo "skip signal and lock checks: no C compiler for the fsync shim"
fi

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
