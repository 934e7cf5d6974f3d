"""How often each advice rule of the report fires, and how often it is right, on simulated
clean, skewed, heavy-tailed and gross-error data (issue 11, "every advice rule").

Invented 3×2×2 data, 4 rows per cell (48 rows, 7 terms), no effect, fixed seeds, one run
of the binary per dataset (-B 999, no bootstrap, text and JSON):
  clean   normal errors;
  skewed  centred exponential errors;
  heavy   t errors on 3 df;
  gross   normal errors with one row shifted by 8 error SDs.
Rules measured (the text the report prints):
  normality advice, its four endings: "No clear sign" (Shapiro–Wilk p ≥ α), "read the
  unequal-variance column" (spreads differ), "check those rows before relying on either
  column" (rows flagged, and the residuals look normal without them), "rely on the
  resampling column" (non-normal with no row flagged, or still non-normal without the
  flagged rows: checks/bulk.c). The last is right when the errors are non-normal and no gross error is present (skewed,
  heavy) and wrong on gross-error data;
  the reason given for a disagreement between the F-test and the resampled F: spreads,
  flagged rows, non-normal residuals, or "both p-values lie near alpha". Flagged rows are
  the right reason on gross-error data (naming the planted row), non-normality on skewed
  and heavy data, "near alpha" on clean data.
Asserted (DESIGN.md: at most 10% where a rule should not fire, at least 90% where it
should; the binomial 99% margin of the count is allowed):
  "rely on the resampling column" fires in ≤ 10% of clean and of gross-error datasets
  (where it would be wrong; it fires on skewed data in about half, a guard ≥ 0.40 keeps
  that); "check those rows" fires in ≥ 90% of gross-error datasets; the reason "flagged rows" names the planted row in ≥ 90% of the gross-error
  disagreements, and is given in ≤ 10% of the clean ones.
The table is printed (README, "How often the advice fires").
"""
import json
import math
import re
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import QUICK, finish, need_binary, report  # noqa: E402

try:
    import numpy as np
except ImportError as exc:
    from harness import missing_library
    missing_library(exc, "python3-numpy")

BIN = os.environ.get("STURDY_BIN", "./sturdy")
NSETS = int(os.environ.get("STURDY_ADVICE_N", "30" if QUICK else "60"))
Z99 = 2.5758293035489

ENDINGS = (("no sign", "No clear sign of non-normal residuals"),
           ("spreads", "read the unequal-variance column"),
           ("check rows", "check those rows before relying on either column"),
           ("rely on resampling", "rely on the resampling column"))


def margin(p, n):
    return Z99 * math.sqrt(max(p * (1 - p), 0.05 * 0.95) / n) if n else 1.0


def errors(kind, rng):
    if kind == "skewed":
        return rng.exponential(1.0, 48) - 1.0, None
    if kind == "heavy":
        return rng.standard_t(3, 48), None
    e = rng.normal(0, 1, 48)
    if kind == "gross":
        k = int(rng.integers(48))
        e[k] += 8.0
        return e, k
    return e, None


def write(path, e):
    with open(path, "w") as f:
        f.write("primer,cure,temp,y\n")
        i = 0
        for a in ("p1", "p2", "p3"):
            for b in ("c1", "c2"):
                for c in ("t1", "t2"):
                    for _ in range(4):
                        f.write("%s,%s,%s,%.6f\n" % (a, b, c, 10.0 + e[i]))
                        i += 1


