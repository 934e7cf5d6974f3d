"""Exact leave-one-out F and p of every term (checks/influence.c), against brute-force
refits: for every used row, the row is deleted and the model refitted from scratch.

References, named in every check line:
  * Types II and III: statsmodels anova_lm(ols(formula, data without the row), typ=K)
    with C(factor, Sum) coding, the formula in sturdy's term order;
  * Type I: sequential sums of squares from a numpy QR refit of the coded design (patsy's
    C(., Sum) columns, in sturdy's term order: block, covariate, factor terms), since
    patsy moves a covariate after the factor terms and anova_lm's Type I would then
    test another sequence; p from scipy.stats.f.

Designs (invented, fixed seeds), unbalanced, each with a covariate and a block:
  two3     2 factors (3×2), 2–5 rows per cell;
  three    3 factors (2×3×2), 2–4 rows per cell and one cell of a single row: deleting
           that row removes a cell (the design changes), so sturdy gives NaN there, for
           every term, and statsmodels is not asked;
  four     4 factors (2×2×2×2), 2–4 rows per cell.
Tolerances: F relative 1e-8 (floor 1e-10 absolute, for F near 0); p relative 1e-6
(floor 1e-13 absolute).
"""
import itertools
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, report  # noqa: E402

try:
    import numpy as np
    import pandas as pd
    import scipy.stats as st
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm
    import patsy
except ImportError as exc:
    from harness import missing_library
    missing_library(exc, "python3-statsmodels python3-scipy python3-pandas python3-patsy")

BUILD = os.environ.get("STURDY_BUILD", "build")
PROBE = os.path.join(BUILD, "tests", "probe_influence")
F_REL, F_ABS, P_REL, P_ABS = 1e-8, 1e-10, 1e-6, 1e-13


def dataset(seed, factors, levels, lo, hi, single=None):
    rng = np.random.default_rng(seed)
    rows = []
    for cell in itertools.product(*levels):
        k = 1 if cell == single else int(rng.integers(lo, hi + 1))
        for _ in range(k):
            rows.append(list(cell))
    rng.shuffle(rows)
    n = len(rows)
    df = pd.DataFrame(rows, columns=factors)
    df["x"] = np.round(rng.normal(0, 1, n), 6)
    df["blk"] = ["k%d" % (i % 3 + 1) for i in range(n)]
    eff = sum(0.4 * (df[f] == levels[j][0]) for j, f in enumerate(factors))
    df["y"] = np.round(5 + eff + 0.3 * df["x"] + rng.normal(0, 1, n), 6)
    return df


def sturdy_terms(factors):
    terms = [("blk",), ("x",)]
    for k in range(1, len(factors) + 1):
        terms.extend(itertools.combinations(factors, k))
    return terms


def patsy_term(t):
    return ":".join(v if v == "x" else "C(%s, Sum)" % v for v in t)


def formula(terms):
    return "y ~ " + " + ".join(patsy_term(t) for t in terms)


def ref_typ23(df, terms, typ):
    fit = smf.ols(formula(terms), data=df).fit()
    tab = anova_lm(fit, typ=typ)
    return {"\u00d7".join(t): (tab.loc[patsy_term(t), "F"], tab.loc[patsy_term(t), "PR(>F)"])
            for t in terms}


def ref_typ1(df, terms):
    X = patsy.dmatrix(formula(terms).split("~")[1], df, return_type="dataframe")
    info = X.design_info
    # patsy puts the covariate after the factor terms: put the columns back in sturdy's
    # order (intercept, then each term's block) before the sequential QR
    order, blocks = [0], []
    for t in terms:
        sl = info.slice(patsy_term(t))
        blocks.append((len(order), len(order) + sl.stop - sl.start))
        order.extend(range(sl.start, sl.stop))
    Xv = X.values[:, order]
    yv = df["y"].values
    q, r = np.linalg.qr(Xv)
    qy = q.T @ yv
    dfe = len(yv) - Xv.shape[1]
    sse = float(yv @ yv - qy @ qy)
    out = {}
    for t, (b0, b1) in zip(terms, blocks):
        ss = float(np.sum(qy[b0:b1] ** 2))
        d = b1 - b0
        f = (ss / d) / (sse / dfe)
        out["\u00d7".join(t)] = (f, st.f.sf(f, d, dfe))
    return out


