#!/usr/bin/env bash
# xcheck_install.sh — the installed tree: `make install DESTDIR=… PREFIX=/usr/local` from
# the build folder (STURDY_BUILD) without compiling anything, every file in its place,
# sturdy.pc valid and relocatable, libsturdy.so with soname libsturdy.so.0 exporting
# exactly the functions and data the installed headers declare (the build's
# libsturdy.map is made from the headers), examples/embed.c built through pkg-config against the
# installed headers and library (shared, and static with --static) giving the same
# JSON, byte for byte, and the same F, p and resampled p as `sturdy check`; then
# `make uninstall` leaves nothing behind.
# In a sanitizer build (the library needs libasan/libubsan) the example is compiled
# with the same -fsanitize options, since the ASan runtime must load first; nothing is
# skipped.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
B="${STURDY_BUILD:-build}"
PY="${PYTHON:-/usr/bin/python3}"
CC="${CC:-cc}"
# run from `make check`, make's own settings must not reach the makes started here
unset MAKEFLAGS MFLAGS MAKELEVEL MAKEOVERRIDES
pass=0; fail=0
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

ok()   { pass=$((pass + 1)); echo "ok    $1"; }
bad()  { fail=$((fail + 1)); echo "FAIL  $1"; }
finish() { echo "$pass passed, $fail failed"; [ "$fail" = 0 ]; exit; }
# check NAME CMD...: passes when CMD succeeds
check() { local name="$1"; shift; if "$@" >"$T/out" 2>&1; then ok "$name"
          else bad "$name: $(head -c 300 "$T/out")"; fi; }

V=$(sed -n 's/^#define STURDY_VERSION "\(.*\)"/\1/p' include/sturdy/common.h)
SHLIB="$B/libsturdy.so.$V"
for tool in pkg-config readelf nm "$CC"; do
    command -v "$tool" >/dev/null || { bad "$tool is not installed (make deps-test)"; finish; }
done
[ -x "$BIN" ] || { bad "binary $BIN is missing (build it with make)"; finish; }

# The build folder must be complete: make builds nothing here with other flags than the
# folder's own. The default folder is built as `make` would; another (build-san) must
# have been built by its own target (`make sanitize` does).
if make -q BUILD="$B" "$B/sturdy" "$B/libsturdy.a" "$SHLIB" 2>/dev/null; then
    ok "$B is up to date (program, libsturdy.a, libsturdy.so.$V)"
elif [ "$B" = build ]; then
    if make -s BUILD=build build/sturdy build/libsturdy.a "$SHLIB" >"$T/build.log" 2>&1; then
        ok "built what build/ lacked with the default flags"
    else bad "building build/: $(tail -n 5 "$T/build.log")"; finish; fi
else
    bad "$B is not up to date; build it with the flags it was made with (make sanitize)"
    finish
fi

# --- install -----------------------------------------------------------------------
R="$T/root"; P=/usr/local; D="$R$P"
if make BUILD="$B" DESTDIR="$R" PREFIX="$P" install >"$T/install.log" 2>&1; then
    ok "make install DESTDIR=… PREFIX=$P"
else bad "make install: $(tail -n 5 "$T/install.log")"; finish; fi
if grep -qE '(^| )-c( |$)| -shared ' "$T/install.log"; then
    bad "make install compiled or linked: $(grep -E '(^| )-c( |$)| -shared ' "$T/install.log" | head -n 2)"
else ok "make install compiled nothing"; fi

for f in bin/sturdy "lib/libsturdy.so.$V" lib/libsturdy.a lib/pkgconfig/sturdy.pc \
         share/man/man1/sturdy.1; do
    if [ -f "$D/$f" ] && [ ! -L "$D/$f" ]; then ok "installed $f"; else bad "$f not installed"; fi
done
[ -x "$D/bin/sturdy" ] && [ -x "$D/lib/libsturdy.so.$V" ] && [ ! -x "$D/lib/libsturdy.a" ] &&
    [ ! -x "$D/lib/pkgconfig/sturdy.pc" ] && ok "modes: program and .so executable, the rest not" ||
    bad "file modes: $(ls -l "$D/bin/sturdy" "$D/lib/"libsturdy.* "$D/lib/pkgconfig/sturdy.pc")"
