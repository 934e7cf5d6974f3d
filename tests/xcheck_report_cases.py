"""Crafted cases for the report's headline, advice and outlier list (issue: diagnostics
and the robustness report). Invented property-test data with fixed seeds:

  unequal  3×2 design, 30 rows per cell, one cell with 8× the SD of the others: the
           Brown–Forsythe test (scipy.stats.levene(center='median') on the same cells,
           live) must flag it, the JSON must set diagnostics.spread_differs, and the
           text must lead with the unequal spread and point to the unequal-variance
           column, never to --flip (sign flipping does not hold α there);
  outlier  2×2 design, 10 rows per cell, two planted gross errors at known rows: the
           JSON must list exactly those rows (flagged by the Bonferroni outlier test on
           externally studentized residuals, Cook & Weisberg 1982) with their lines and
           cells, and the text must name them with the residual's unit;
  clean    normal errors, equal variances: no spread advice, no outliers, and the
           headline says every term agrees;
  demo     the built-in demo: the headline names the disagreeing term and its verdict.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import scipy.stats as st

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, report  # noqa: E402

BIN = os.environ.get("STURDY_BIN", "./sturdy")


def run(args):
    p = subprocess.run([BIN] + args + ["--quiet"], capture_output=True, text=True, timeout=120)
    return p.returncode, p.stdout, p.stderr


def write(path, header, rows):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(x) for x in r) + "\n")


def main():
    rng = np.random.default_rng(4242)
    with tempfile.TemporaryDirectory() as tmp:
        # --- unequal variances
        rows, groups = [], {}
        for a in ("a1", "a2", "a3"):
            for b in ("b1", "b2"):
                sd = 8.0 if (a, b) == ("a3", "b2") else 1.0
                for _ in range(30):
                    y = 10 + rng.normal(0, sd)
                    rows.append((a, b, "%.6f" % y))
                    groups.setdefault((a, b), []).append(float("%.6f" % y))
        path = os.path.join(tmp, "unequal.csv")
        write(path, ["a", "b", "y"], rows)
        rc, js, err = run(["check", path, "-y", "y", "-f", "a,b", "-B", "999",
                           "--bootstrap", "0", "--format", "json"])
        d = json.loads(js)
        bf = d["responses"][0]["diagnostics"]["brown_forsythe"]
        # residuals of the cell-means model; Levene with medians on them equals on y
        ref = st.levene(*[np.array(v) for v in groups.values()], center="median")
        report(abs(bf["f"] - ref.statistic) <= 1e-9 * ref.statistic,
               "unequal: Brown-Forsythe F observed %.12g expected %.12g rel 1e-9 (source: "
               "scipy.stats.levene center='median')" % (bf["f"], ref.statistic))
        report(bf["p"] < 1e-6, "unequal: Brown-Forsythe p %.3g < 1e-6 flags the 8x SD cell"
               % bf["p"])
        rc, text, err = run(["check", path, "-y", "y", "-f", "a,b", "-B", "999",
                             "--bootstrap", "0"])
        flat = " ".join(text.split())
        report(rc == 0 and d["responses"][0]["diagnostics"]["spread_differs"] is True,
               "unequal: JSON diagnostics.spread_differs is true (exit %d)" % rc)
        head = flat.split("The run")[0]
        report("The cell spreads of y differ" in head and "unequal-variance test" in head,
               "unequal: the headline leads with the unequal spread and the unequal-variance "
               "test")
        report("read the unequal-variance column" in flat and "--flip" not in flat,
               "unequal: the spread advice points to the unequal-variance column, not --flip")

        # --- planted outliers at data rows 7 and 23
        rows = []
        for a in ("p", "q"):
            for b in ("u", "v"):
                for _ in range(10):
                    rows.append([a, b, 5 + rng.normal(0, 0.5)])
        planted = (7, 23)
        for r in planted:
            rows[r - 1][2] += 12.0
        rows = [(a, b, "%.6f" % y) for a, b, y in rows]
        path = os.path.join(tmp, "outlier.csv")
        write(path, ["a", "b", "y"], rows)
        rc, js, err = run(["check", path, "-y", "y", "-f", "a,b", "-B", "999",
                           "--bootstrap", "0", "--format", "json"])
        outl = json.loads(js)["responses"][0]["diagnostics"]["outliers"]
        got = sorted(o["row"] for o in outl)
        report(got == list(planted), "outlier: rows listed %r expected %r" % (got, list(planted)))
        report(all(o["line"] == o["row"] + 1 for o in outl),
               "outlier: each line is its row + 1 (one header line)")
        cells = {o["row"]: o["cell"] for o in outl}
        want = {r: "a=%s, b=%s" % (rows[r - 1][0], rows[r - 1][1]) for r in planted}
        report(cells == want, "outlier: cells %r expected %r" % (cells, want))
        rc, text, err = run(["check", path, "-y", "y", "-f", "a,b", "-B", "999",
                             "--bootstrap", "0"])
        flat = " ".join(text.split())
        report(all(("row %d (" % r) in flat for r in planted),
               "outlier: the text names rows %r" % (planted,))
        report("externally studentized residual" in flat and "leans on single rows" not in flat,
               "outlier: the text names the unit and does not claim the resampling test "
               "resists a gross error")

        # --- clean data
        rows = []
        for a in ("p", "q", "r"):
            for b in ("u", "v"):
                for _ in range(12):
                    rows.append((a, b, "%.6f" % (3 + rng.normal(0, 1))))
        path = os.path.join(tmp, "clean.csv")
        write(path, ["a", "b", "y"], rows)
        rc, js, err = run(["check", path, "-y", "y", "-f", "a,b", "-B", "4999",
                           "--bootstrap", "0", "--format", "json"])
        d = json.loads(js)["responses"][0]
        agree = all(t["verdict"] in ("both", "neither") for t in d["terms"])
        rc, text, err = run(["check", path, "-y", "y", "-f", "a,b", "-B", "4999",
                             "--bootstrap", "0"])
        report(agree and "All 3 tested terms reach the same conclusion" in text,
               "clean: every verdict agrees and the headline says all 3 agree")
        report("cell spreads" not in text and "--flip" not in text and
               d["diagnostics"]["spread_differs"] is False and not d["diagnostics"]["outliers"],
               "clean: no spread advice and no outliers")

        # --- the demo's disagreement
        rc, js, err = run(["demo", "--format", "json"])
        terms = json.loads(js)["responses"][0]["terms"]
        dis = [t["term"] for t in terms if t["verdict"] in ("classical-only",
                                                            "resampling-only")]
        rc, text, err = run(["demo"])
        head = text.split("The run")[0]
        report(len(dis) >= 1 and all(t in head for t in dis) and "does not" in head,
               "demo: the headline names the disagreeing term(s) %r" % dis)
    finish()


if __name__ == "__main__":
    main()
