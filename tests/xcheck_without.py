"""The resampling test without a term's deciding rows (analysis/without.c,
sensitivity.p_perm_without; issue 11, item 2).

Invented adhesion data, 3×2×2 (primer × cure × temp), 4 replicates, one decimal slip
(the "hides" dataset of xcheck_sensitivity.py, seed 7). Checks:
  - every term with a deciding set has p_perm_without, and its F refitted without the set
    (f_refit) equals the deletion formula's f_without (rel 1e-9) and a statsmodels
    anova_lm typ=3 refit without the rows (rel 1e-9);
  - "the same rearrangements": p_perm_without and exceed_without equal, bit for bit, the
    p_perm and exceed of a run on the data file with the rows deleted (same seed), for
    every distinct set;
  - the same bits with 1, 2 and 3 threads, and from 3 shards merged (the counts travel in
    the parts' raw sections), also under --flip;
  - p_perm_without agrees with an independent numpy Freedman–Lane test on the data without
    the rows (its own random permutations) within 4 Monte Carlo standard errors;
  - null with the reason when the run has no rearrangements (-B 0) or enumerates them all
    (a tiny blocked design), and for the block term, which rearrangements within blocks
    cannot test (present under --flip).
"""
import json
import math
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, need_binary, report  # noqa: E402

try:
    import numpy as np
    import pandas as pd
    import patsy
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm
except ImportError as exc:
    from harness import missing_library
    missing_library(exc, "python3-statsmodels python3-pandas python3-patsy")

BIN = os.environ.get("STURDY_BIN", "./sturdy")
FORMULA = "y ~ C(primer, Sum) * C(cure, Sum) * C(temp, Sum)"


def dataset(rng, effect=1.5):
    rows = []
    for a in ("p1", "p2", "p3"):
        for b in ("c1", "c2"):
            for c in ("t1", "t2"):
                for _ in range(4):
                    rows.append([a, b, c, round(7.0 + (effect if a == "p1" else 0.0) +
                                                rng.normal(0, 0.5), 2)])
    k = int(rng.integers(len(rows)))
    rows[k][3] = round(rows[k][3] * 10, 1)
    return rows


def write(path, rows):
    with open(path, "w") as f:
        f.write("primer,cure,temp,y\n")
        for r in rows:
            f.write("%s,%s,%s,%s\n" % tuple(r))


def run(path, *extra, raw=False):
    p = subprocess.run([BIN, "check", path, "-y", "y", "-f", "primer,cure,temp", "-B", "1999",
                        "--bootstrap", "0", "--format", "json", "--quiet"] + list(extra),
                       capture_output=True, text=True, timeout=120)
    if p.returncode != 0:
        report(False, "run failed (exit %d): %s" % (p.returncode, p.stderr.strip()))
        finish()
    return p.stdout if raw else json.loads(p.stdout)


def ref_f(rows, drop):
    df = pd.DataFrame(rows, columns=["primer", "cure", "temp", "y"]).drop(index=drop)
    tab = anova_lm(smf.ols(FORMULA, data=df).fit(), typ=3)
    out = {}
    for name in tab.index:
        if name in ("Intercept", "Residual"):
            continue
        lab = "\u00d7".join(part.split("(")[1].split(",")[0] for part in name.split(":"))
        out[lab] = tab.loc[name, "F"]
    return out


