#!/usr/bin/env bash
# xcheck_manpage.sh — the manual page docs/sturdy.1: mandoc's linter finds nothing to
# say about it (any message fails, style included), man(1) renders it without
# warnings, and it cannot drift from the program: the options each command's --help
# defines (its "-x, --name" and "--name" lines) are exactly those its OPTIONS
# subsection lists, short forms included; every long option named anywhere in the
# page is one that some --help names, and the other way round; every default number a
# --help gives appears in that option's paragraph; every command and exit code the
# help texts give is in the page. The reference is the binary's own help (STURDY_BIN).
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY="${PYTHON:-/usr/bin/python3}"
PAGE=docs/sturdy.1
pass=0; fail=0
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

ok()   { pass=$((pass + 1)); echo "ok    $1"; }
bad()  { fail=$((fail + 1)); echo "FAIL  $1"; }

if [ ! -x "$BIN" ]; then
    bad "binary $BIN is missing (build it with make)"
    echo "$pass passed, $fail failed"; exit 1
fi
if [ ! -f "$PAGE" ]; then
    bad "$PAGE is missing"
    echo "$pass passed, $fail failed"; exit 1
fi

# (a) the linter and the renderer
if command -v mandoc >/dev/null; then
    mandoc -T lint "$PAGE" >"$T/lint" 2>&1
    if [ ! -s "$T/lint" ]; then ok "mandoc -T lint: no messages"
    else bad "mandoc -T lint: $(head -n 5 "$T/lint")"; fi
    mandoc -T lint -W warning "$PAGE" >"$T/lintw" 2>&1; rc=$?
    if [ "$rc" = 0 ] && [ ! -s "$T/lintw" ]; then ok "mandoc -T lint -W warning: clean, exit 0"
    else bad "mandoc -W warning: exit $rc, $(head -n 5 "$T/lintw")"; fi
else
    bad "mandoc is not installed (make deps-test installs it)"
fi
if command -v man >/dev/null; then
    MANWIDTH=100 man --warnings -l "$PAGE" >"$T/man.txt" 2>"$T/man.err"; rc=$?
    if [ "$rc" = 0 ] && [ ! -s "$T/man.err" ] && grep -q "EXIT STATUS" "$T/man.txt"; then
        ok "man -l renders it without warnings"
    else bad "man -l: exit $rc, $(head -n 5 "$T/man.err")"; fi
else
    bad "man is not installed (make deps-test installs man-db)"
fi

# (b) the page against the help texts
for c in "" check demo merge batch; do
    # shellcheck disable=SC2086
    if "$BIN" $c --help >"$T/help_${c:-main}.txt" 2>"$T/err"; then ok "sturdy $c --help exits 0"
    else bad "sturdy $c --help failed: $(head -c 200 "$T/err")"; fi
done
"$PY" - "$PAGE" "$T" <<'EOF' >"$T/results" 2>&1 || echo "FAIL  the comparison script stopped (exit $?)" >>"$T/results"
import re, sys
page_path, tmp = sys.argv[1], sys.argv[2]
src = open(page_path, encoding="utf-8").read().split("\n")
helps = {c: open(f"{tmp}/help_{c}.txt", encoding="utf-8").read()
         for c in ("main", "check", "demo", "merge", "batch")}

def report(good, what):
    print(("ok    " if good else "FAIL  ") + what)

# Options a --help defines: lines "  -x, --name ARG  text" or "      --name ARG  text",
# with the continuation lines (indented further, not starting with '-') of the text.
def help_options(text):
    opts = {}
    cur = None
    for line in text.split("\n"):
        m = re.match(r"^ {2,}(?:-([A-Za-z]), )?--([a-z][a-z0-9-]*)\b(.*)$", line)
        if m:
            cur = m.group(2)
            opts[cur] = {"short": m.group(1), "text": m.group(3)}
        elif cur and re.match(r"^ {20,}\S", line) and not line.strip().startswith("-"):
            opts[cur]["text"] += " " + line.strip()
        else:
            cur = None
    return opts

# Options a subsection of the page lists: ".It Fl x , Fl -name ..." items of the list
# after ".Ss Options of <section>", each with its paragraph (up to the next .It/.El).
def page_options(section):
    opts = {}
    i = src.index(".Ss " + section)
    cur = None
    depth = 0
    for line in src[i + 1:]:
        if line.startswith(".Ss") or line.startswith(".Sh"):
            break
        if line.startswith(".Bl"):
            depth += 1
            continue
        if line.startswith(".El"):
            depth -= 1
            if depth == 0:
                break
            continue
        if depth == 1 and line.startswith(".It"):
            longs = re.findall(r"\bFl -([a-z][a-z0-9-]*)", line)
            shorts = re.findall(r"\bFl ([A-Za-z])\b", line)
            cur = longs[0] if longs else None
            if cur:
                opts[cur] = {"short": shorts[0] if shorts else None, "text": line}
            continue
        if cur:
            opts[cur]["text"] += " " + line
    return opts