def run(path, fmt):
    p = subprocess.run([BIN, "check", path, "-y", "y", "-f", "primer,cure,temp", "-B", "999",
                        "--bootstrap", "0", "--threads", "1", "--quiet", "--format", fmt],
                       capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        report(False, "run failed (exit %d): %s" % (p.returncode, p.stderr.strip()))
        finish()
    return p.stdout


def normality_ending(text):
    line = " ".join(re.split(r"\n  \S", text.split("normality", 1)[1])[0].split())
    hits = [name for name, phrase in ENDINGS if phrase in line]
    return hits[0] if len(hits) == 1 else "?"


def reason_kind(reason):
    if reason.startswith("cell variances differ"):
        return "spreads"
    if reason.startswith("the outlier test flags"):
        return "flagged rows"
    if reason.startswith("residuals are not normal"):
        return "non-normal"
    if reason.startswith("both p-values lie near alpha"):
        return "near alpha"
    return "?"


def main():
    need_binary()
    kinds = ("clean", "skewed", "heavy", "gross")
    endings = {k: dict.fromkeys([n for n, _ in ENDINGS] + ["?"], 0) for k in kinds}
    reasons = {k: {} for k in kinds}
    named = {k: 0 for k in kinds}
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "d.csv")
        for idx, kind in enumerate(kinds):
            rng = np.random.default_rng(4100 + idx)
            for _ in range(NSETS):
                e, k = errors(kind, rng)
                write(path, e)
                endings[kind][normality_ending(run(path, "text"))] += 1
                doc = json.loads(run(path, "json"))
                for t in doc["responses"][0]["terms"]:
                    if t["verdict"] not in ("classical-only", "resampling-only"):
                        continue
                    rk = reason_kind(t["verdict_reason"] or "")
                    reasons[kind][rk] = reasons[kind].get(rk, 0) + 1
                    if rk == "flagged rows" and k is not None and \
                            ("(row %d" % (k + 1)) in t["verdict_reason"]:
                        named[kind] += 1
    print("normality advice: share of %d datasets per kind (3×2×2, 4 rows per cell, no effect)"
          % NSETS)
    print("  %-8s" % "errors" + "".join("%20s" % n for n, _ in ENDINGS))
    for kind in kinds:
        print("  %-8s" % kind + "".join("%20.3f" % (endings[kind][n] / NSETS)
                                        for n, _ in ENDINGS))
    print("reason given for a disagreement (F-test vs resampled F): count over all terms")
    for kind in kinds:
        tot = sum(reasons[kind].values())
        print("  %-8s %3d disagreements: %s%s" % (
            kind, tot, ", ".join("%s %d" % kv for kv in sorted(reasons[kind].items())),
            "; the planted row named in %d" % named[kind] if kind == "gross" else ""))
    for n, _ in ENDINGS:
        pass
    report(all(endings[k]["?"] == 0 for k in kinds),
           "every normality line ends with exactly one of the four endings")
    rely = {k: endings[k]["rely on resampling"] / NSETS for k in kinds}
    report(rely["clean"] - margin(rely["clean"], NSETS) <= 0.10,
           "'rely on the resampling column' on clean data: %.3f (≤ 0.10)" % rely["clean"])
    report(rely["gross"] - margin(rely["gross"], NSETS) <= 0.10,
           "'rely on the resampling column' with a gross error (where it is wrong): %.3f "
           "(≤ 0.10)" % rely["gross"])
    # Where it is right it cannot always fire: a skewed sample of 48 rows often looks
    # normal (Shapiro–Wilk's power), or its tail is flagged and looks like gross errors
    # once set aside. A guard below the measured 0.53, not a target: the rule is built
    # to keep the wrong firings above at most 10%.
    report(rely["skewed"] >= 0.40,
           "'rely on the resampling column' on skewed data (where it is right): %.3f "
           "(guard ≥ 0.40)" % rely["skewed"])
    chk = endings["gross"]["check rows"] / NSETS
    report(chk + margin(chk, NSETS) >= 0.90,
           "'check those rows' with a gross error: %.3f (≥ 0.90)" % chk)
    g = sum(reasons["gross"].values())
    report(g == 0 or named["gross"] / g + margin(named["gross"] / g, g) >= 0.90,
           "gross-error disagreements whose reason names the planted row: %d of %d (≥ 0.90)"
           % (named["gross"], g))
    c = sum(reasons["clean"].values())
    fr = reasons["clean"].get("flagged rows", 0)
    report(c == 0 or fr / c - margin(fr / c, c) <= 0.10,
           "clean-data disagreements blamed on flagged rows: %d of %d (≤ 0.10)" % (fr, c))
    finish()


if __name__ == "__main__":
    main()