def numpy_fl(rows, drop, term, B, rng):
    """Freedman–Lane for a Type III term by plain numpy refits, own permutations."""
    df = pd.DataFrame(rows, columns=["primer", "cure", "temp", "y"]).drop(index=drop)
    X = patsy.dmatrix("C(primer, Sum) * C(cure, Sum) * C(temp, Sum)", df,
                      return_type="dataframe")
    facs = term.split("\u00d7")
    keep = [c for c in X.columns
            if sorted(p.split("(")[1].split(",")[0] for p in c.split(":")
                      if p.startswith("C(")) != sorted(facs)]
    Xf, Xr, y = X.values, X[keep].values, df["y"].values
    dfe = len(y) - Xf.shape[1]
    q = Xf.shape[1] - Xr.shape[1]

    def fstat(v):
        rf = v - Xf @ np.linalg.lstsq(Xf, v, rcond=None)[0]
        rr = v - Xr @ np.linalg.lstsq(Xr, v, rcond=None)[0]
        return ((rr @ rr - rf @ rf) / q) / ((rf @ rf) / dfe)
    f0 = fstat(y)
    fit = Xr @ np.linalg.lstsq(Xr, y, rcond=None)[0]
    e = y - fit
    c = sum(fstat(fit + rng.permutation(e)) >= f0 * (1 - 1e-10) for _ in range(B))
    return (1 + c) / (1 + B)


