"""Single-row sensitivity (checks/influence.c, report/text_sensitivity.c): crafted datasets
and the headline rule's firing rates (issue 11, items 2 and 4).

Invented adhesion data, 3×2×2 (primer × cure × temp), 4 replicates (48 rows), fixed seeds:
  hides    a large primer effect and one decimal slip (a value typed ten times too
           large): the JSON names the planted row as the one row that hides primer, its
           p_without equals a statsmodels anova_lm typ=3 refit without the row, and the
           report's first line under "In short" names the row and its file line;
  creates  no effect at all, one cell of 2 rows, and a decimal slip in it: a row of a
           small cell has a large leverage, so the slip makes terms significant that are
           not without it (checked with statsmodels: p tenfold without): the JSON names
           the row as the one that creates the first such term, and so does the headline (in a
           cell of 4, a slip rarely creates an effect: it swamps the error SS too and
           leaves every p near 0.3);
  clean    no slip: no term is decisive, the headline has no "!" line about rows, and
           the "single rows" line is there.
Multi-row sets (2 or 3 rows, seeded datasets with a smaller effect): p_without equals a
statsmodels refit without all the set's rows, and the last row is the best the greedy
step could add (statsmodels refits of every candidate).
Rates (each dataset one run, -B 0): the headline rule fires on clean data (no effect;
a large primer effect) in at most 10% of datasets, and when a slip hides a large effect
it fires naming the planted row in at least 90%; with a slip in null data, every firing
names the planted row.
"""
import json
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import QUICK, finish, need_binary, report  # noqa: E402

try:
    import numpy as np
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm
except ImportError as exc:
    from harness import missing_library
    missing_library(exc, "python3-statsmodels python3-pandas")

BIN = os.environ.get("STURDY_BIN", "./sturdy")
NSETS = 30 if QUICK else 60
FORMULA = "y ~ C(primer, Sum) * C(cure, Sum) * C(temp, Sum)"


def dataset(rng, slip, effect):
    rows = []
    for a in ("p1", "p2", "p3"):
        for b in ("c1", "c2"):
            for c in ("t1", "t2"):
                for _ in range(4):
                    rows.append([a, b, c, round(7.0 + (effect if a == "p1" else 0.0) +
                                                rng.normal(0, 0.5), 2)])
    k = None
    if slip:
        k = int(rng.integers(len(rows)))
        rows[k][3] = round(rows[k][3] * 10, 1)  # a decimal slip: ten times too large
    return rows, k


def write(path, rows):
    with open(path, "w") as f:
        f.write("primer,cure,temp,y\n")
        for r in rows:
            f.write("%s,%s,%s,%s\n" % tuple(r))