for l in "libsturdy.so.0:libsturdy.so.$V" "libsturdy.so:libsturdy.so.0"; do
    link=${l%%:*}; want=${l#*:}
    if [ -L "$D/lib/$link" ] && [ "$(readlink "$D/lib/$link")" = "$want" ]; then
        ok "lib/$link -> $want"
    else bad "lib/$link is not a link to $want: $(ls -l "$D/lib/$link" 2>&1)"; fi
done
nh=0; same=0
for h in include/sturdy/*.h; do
    nh=$((nh + 1)); cmp -s "$h" "$D/$h" && same=$((same + 1))
done
if [ "$nh" -gt 0 ] && [ "$same" = "$nh" ]; then ok "all $nh headers installed unchanged"
else bad "$same of $nh headers installed unchanged"; fi
check "the manual page installed unchanged" cmp docs/sturdy.1 "$D/share/man/man1/sturdy.1"
cmp -s "$B/sturdy" "$D/bin/sturdy" && ok "bin/sturdy is $B/sturdy" || bad "bin/sturdy differs from $B/sturdy"
"$D/bin/sturdy" --version >"$T/ver" 2>&1
if [ "$(cat "$T/ver")" = "sturdy $V" ]; then ok "installed sturdy --version: sturdy $V"
else bad "installed sturdy --version: $(head -c 100 "$T/ver"), expected sturdy $V"; fi

# --- sturdy.pc ----------------------------------------------------------------------
PC="$D/lib/pkgconfig/sturdy.pc"
export PKG_CONFIG_PATH="$D/lib/pkgconfig"
unset PKG_CONFIG_SYSROOT_DIR PKG_CONFIG_LIBDIR
pc() { pkg-config "$@" 2>&1 | sed 's/[[:space:]]*$//'; }   # pkgconf ends lines in a blank
check "pkg-config --validate sturdy.pc" pkg-config --validate "$PC"
[ "$(pc --modversion sturdy)" = "$V" ] && ok "pkg-config --modversion = $V" ||
    bad "pkg-config --modversion: $(pc --modversion sturdy)"
grep -qx "prefix=$P" "$PC" && grep -qx 'libdir=${prefix}/lib' "$PC" &&
    grep -qx 'includedir=${prefix}/include' "$PC" && ok "sturdy.pc: prefix $P, libdir and includedir under it" ||
    bad "sturdy.pc folders: $(grep -E '^(prefix|libdir|includedir)=' "$PC" | tr '\n' ' ')"
[ "$(pc --libs sturdy)" = "-L$P/lib -lsturdy" ] && ok "Libs: -L$P/lib -lsturdy" ||
    bad "pkg-config --libs: $(pc --libs sturdy)"
st=$(pkg-config --static --libs sturdy)
miss=""; for l in -lsturdy -lcsv -lopenblas -lgsl -lm -fopenmp; do
    case " $st " in *" $l "*) ;; *) miss="$miss $l" ;; esac; done
[ -z "$miss" ] && ok "pkg-config --static --libs names every library libsturdy needs" ||
    bad "pkg-config --static --libs lacks$miss: $st"
MOVE=(--define-variable=prefix="$D")
[ "$(pc "${MOVE[@]}" --cflags sturdy)" = "-I$D/include" ] &&
    ok "--define-variable=prefix= moves the include folder" ||
    bad "relocated --cflags: $(pc "${MOVE[@]}" --cflags sturdy)"

# --- the shared library --------------------------------------------------------------
SO="$D/lib/libsturdy.so.$V"
readelf -d "$SO" >"$T/dyn" 2>&1
grep -q 'SONAME.*\[libsturdy\.so\.0\]' "$T/dyn" && ok "SONAME libsturdy.so.0" ||
    bad "SONAME: $(grep SONAME "$T/dyn")"
nm -D --defined-only "$SO" | awk 'NF == 3 { print $3 }' | sort -u >"$T/exported"
grep -v '^sturdy_' "$T/exported" >"$T/foreign"
[ -s "$T/exported" ] && [ ! -s "$T/foreign" ] &&
    ok "$(wc -l <"$T/exported") exported symbols, all sturdy_*" ||
    bad "exported symbols not sturdy_*: $(head -n 5 "$T/foreign" | tr '\n' ' ')"
# public = what the installed headers declare (preprocessed: no comments) as a function
# or an array, and the static library defines
"$CC" -E -P -I"$D/include" -x c - <<<$'#include <sturdy/sturdy.h>\n#include <sturdy/advanced.h>' 2>"$T/err" |
    grep -oE '\bsturdy_[A-Za-z0-9_]+[[:space:]]*[([]' | grep -oE 'sturdy_[A-Za-z0-9_]+' |
    sort -u >"$T/declared"
nm -g --defined-only "$D/lib/libsturdy.a" 2>/dev/null | awk 'NF == 3 { print $3 }' |
    sort -u >"$T/defined"
comm -12 "$T/declared" "$T/defined" >"$T/public"
if [ "$(wc -l <"$T/public")" -ge 50 ]; then ok "$(wc -l <"$T/public") public symbols declared and defined"
else bad "only $(wc -l <"$T/public") public symbols found in the headers ($(head -c 200 "$T/err"))"; fi
comm -23 "$T/public" "$T/exported" >"$T/unexported"
comm -13 "$T/public" "$T/exported" >"$T/leaked"
[ ! -s "$T/unexported" ] && ok "every public function and object is exported" ||
    bad "declared in include/sturdy but not exported (the Makefile makes build/libsturdy.map from the headers): $(tr '\n' ' ' <"$T/unexported")"
[ ! -s "$T/leaked" ] && ok "nothing else is exported" ||
    bad "exported but not declared in include/sturdy: $(tr '\n' ' ' <"$T/leaked")"
LD_LIBRARY_PATH="$D/lib" ldd "$SO" >"$T/ldd" 2>&1
! grep -q 'not found' "$T/ldd" && ok "every library libsturdy.so needs is found" ||
    bad "ldd: $(grep 'not found' "$T/ldd")"

# --- the example, shared and static ---------------------------------------------------
SAN=()
grep -q 'NEEDED.*libasan' "$T/dyn" && SAN+=(-fsanitize=address)
grep -q 'NEEDED.*libubsan' "$T/dyn" && SAN+=(-fsanitize=undefined)
if [ "${#SAN[@]}" -gt 0 ]; then
    echo "note  sanitizer build: the example is compiled with ${SAN[*]} like the library"
fi
WARN=(-std=c11 -Wall -Wextra -Wpedantic -Werror -O1 -g)
read -ra FLAGS <<<"$(pkg-config "${MOVE[@]}" --cflags --libs sturdy)"
check "examples/embed.c compiles against the installed tree (pkg-config --cflags --libs)" \
    "$CC" "${WARN[@]}" "${SAN[@]}" examples/embed.c -o "$T/embed" "${FLAGS[@]}"
readelf -d "$T/embed" 2>/dev/null | grep -q 'NEEDED.*\[libsturdy\.so\.0\]' &&
    ok "the example needs libsturdy.so.0 (the soname)" || bad "the example does not need libsturdy.so.0"
LD_LIBRARY_PATH="$D/lib" ldd "$T/embed" 2>/dev/null | grep -q "libsturdy.so.0 => $D/lib/" &&
    ok "with LD_LIBRARY_PATH it loads the installed libsturdy.so.0" ||
    bad "ldd: $(LD_LIBRARY_PATH="$D/lib" ldd "$T/embed" 2>&1 | grep sturdy)"
read -ra SFLAGS <<<"$(pkg-config "${MOVE[@]}" --static --cflags --libs sturdy)"
SFLAGS=("${SFLAGS[@]/#-lsturdy/-l:libsturdy.a}")
check "examples/embed.c links statically with pkg-config --static" \
    "$CC" "${WARN[@]}" "${SAN[@]}" examples/embed.c -o "$T/embed_static" "${SFLAGS[@]}"
if readelf -d "$T/embed_static" 2>/dev/null | grep -q 'libsturdy'; then
    bad "the static example still needs libsturdy.so"
else ok "the static example needs no libsturdy.so"; fi

ARGS=(examples/demo.csv build_min runner,cache,tests)
"$BIN" check "${ARGS[0]}" -y "${ARGS[1]}" -f "${ARGS[2]}" -B 999 --bootstrap 200 --seed 12345 \
    --format json -o "$T/cli.json" 2>"$T/err"
rc=$?; [ "$rc" = 0 ] && ok "sturdy check -B 999 --bootstrap 200 --seed 12345" ||
    bad "sturdy check: exit $rc, $(head -c 200 "$T/err")"
LD_LIBRARY_PATH="$D/lib" "$T/embed" "${ARGS[@]}" "$T/embed.json" >"$T/embed.txt" 2>"$T/err"
rc=$?; [ "$rc" = 0 ] && [ ! -s "$T/err" ] && ok "the example runs (exit 0, nothing on stderr)" ||
    bad "the example: exit $rc, $(head -c 300 "$T/err")"
check "its JSON report is the CLI's, byte for byte" cmp "$T/cli.json" "$T/embed.json"
[ "$(head -n 1 "$T/embed.txt")" = "libsturdy $V (built against $V)" ] &&
    ok "the run-time version is the headers' ($V)" ||
    bad "version line: $(head -n 1 "$T/embed.txt"), want $V"
grep -q "partial eta2 .*BCa \[" "$T/embed.txt" &&
    ok "the example reads effect sizes and intervals through the accessors" ||
    bad "no interval line in the example's output"
"$T/embed_static" "${ARGS[@]}" "$T/static.json" >"$T/static.txt" 2>"$T/err"
rc=$?; [ "$rc" = 0 ] && ok "the static example runs" || bad "the static example: exit $rc, $(head -c 300 "$T/err")"
check "the static example prints the same" cmp "$T/embed.txt" "$T/static.txt"
check "the static example's JSON is the CLI's" cmp "$T/cli.json" "$T/static.json"
# F, p and resampled p of every term: the example's %.17g against the CLI's JSON
"$PY" - "$T/cli.json" "$T/embed.txt" >"$T/cmp" 2>&1 <<'EOF'
import json, math, sys
cli = json.load(open(sys.argv[1], encoding="utf-8"))
lines = [l.rstrip("\n") for l in open(sys.argv[2], encoding="utf-8")]
def num(s):
    v = float(s)
    return None if math.isnan(v) else v
got = []
for l in lines:
    if l.startswith("term "):
        f = l[5:].split("\t")
        got.append((f[0], num(f[1][2:]), num(f[2][2:]), num(f[3][len("p_resampled "):])))
want = [(t["term"], t["f"], t["p"], t["p_perm"]) for r in cli["responses"] for t in r["terms"]]
print(f"{len(got)} {len(want)}")
for g, w in zip(got, want):
    print(("ok" if g == w else "FAIL") + f" {w[0]}: example {g[1:]}, CLI {w[1:]}")
EOF
read -r ng nw <"$T/cmp"
[ "$ng" = "$nw" ] && [ "$nw" -ge 7 ] && ok "the example prints all $nw terms" ||
    bad "the example printed $ng terms, the CLI $nw ($(tail -n 2 "$T/cmp"))"
while read -r verdict rest; do
    [ "$verdict" = ok ] && ok "F, p, resampled p equal: $rest" || bad "$rest"
done < <(tail -n +2 "$T/cmp")

# --- other folders, uninstall ----------------------------------------------------------
R2="$T/root2"
if make BUILD="$B" DESTDIR="$R2" PREFIX=/opt/st LIBDIR=/opt/st/lib64 INCLUDEDIR=/usr/include/st \
        install >"$T/install2.log" 2>&1 &&
   [ -f "$R2/opt/st/lib64/libsturdy.so.$V" ] && [ -f "$R2/usr/include/st/sturdy/sturdy.h" ]; then
    ok "LIBDIR and INCLUDEDIR are honoured"
else bad "install with LIBDIR/INCLUDEDIR: $(tail -n 3 "$T/install2.log")"; fi
PKG_CONFIG_PATH="$R2/opt/st/lib64/pkgconfig" pc --cflags --libs sturdy >"$T/pc2"
[ "$(cat "$T/pc2")" = "-I/usr/include/st -L/opt/st/lib64 -lsturdy" ] &&
    ok "sturdy.pc follows them: $(cat "$T/pc2")" || bad "sturdy.pc with LIBDIR/INCLUDEDIR: $(cat "$T/pc2")"
if make BUILD="$B" DESTDIR="$R" PREFIX="$P" uninstall >"$T/uninstall.log" 2>&1; then
    left=$(find "$R" ! -type d | head -n 5)
    [ -z "$left" ] && ok "make uninstall removes every installed file" || bad "left after uninstall: $left"
else bad "make uninstall: $(tail -n 3 "$T/uninstall.log")"; fi

finish