def main():
    need_binary()
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "slip.csv")
        rows = dataset(np.random.default_rng(7))
        write(path, rows)
        out = run(path)
        terms = out["responses"][0]["terms"]
        sets = {}
        for t in terms:
            sv = t["sensitivity"]
            if sv["rows_to_change"] is None:
                continue
            drop = [x["row"] - 1 for x in sv["rows"]]
            ok = sv["p_perm_without"] is not None and sv["exceed_without"] is not None
            report(ok, "%s: p_perm_without %s (exceed %s) for rows %s"
                   % (t["term"], sv["p_perm_without"], sv["exceed_without"],
                      [d + 1 for d in drop]))
            if not ok:
                continue
            rf = ref_f(rows, drop)[t["term"]]
            report(abs(sv["f_refit"] - sv["f_without"]) <= 1e-9 * abs(sv["f_without"]) and
                   abs(sv["f_refit"] - rf) <= 1e-9 * abs(rf),
                   "%s: F refitted %.12g vs deletion formula %.12g vs statsmodels refit %.12g "
                   "(rel 1e-9)" % (t["term"], sv["f_refit"], sv["f_without"], rf))
            sets.setdefault(tuple(sorted(drop)), []).append(t)
        report(len(sets) >= 2, "the slip dataset gives %d distinct deciding sets (≥ 2)"
               % len(sets))
        # the same rearrangements: a run on the file without the rows gives the same bits
        for drop, ts in sorted(sets.items()):
            sub = os.path.join(tmp, "without.csv")
            write(sub, [r for i, r in enumerate(rows) if i not in drop])
            other = {t["term"]: t for t in run(sub)["responses"][0]["terms"]}
            for t in ts:
                sv, o = t["sensitivity"], other[t["term"]]
                report(sv["p_perm_without"] == o["p_perm"] and
                       sv["exceed_without"] == o["exceed"] and sv["f_refit"] == o["f"],
                       "%s without rows %s: p_perm_without %r, exceed %d, F %r; a run on the "
                       "file without them: %r, %d, %r (identical)"
                       % (t["term"], [d + 1 for d in drop], sv["p_perm_without"],
                          sv["exceed_without"], sv["f_refit"], o["p_perm"], o["exceed"], o["f"]))
        # threads and shards, plain and with sign flips
        for extra in ([], ["--flip"]):
            base = run(path, "--threads", "1", *extra, raw=True)
            same = [run(path, "--threads", str(k), *extra, raw=True) == base for k in (2, 3)]
            parts = []
            for i in (1, 2, 3):
                part = os.path.join(tmp, "part%d.json" % i)
                subprocess.run([BIN, "check", path, "-y", "y", "-f", "primer,cure,temp", "-B",
                                "1999", "--bootstrap", "0", "--shard", "%d/3" % i, "--quiet",
                                "-o", part] + extra, check=True, timeout=120)
                parts.append(part)
            merged = os.path.join(tmp, "merged.json")
            subprocess.run([BIN, "merge"] + parts + ["-o", merged, "--quiet"], check=True,
                           timeout=120)
            mtext = open(merged).read()
            n_with = sum(t["sensitivity"]["p_perm_without"] is not None
                         for t in json.loads(base)["responses"][0]["terms"])
            report(all(same) and mtext == base and n_with >= 1,
                   "%s: threads 1/2/3 and 3 shards merged give the same bytes (%d terms with "
                   "p_perm_without)" % (" ".join(extra) or "permutations", n_with))
        # an independent Freedman–Lane on the data without the rows (Monte Carlo agreement)
        rng = np.random.default_rng(11)
        big = run(path, "-B", "4999")
        t = next(x for x in big["responses"][0]["terms"]
                 if x["sensitivity"]["rows_to_change"] == 2)
        sv = t["sensitivity"]
        ref = numpy_fl(rows, [x["row"] - 1 for x in sv["rows"]], t["term"], 2000, rng)
        se = math.sqrt(ref * (1 - ref) / 2000 + ref * (1 - ref) / 4999)
        report(abs(sv["p_perm_without"] - ref) <= 4 * se + 1e-4,
               "%s: p_perm_without %.4f vs numpy Freedman–Lane refits %.4f (2000 permutations; "
               "4 SE = %.4f)" % (t["term"], sv["p_perm_without"], ref, 4 * se))
        # absent, with the reason
        sv = next(x["sensitivity"] for x in run(path, "-B", "0")["responses"][0]["terms"]
                  if x["sensitivity"]["rows_to_change"] is not None)
        report(sv["p_perm_without"] is None and "no rearrangements" in sv["perm_note"],
               "-B 0: p_perm_without null, note %r" % sv["perm_note"])
        tiny = os.path.join(tmp, "tiny.csv")
        with open(tiny, "w") as f:
            f.write("a,blk,y\n")
            vals = [1.0, 5.2, 1.3, 5.0, 1.1, 5.4, 1.2, 5.1, 0.9, 5.3, 1.4, 40.0]
            for i, v in enumerate(vals):
                f.write("%s,b%d,%s\n" % ("x" if i % 2 == 0 else "z", i // 3, v))
        p = subprocess.run([BIN, "check", tiny, "-y", "y", "-f", "a", "--block", "blk",
                            "--bootstrap", "0", "--format", "json", "--quiet"],
                           capture_output=True, text=True, timeout=60)
        doc = json.loads(p.stdout)
        svs = [x["sensitivity"] for x in doc["responses"][0]["terms"]
               if x["sensitivity"]["rows_to_change"] is not None]
        report(doc["settings"].get("exact") is not False and svs and
               all(s["p_perm_without"] is None and "enumerated" in s["perm_note"] for s in svs),
               "enumerated run (4 blocks of 3): p_perm_without null with the reason (%s)"
               % [s["perm_note"] for s in svs])
        # the block term is not resampled under rearrangements within blocks: neither is
        # it without its deciding rows; under --flip it is
        blk = os.path.join(tmp, "blk.csv")
        rng = np.random.default_rng(2)
        with open(blk, "w") as f:
            f.write("a,blk,y\n")
            for i in range(40):
                v = rng.normal() + (0.3 if i % 2 else 0) + (i // 10) * 0.3 + (8 if i == 7 else 0)
                f.write("a%d,b%d,%.4f\n" % (i % 2, i // 10, v))
        for extra, want_null in (([], True), (["--flip"], False)):
            p = subprocess.run([BIN, "check", blk, "-y", "y", "-f", "a", "--block", "blk",
                                "--bootstrap", "0", "--format", "json", "--quiet"] + extra,
                               capture_output=True, text=True, timeout=60)
            t = json.loads(p.stdout)["responses"][0]["terms"][0]
            sv = t["sensitivity"]
            ok = t["term"] == "blk" and sv["rows_to_change"] is not None and \
                (sv["p_perm_without"] is None) == want_null and \
                (t["p_perm"] is None) == want_null
            report(ok, "block term %s: p_perm %s, p_perm_without %s (%s)"
                   % (" ".join(extra) or "within blocks", t["p_perm"], sv["p_perm_without"],
                      sv["perm_note"]))
    finish()


if __name__ == "__main__":
    main()
