"""xcheck_layers.py — the house plan of docs/ARCHITECTURE.md, checked on the tree and on
the built objects: the library's stages form a line (core < input < model < classical <
resampling < checks < analysis < report), and no file includes a header of a higher stage
and no object calls a function defined in a higher stage; the CLI (src/cli) includes no
private header; every file says what it does in its first line. Ends with
"N passed, N failed"."""
import os
import re
import subprocess
import sys

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..")
BUILD = os.environ.get("STURDY_BUILD", "build")
STAGES = ["core", "input", "model", "classical", "resampling", "checks", "analysis", "report"]
RANK = {s: i for i, s in enumerate(STAGES)}
passed = failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL  " + what)


src = os.path.join(ROOT, "src")
folders = sorted(d for d in os.listdir(src) if os.path.isdir(os.path.join(src, d)))
check(folders == sorted(STAGES + ["cli"]), "src/ holds the stage folders and cli only: %s" % folders)
check(not [f for f in os.listdir(src) if f.endswith((".c", ".h"))], "no source file loose in src/")

# libsturdy.a keeps one member per file name: `ar r` replaces a member of the same name
cfiles = [f for st in STAGES for f in os.listdir(os.path.join(src, st)) if f.endswith(".c")]
dups = sorted(set(f for f in cfiles if cfiles.count(f) > 1))
check(not dups, "library source file names are unique across stages: %s" % dups)

inc = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)
for stage in STAGES + ["cli"]:
    for name in sorted(os.listdir(os.path.join(src, stage))):
        if not name.endswith((".c", ".h")):
            continue
        path = os.path.join(src, stage, name)
        text = open(path, encoding="utf-8").read()
        first = text.split("\n", 1)[0]
        check(first.startswith("/* " + name + " — "), "%s/%s: first line says what it does (%r)"
              % (stage, name, first[:60]))
        for h in inc.findall(text):
            if stage == "cli":
                check(h.startswith("sturdy/") or "/" not in h,
                      "cli/%s includes only public or CLI headers (%s)" % (name, h))
                continue
            if h.startswith("sturdy/"):
                continue
            top = h.split("/", 1)[0]
            check(top in RANK and RANK[top] <= RANK[stage],
                  "%s/%s includes %s: not a lower or the same stage" % (stage, name, h))

# calls: undefined symbols of a stage's objects are defined in its own or a lower stage
defined = {}
objs = {}
for stage in STAGES:
    d = os.path.join(ROOT, BUILD, "lib", stage)
    check(os.path.isdir(d), "built objects of stage %s in %s" % (stage, d))
    if not os.path.isdir(d):
        continue
    objs[stage] = [os.path.join(d, f) for f in sorted(os.listdir(d)) if f.endswith(".o")]
    for o in objs[stage]:
        out = subprocess.run(["nm", "--defined-only", o], capture_output=True, text=True).stdout
        for line in out.splitlines():
            parts = line.split()
            if len(parts) == 3 and parts[1] in "TDRB" and parts[2].startswith("sturdy_"):
                defined[parts[2]] = stage
calls = 0
for stage, files in objs.items():
    for o in files:
        out = subprocess.run(["nm", "--undefined-only", o], capture_output=True, text=True).stdout
        for line in out.splitlines():
            sym = line.split()[-1]
            if sym in defined:
                calls += 1
                check(RANK[defined[sym]] <= RANK[stage], "%s calls %s of the higher stage %s"
                      % (os.path.relpath(o, ROOT), sym, defined[sym]))
check(calls > 50, "the call check saw the calls between stages (%d)" % calls)

print("%d passed, %d failed" % (passed, failed))
sys.exit(1 if failed else 0)