sections = {"check": "Options of check and demo", "merge": "Options of merge",
            "batch": "Options of batch"}
for cmd, section in sections.items():
    h = help_options(helps[cmd])
    try:
        p = page_options(section)
    except ValueError:
        report(False, f"the page has no subsection '{section}'")
        continue
    report(len(h) > 0, f"{cmd} --help defines options ({len(h)})")
    missing = sorted(set(h) - set(p))
    extra = sorted(set(p) - set(h))
    report(not missing, f"{cmd}: every option of --help is in '{section}'"
           + (f"; missing: {', '.join('--' + o for o in missing)}" if missing else ""))
    report(not extra, f"{cmd}: every option in '{section}' is in --help"
           + (f"; not in --help: {', '.join('--' + o for o in extra)}" if extra else ""))
    for name in sorted(set(h) & set(p)):
        hs, ps = h[name]["short"], p[name]["short"]
        report(hs == ps, f"{cmd} --{name}: short form {'-' + hs if hs else 'none'}"
               + ("" if hs == ps else f", page has {'-' + ps if ps else 'none'}"))
        for d in re.findall(r"\(default:? (\d[\d.]*)", h[name]["text"]):
            report(re.search(r"default[ :].*?\b" + re.escape(d) + r"\b", p[name]["text"])
                   is not None, f"{cmd} --{name}: default {d} in the page")

# Long options named anywhere: the page's source versus all help texts.
# Lines about pkg-config name its options, not ours; a name that is a prefix of exactly
# one option is the page's example of shortening (--perm).
ours = [l for l in src if not l.startswith(".\\\"") and "pkg-config" not in l]
page_longs = set(re.findall(r"\bFl -([a-z][a-z0-9-]*)", "\n".join(ours)))
page_longs |= set(re.findall(r"(?<![\w-])--([a-z][a-z0-9-]*)",
                             "\n".join(ours).replace("\\-", "-")))
help_longs = set()
for text in helps.values():
    help_longs |= set(re.findall(r"(?<![\w-])--([a-z][a-z0-9-]*)", text))
unknown = sorted(o for o in page_longs - help_longs
                 if sum(h.startswith(o) for h in help_longs) != 1)
report(not (help_longs - page_longs), "every long option the help texts name is in the page"
       + (f"; missing: {sorted(help_longs - page_longs)}" if help_longs - page_longs else ""))
report(not unknown, "every long option the page names is in a help text (or a unique prefix)"
       + (f"; unknown: {unknown}" if unknown else ""))

# Commands of the main help, in the SYNOPSIS.
cmds = re.findall(r"^  sturdy ([a-z]+) ", helps["main"], re.M)
syn = "\n".join(src[src.index(".Sh SYNOPSIS"):src.index(".Sh DESCRIPTION")])
report(len(cmds) >= 4, f"the main help lists commands ({', '.join(cmds)})")
for c in cmds:
    report(f".Cm {c}" in syn, f"command {c} in the SYNOPSIS")

# Exit codes the help texts give ("Exit status: 0 done, 1 ...; batch: 6 ..."), in EXIT STATUS.
codes = set()
for text in helps.values():
    m = re.search(r"Exit status:(.*?)(?:\n\n|\Z)", text, re.S)
    if m:
        codes |= set(re.findall(r"(?<![\w.])(\d) [a-z]", m.group(1)))
ex = src[src.index(".Sh EXIT STATUS"):]
ex = ex[:next(i for i, l in enumerate(ex[1:], 1) if l.startswith(".Sh"))]
page_codes = {l.split()[1] for l in ex if l.startswith(".It ")}
report(len(codes) >= 6, f"the help texts give exit codes {sorted(codes)}")
report(codes == page_codes, f"EXIT STATUS lists the same codes {sorted(page_codes)}")
EOF
while IFS= read -r line; do
    case "$line" in
        "ok    "*) ok "${line#ok    }" ;;
        "FAIL  "*) bad "${line#FAIL  }" ;;
        *) bad "comparison script: $line" ;;
    esac
done <"$T/results"

echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