def run(path, fmt="json"):
    p = subprocess.run([BIN, "check", path, "-y", "y", "-f", "primer,cure,temp", "-B", "0",
                        "--bootstrap", "0", "--format", fmt, "--threads", "1", "--quiet"],
                       capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        report(False, "run failed (exit %d): %s" % (p.returncode, p.stderr.strip()))
        finish()
    return json.loads(p.stdout)["responses"][0] if fmt == "json" else p.stdout


def ref_p(rows, drop=None):
    df = pd.DataFrame(rows, columns=["primer", "cure", "temp", "y"])
    if drop is not None:
        df = df.drop(index=drop)
    tab = anova_lm(smf.ols(FORMULA, data=df).fit(), typ=3)
    out = {}
    for name in tab.index:
        if name in ("Intercept", "Residual"):
            continue
        lab = "\u00d7".join(part.split("(")[1].split(",")[0] for part in name.split(":"))
        out[lab] = tab.loc[name, "PR(>F)"]
    return out


def headline(text):
    lines = text.split("In short", 1)[1].split("\n")
    return " ".join(" ".join(lines[1:6]).split())


def term(resp, label):
    return next(t for t in resp["terms"] if t["term"] == label)


def crafted(tmp):
    path = os.path.join(tmp, "c.csv")
    # --- hides
    rows, k = dataset(np.random.default_rng(7), 1, 1.5)
    write(path, rows)
    sv = term(run(path), "primer")["sensitivity"]
    ref = ref_p(rows, drop=k)["primer"]
    report(sv["rows_to_change"] == 1 and sv["direction"] == "hides" and
           sv["rows"][0]["row"] == k + 1 and sv["rows"][0]["line"] == k + 2 and sv["decisive"],
           "hides: JSON primer sensitivity names row %d (line %d), direction hides, decisive: "
           "%s" % (k + 1, k + 2, json.dumps(sv)[:200]))
    report(abs(sv["p_without"] - ref) <= 1e-6 * ref,
           "hides: p_without %.10g vs statsmodels anova_lm typ=3 refit without row %d %.10g "
           "(rel 1e-6)" % (sv["p_without"], k + 1, ref))
    head = headline(run(path, "text"))
    report(head.startswith("! One row decides primer: without row %d (line %d;" % (k + 1, k + 2)),
           "hides: the report opens with the row: %r" % head[:160])
    # --- creates: the last cell keeps 2 rows and its second row carries the slip; a
    # row of a small cell has a large leverage, so the slip makes terms significant that
    # are not without it (statsmodels decides, p tenfold)
    rows, _ = dataset(np.random.default_rng(100), 0, 0.0)
    rows = rows[:-2]
    k = len(rows) - 1
    rows[k][3] = round(rows[k][3] * 10, 1)
    with_row, without = ref_p(rows), ref_p(rows, drop=k)
    made = [t for t in with_row if with_row[t] <= 0.05 < without[t] and
            without[t] >= 10 * with_row[t]]
    seed = 100
    if not made:
        report(False, "creates: the planted slip creates no effect (statsmodels)")
        return
    write(path, rows)
    resp = run(path)
    sv = term(resp, made[0])["sensitivity"]
    report(sv["rows_to_change"] == 1 and sv["direction"] == "creates" and
           sv["rows"][0]["row"] == k + 1 and sv["decisive"],
           "creates (seed %d): JSON %s sensitivity names row %d as creating it (statsmodels: "
           "p %.3g with the row, %.3g without): %s" % (seed, made[0], k + 1,
                                                      with_row[made[0]], without[made[0]],
                                                      json.dumps(sv)[:160]))
    head = headline(run(path, "text"))
    report(("decides %s: without row %d (line %d;" % (made[0], k + 1, k + 2)) in head,
           "creates: the headline names the term and the row: %r" % head[:160])
    # --- clean
    rows, _ = dataset(np.random.default_rng(8), 0, 1.5)
    write(path, rows)
    resp = run(path)
    text = run(path, "text")
    report(not any(t["sensitivity"]["decisive"] for t in resp["terms"]) and
           not headline(text).startswith("!") and "single rows" in text,
           "clean: no decisive term, no '!' line, the single-rows line is there")


def rates(tmp):
    path = os.path.join(tmp, "r.csv")
    rng = np.random.default_rng(20261202)
    table = []
    for name, slip, eff in (("clean, no effect", 0, 0.0), ("clean, primer effect 3 SD", 0, 1.5),
                            ("slip, primer effect 3 SD", 1, 1.5), ("slip, no effect", 1, 0.0)):
        fires = names = 0
        for _ in range(NSETS):
            rows, k = dataset(rng, slip, eff)
            write(path, rows)
            dec = [t for t in run(path)["terms"] if t["sensitivity"]["decisive"]]
            fires += bool(dec)
            if dec and k is not None:
                names += all(any(x["row"] == k + 1 for x in t["sensitivity"]["rows"])
                             for t in dec)
        table.append((name, fires / NSETS, names / NSETS))
    print("headline rule (≤ 2 rows, p moves ≥ 10×, a row flagged)   datasets  fires  "
          "fires naming the slip")
    for name, f, n in table:
        print("  %-52s %8d  %5.2f  %5.2f" % (name, NSETS, f, n))
    report(table[0][1] <= 0.10 and table[1][1] <= 0.10,
           "clean data: the headline rule fires in %.2f and %.2f of %d datasets (≤ 0.10)"
           % (table[0][1], table[1][1], NSETS))
    report(table[2][2] >= 0.90,
           "a slip hiding a 3-SD effect: the headline names the slipped row in %.2f (≥ 0.90)"
           % table[2][2])
    report(table[3][1] == table[3][2],
           "a slip in null data: every firing (%.2f) names the slipped row (%.2f)"
           % (table[3][1], table[3][2]))


def multi_row(tmp):
    """Sets of 2 and 3 rows (the greedy search's later steps, whose deleted sums of squares
    border the fixed rows' factorisation): p_without equals a statsmodels refit without
    all of the set's rows, and the set's last row is the best of every row the last step
    could add (largest p for a significant term, smallest otherwise; refits of each)."""
    path = os.path.join(tmp, "m.csv")
    found = 0
    worst_p = worst_step = 0.0
    for seed in range(300, 360):
        rows, _ = dataset(np.random.default_rng(seed), seed % 3 == 0, 0.25 + 0.05 * (seed % 5))
        write(path, rows)
        full = ref_p(rows)
        for t in run(path)["terms"]:
            sv = t["sensitivity"]
            k = sv["rows_to_change"]
            if not k or k < 2:
                continue
            lab = t["term"]
            S = [r["row"] - 1 for r in sv["rows"]]
            ref = ref_p(rows, drop=S)[lab]
            worst_p = max(worst_p, abs(sv["p_without"] - ref) / ref)
            sig = full[lab] <= 0.05
            best = None
            for j in range(len(rows)):
                if j in S:
                    continue
                pj = ref_p(rows, drop=S[:-1] + [j])[lab]
                if best is None or (pj > best if sig else pj < best):
                    best = pj
            chosen = ref_p(rows, drop=S)[lab]
            worst_step = max(worst_step, (best - chosen if sig else chosen - best) / best)
            found += 1
            if found >= 4:
                break
        if found >= 4:
            break
    report(found >= 4, "multi-row sets: %d terms with a set of 2 or 3 rows found in the "
           "seeded datasets (need 4)" % found)
    report(worst_p <= 1e-6,
           "multi-row sets: p_without vs statsmodels anova_lm typ=3 refit without every row of "
           "the set, worst relative gap %.2g (tol 1e-6)" % worst_p)
    report(worst_step <= 1e-6,
           "multi-row sets: the last row chosen is the best the step could add (refits of "
           "every other row), worst relative shortfall %.2g (tol 1e-6)" % worst_step)


def main():
    need_binary()
    with tempfile.TemporaryDirectory() as tmp:
        crafted(tmp)
        multi_row(tmp)
        rates(tmp)
    finish()


if __name__ == "__main__":
    main()