def probe(path, ss, factors):
    p = subprocess.run([PROBE, path, str(ss), "y", ",".join(factors), "x", "blk"],
                       capture_output=True, text=True, timeout=120)
    if p.returncode != 0:
        report(False, "probe_influence failed (exit %d): %s" % (p.returncode, p.stderr))
        finish()
    out = {}
    for line in p.stdout.splitlines():
        term, row, f, pv = line.split(" ")
        if row == "-":
            out.setdefault(term, None)
            continue
        out.setdefault(term, {})[int(row)] = (float(f), float(pv))
    return out


def close(a, b, rel, ab):
    return abs(a - b) <= max(rel * abs(b), ab)


def check(name, df, factors, single_row=None):
    terms = sturdy_terms(factors)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, name + ".csv")
        df.to_csv(path, index=False)
        for ss in (1, 2, 3):
            got = probe(path, ss, factors)
            nf = np_ = 0
            worst_f = worst_p = 0.0
            bad = []
            nan_ok = True
            for i in range(len(df)):
                row = i + 1
                if single_row is not None and i == single_row:
                    nan_ok = all(np.isnan(got[t][row][0]) for t in got if got[t])
                    continue
                red = df.drop(index=i).reset_index(drop=True)
                ref = ref_typ1(red, terms) if ss == 1 else ref_typ23(red, terms, ss)
                for t, (fr, pr) in ref.items():
                    fo, po = got[t][row]
                    nf += 1
                    np_ += 1
                    worst_f = max(worst_f, abs(fo - fr) / max(abs(fr), F_ABS / F_REL))
                    worst_p = max(worst_p, abs(po - pr) / max(abs(pr), P_ABS / P_REL))
                    if not (close(fo, fr, F_REL, F_ABS) and close(po, pr, P_REL, P_ABS)):
                        bad.append((t, row, fo, fr, po, pr))
            src = ("numpy QR refit, sequential SS" if ss == 1
                   else "statsmodels anova_lm typ=%d refit" % ss)
            report(not bad, "%s Type %d: leave-one-out F and p of %d terms × %d rows vs %s; "
                   "worst relative error F %.2g (tol %g), p %.2g (tol %g)%s"
                   % (name, ss, len(terms), len(df) - (single_row is not None), src,
                      worst_f, F_REL, worst_p, P_REL,
                      "" if not bad else "; first mismatch %r" % (bad[0],)))
            if single_row is not None:
                report(nan_ok, "%s Type %d: deleting the only row of a cell (row %d) gives "
                       "NaN for every term (the design changes; influence.c)"
                       % (name, ss, single_row + 1))


def main():
    if not os.access(PROBE, os.X_OK):
        report(False, "probe %s not built (make test-bins)" % PROBE)
        finish()
    # factor names avoid patsy's own C() and Q()
    a = ["a1", "a2", "a3"]
    check("two3", dataset(11, ["fa", "fb"], [a, ["b1", "b2"]], 2, 5), ["fa", "fb"])
    df3 = dataset(12, ["fa", "fb", "fc"], [["a1", "a2"], ["b1", "b2", "b3"], ["c1", "c2"]],
                  2, 4, single=("a2", "b3", "c1"))
    single = int(np.flatnonzero((df3["fa"] == "a2") & (df3["fb"] == "b3") &
                                (df3["fc"] == "c1"))[0])
    check("three", df3, ["fa", "fb", "fc"], single_row=single)
    check("four", dataset(13, ["fa", "fb", "fc", "fd"], [["a1", "a2"], ["b1", "b2"],
                                                         ["c1", "c2"], ["d1", "d2"]], 2, 4),
          ["fa", "fb", "fc", "fd"])
    finish()


if __name__ == "__main__":
    main()
