"""xcheck_anova.py — sturdy's classical ANOVA table (`sturdy check --format json`) against
statsmodels, computed live on invented unbalanced datasets (fixed numpy seeds).

Checks and tolerances (the reference is named on every line):
  * every term's df, SS, F and p, and the residual df and SS, for --ss 1, 2, 3 against
    statsmodels.stats.anova.anova_lm(ols(...), typ=K) with C(factor, Sum) coding and the
    formula written in sturdy's term order (block, covariates, main effects, 2-way, ...),
    relative 1e-8;
  * where anova_lm cannot serve (empty cells make the design rank-deficient: its Type I
    counts columns instead of rank, its Type II/III Wald tests use non-estimable
    coefficients), the term's comparison is refitted directly with statsmodels OLS:
    SS = SSE(reduced) − SSE(augmented), df = difference of residual df, with the reduced
    model of the SS type (Type I: preceding terms; II: terms not containing it; III: all
    other columns of the sum-coded full design);
  * eta2, partial_eta2, omega2, partial_omega2, cohens_f against the textbook formulas
    (Hays 1963; Olejnik & Algina 2003) evaluated on the reference SS, relative 1e-8;
  * the noncentral-F interval for partial eta2 (Steiger 2004): each bound's
    λ = η²/(1−η²)·N (N = rows used) plugged into scipy.stats.ncf.cdf at the observed F gives
    1−(1−conf)/2 (lower) and (1−conf)/2 (upper) to absolute 1e-6; a bound of 0 needs
    the central F cdf at F_obs to be at most its target;
  * empty cells under Type III: the terms that cannot be tested have null F/p and a
    non-empty note; zero residual df: F and p null with a note, SS still as statsmodels.
Prints one line per check and "N passed, N failed"; exits 1 on any failure. A missing
reference library or binary is a failure, never a skip.
"""
import itertools
import json
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, missing_library, need_binary, report  # noqa: E402

REL = 1e-8          # the brief's tolerance for every classical number
# Sums of squares are computed from data of size ~SST, so a term whose SS is tiny can
# only be matched to ~1e-13·SST in absolute terms (rounding of doubles times a few
# dozen accumulated terms); below that a relative comparison is meaningless.
SS_FLOOR = 1e-13
# Effect sizes live on [-1, 1] (Cohen's f a little wider); an absolute floor of 1e-12
# covers omega2 values that cross zero, where relative error is undefined.
ES_FLOOR = 1e-12
NCF_TOL = 1e-6      # the brief's tolerance on the cdf at the interval's λ bounds


try:
    import numpy as np
    import pandas as pd
    import scipy.stats as st
    import statsmodels.api as sm
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-statsmodels")

BIN = need_binary()


def close(what, obs, exp, rel, floor, source):
    """One check: |obs − exp| ≤ rel·max(|obs|, |exp|) + floor."""
    if obs is None or exp is None or not np.isfinite(exp):
        ok = False
    else:
        ok = abs(obs - exp) <= rel * max(abs(obs), abs(exp)) + floor
    report(ok, "%s: observed %r expected %r tol rel %.0e + abs %.1e (source: %s)"
           % (what, obs, exp, rel, floor, source))


# ---------------------------------------------------------------- invented datasets

def cells_rows(rng, levels, lo=2, hi=6, empty=(), fixed=None):
    """Rows (one tuple of level names per row) for every cell of the crossing, with
    lo..hi rows per cell (or `fixed` rows), skipping the cells listed in `empty`."""
    rows = []
    for cell in itertools.product(*levels):
        if cell in empty:
            continue
        count = fixed if fixed else int(rng.integers(lo, hi + 1))
        rows.extend([cell] * count)
    order = rng.permutation(len(rows))  # file order is not cell order
    return [rows[i] for i in order]


def response(rng, factors, levels, rows, base, noise):
    """Main effects, every interaction (smaller) and normal noise, rounded to 4 decimals
    as a measuring instrument would print them."""
    effect = {}
    for k in range(1, len(factors) + 1):
        for combo in itertools.combinations(range(len(factors)), k):
            scale = 3.0 / k
            for cell in itertools.product(*[levels[f] for f in combo]):
                effect[(combo, cell)] = rng.normal(0.0, scale)
    y = []
    for row in rows:
        v = base + rng.normal(0.0, noise)
        for (combo, cell) in effect:
            if tuple(row[f] for f in combo) == cell:
                v += effect[(combo, cell)]
        y.append(v)
    return np.round(np.array(y), 4)


def dataset(name, seed, factors, levels, yname, empty=(), fixed=None, covariate=None,
            block=None, order=0):
    rng = np.random.default_rng(seed)
    rows = cells_rows(rng, levels, empty=empty, fixed=fixed)
    y = response(rng, factors, levels, rows, 40.0, 2.0)
    df = pd.DataFrame({f: [r[i] for r in rows] for i, f in enumerate(factors)})
    covs, blk = [], None
    if covariate:
        # correlated with the first factor, as placement in a kiln follows the glaze run
        shift = {lv: 3.0 * i for i, lv in enumerate(levels[0])}
        x = np.round(np.array([rng.normal(20.0, 4.0) + shift[r[0]] for r in rows]), 2)
        df[covariate] = x
        y = np.round(y + 0.7 * x, 4)
        covs = [covariate]
    if block:
        blevels = ["lot%d" % (i + 1) for i in range(4)]
        b = [blevels[int(rng.integers(0, 4))] for _ in rows]
        beffect = dict(zip(blevels, rng.normal(0.0, 2.5, 4)))
        df[block] = b
        y = np.round(y + np.array([beffect[v] for v in b]), 4)
        blk = block
    df[yname] = y
    return {"name": name, "df": df, "factors": factors, "y": yname, "covs": covs,
            "block": blk, "order": order}


def sturdy_terms(ds):
    """Terms in sturdy's documented order: block, covariates, then factor terms by
    order, within an order by lexicographic factor index lists."""
    terms = []
    if ds["block"]:
        terms.append((ds["block"],))
    terms.extend((c,) for c in ds["covs"])
    nf = len(ds["factors"])
    top = ds["order"] or nf
    for k in range(1, top + 1):
        for combo in itertools.combinations(range(nf), k):
            terms.append(tuple(ds["factors"][i] for i in combo))
    return terms


def patsy_term(ds, term):
    return ":".join(v if v in ds["covs"] else "C(%s, Sum)" % v for v in term)


def formula(ds, terms):
    rhs = " + ".join(patsy_term(ds, t) for t in terms) if terms else "1"
    return "%s ~ %s" % (ds["y"], rhs)


def label(term):
    return "\u00d7".join(term)


# ---------------------------------------------------------------- running sturdy

def run_sturdy(ds, path, ss):
    args = [BIN, "check", path, "-y", ds["y"], "-f", ",".join(ds["factors"]),
            "-B", "0", "--bootstrap", "0", "--ss", str(ss), "--format", "json"]
    if ds["covs"]:
        args += ["--covariates", ",".join(ds["covs"])]
    if ds["block"]:
        args += ["--block", ds["block"]]
    if ds["order"]:
        args += ["--order", str(ds["order"])]
    try:
        proc = subprocess.run(args, capture_output=True, text=True, timeout=60)
    except (OSError, subprocess.TimeoutExpired) as exc:
        return None, "could not run: %s" % exc
    if proc.returncode not in (0, 4):
        return None, "exit %d: %s" % (proc.returncode, proc.stderr.strip()[:300])
    try:
        out = json.loads(proc.stdout)
    except ValueError as exc:
        return None, "output is not JSON (%s)" % exc
    # README (exit codes): 4 exactly when no requested term could be tested (no term has
    # an F), the result still written with the reasons
    tested = sum(t["f"] is not None for r in out["responses"] for t in r["terms"])
    want = 0 if tested else 4
    report(proc.returncode == want, "%s --ss %d: exit %d with %d tested terms, expected %d "
           "(source: README exit codes)" % (os.path.basename(path), ss, proc.returncode,
                                            tested, want))
    return out, None


def sturdy_table(ds, path, ss, tag):
    out, why = run_sturdy(ds, path, ss)
    if out is None:
        report(False, "%s: sturdy check --ss %d: %s" % (tag, ss, why))
        return None
    resp = out["responses"][0]
    want = [label(t) for t in sturdy_terms(ds)]
    got = [t["term"] for t in resp["terms"]]
    report(got == want, "%s: term order observed %s expected %s (source: the schema's "
           "documented order)" % (tag, got, want))
    if got != want:
        return None
    return out


# ---------------------------------------------------------------- references

def reference_anova_lm(ds, ss):
    """Per-term (df, SS, F, p) and residual (df, SS) from anova_lm."""
    fit = smf.ols(formula(ds, sturdy_terms(ds)), data=ds["df"]).fit()
    with np.errstate(divide="ignore", invalid="ignore"):  # F at 0 residual df: unused
        tab = anova_lm(fit, typ=ss)
    # rows by patsy's term name: patsy lists terms without numeric factors first, so
    # the table's order is not the formula's when there is a covariate
    rows = [tuple(tab.loc[patsy_term(ds, t), c] for c in ("df", "sum_sq", "F", "PR(>F)"))
            for t in sturdy_terms(ds)]
    return rows, (fit.df_resid, fit.ssr), fit


def reference_nested(ds, ss):
    """Per-term (df, SS, F, p) from explicit model comparisons refitted with statsmodels
    OLS (rank-aware: pinv fit, residual df n − rank)."""
    terms = sturdy_terms(ds)
    full = smf.ols(formula(ds, terms), data=ds["df"]).fit()
    X = full.model.exog
    yv = full.model.endog
    names = full.model.data.design_info
    out = []
    for t in terms:
        if ss == 1:
            i = terms.index(t)
            red = smf.ols(formula(ds, terms[:i]), data=ds["df"]).fit()
            aug = smf.ols(formula(ds, terms[:i + 1]), data=ds["df"]).fit()
        elif ss == 2:
            inner = [u for u in terms if not (set(t) < set(u)) and u != t]
            red = smf.ols(formula(ds, inner), data=ds["df"]).fit()
            aug = smf.ols(formula(ds, inner + [t]), data=ds["df"]).fit()
        else:
            cols = names.slice(patsy_term(ds, t))
            keep = [j for j in range(X.shape[1]) if not (cols.start <= j < cols.stop)]
            red = sm.OLS(yv, X[:, keep]).fit()
            aug = full
        dfs = red.df_resid - aug.df_resid
        sss = red.ssr - aug.ssr
        f = p = None
        if dfs > 0 and full.df_resid > 0:
            f = (sss / dfs) / (full.ssr / full.df_resid)
            p = st.f.sf(f, dfs, full.df_resid)
        out.append((dfs, sss, f, p))
    return out, (full.df_resid, full.ssr), full


def effect_sizes(ss, df, sse, dfe, sst, n):
    """Textbook formulas: eta2 and omega2 (Hays 1963), their partial forms (Olejnik &
    Algina 2003), Cohen's f from partial eta2 (Cohen 1988)."""
    mse = sse / dfe
    peta = ss / (ss + sse)
    return {"eta2": ss / sst, "partial_eta2": peta,
            "omega2": (ss - df * mse) / (sst + mse),
            "partial_omega2": (ss - df * mse) / (ss + (n - df) * mse),
            "cohens_f": np.sqrt(peta / (1.0 - peta))}


def check_ncf(tag, term, f, df1, df2, conf, n_rows):
    """Steiger (2004): the interval's λ bounds solve ncf.cdf(F_obs; λ) = targets."""
    src = "scipy.stats.ncf.cdf, Steiger 2004"
    ci = (term.get("ci") or {}).get("partial_eta2") or {}
    iv = ci.get("noncentral_f")
    if not iv or iv[0] is None or iv[1] is None:
        report(False, "%s: noncentral_f interval missing: %r (source: %s)" % (tag, iv, src))
        return
    lo_t, hi_t = 1 - (1 - conf) / 2, (1 - conf) / 2
    for eta, target, side in ((iv[0], lo_t, "lower"), (iv[1], hi_t, "upper")):
        if eta == 0:
            c0 = st.f.cdf(f, df1, df2)
            report(c0 <= target + NCF_TOL, "%s: noncentral_f %s bound 0: central F cdf "
                   "at F_obs %.10g must be <= %.4f (source: scipy.stats.f.cdf, Steiger "
                   "2004)" % (tag, side, c0, target))
            continue
        lam = eta / (1 - eta) * n_rows
        c = st.ncf.cdf(f, df1, df2, lam)
        report(abs(c - target) <= NCF_TOL, "%s: noncentral_f %s bound eta2 %r (lambda "
               "%.10g): cdf at F_obs observed %.10g expected %.4f tol abs %.0e (source: "
               "%s)" % (tag, side, eta, lam, c, target, NCF_TOL, src))


# ---------------------------------------------------------------- the comparisons

def compare(ds, path, ss, ref, source, untestable=()):
    tag = "%s --ss %d" % (ds["name"], ss)
    out = sturdy_table(ds, path, ss, tag)
    if out is None:
        return
    resp = out["responses"][0]
    rows, (dfe, sse), fit = ref
    n = len(ds["df"])
    sst = fit.centered_tss
    conf = out["settings"]["conf"]
    src = "%s typ=%d, sum coding" % (source, ss)
    close(tag + " residual df", resp["error"]["df"], dfe, 0, 0, src)
    close(tag + " residual SS", resp["error"]["ss"], sse, REL, SS_FLOOR * sst, src)
    close(tag + " total SS", resp["total"]["ss"], sst, REL, SS_FLOOR * sst,
          "statsmodels ols centered_tss")
    for term, (df, ssv, f, p) in zip(resp["terms"], rows):
        t = "%s %s" % (tag, term["term"])
        close(t + " df", term["df"], df, 0, 0, src)
        if term["term"] in untestable:
            ok = term["f"] is None and term["p"] is None and \
                isinstance(term["note"], str) and term["note"].strip() != ""
            report(ok, "%s: untestable (empty cell): f %r p %r note %r; expected null, "
                   "null and a note (source: fit.h, under Type III a term left fewer "
                   "df than its columns, and every term it contains, is not tested)"
                   % (t, term["f"], term["p"], term["note"]))
            continue
        close(t + " SS", term["ss"], ssv, REL, SS_FLOOR * sst, src)
        if dfe == 0:
            ok = term["f"] is None and term["p"] is None and \
                isinstance(term["note"], str) and term["note"].strip() != ""
            report(ok, "%s: zero residual df: f %r p %r note %r; expected null, null and "
                   "a note (source: F needs residual df > 0)" % (t, term["f"], term["p"],
                                                                term["note"]))
            # eta2 = SS/SST needs no error term; the others divide by MSE or SSE = 0
            close(t + " eta2", term["eta2"], ssv / sst, REL, ES_FLOOR,
                  "formula on statsmodels SS (Hays 1963)")
            rest = {k: term[k] for k in ("partial_omega2", "omega2", "cohens_f")}
            report(all(v is None for v in rest.values()), "%s: zero residual df: %r "
                   "expected all null (source: MSE undefined at 0 df)" % (t, rest))
            continue
        close(t + " F", term["f"], f, REL, 0, src)
        close(t + " p", term["p"], p, REL, 0, src)
        es = effect_sizes(ssv, df, sse, dfe, sst, n)
        for k, v in es.items():
            close("%s %s" % (t, k), term[k], v, REL, ES_FLOOR,
                  "formula on statsmodels SS (Hays 1963; Olejnik & Algina 2003)")
        check_ncf(t, term, f, df, dfe, conf, n)


def write(ds, folder):
    path = os.path.join(folder, ds["name"] + ".csv")
    ds["df"].to_csv(path, index=False)
    # statsmodels reads the same file, so both see the same text; factors stay text
    ds["df"] = pd.read_csv(path, dtype={c: str for c in ds["factors"] +
                                        ([ds["block"]] if ds["block"] else [])})
    return path


def main():
    glaze = ["ash", "celadon", "shino"]
    cone = ["6", "10"]
    clay = ["porcelain", "stoneware"]
    atmos = ["oxidation", "reduction", "salt", "wood"]
    plain = [
        # kiln study: crazing score by glaze and firing cone
        dataset("kiln2", 101, ["glaze", "cone"], [glaze, cone], "craze"),
        # three factors, 2×3×4 cells
        dataset("kiln3", 202, ["clay", "glaze", "atmos"], [clay, glaze, atmos], "craze"),
        # sourdough bake: 2×3×2×3 cells, oven spring in mm
        dataset("bake4", 303, ["flour", "hydration", "proof", "starter"],
                [["rye", "spelt"], ["65", "70", "75"], ["cold", "warm"],
                 ["young", "mature", "old"]], "spring"),
        # kiln shelf height (cm) as a numeric covariate
        dataset("kilncov", 404, ["glaze", "cone"], [glaze, cone], "craze",
                covariate="height"),
        # firing lot as an additive block
        dataset("kilnblock", 505, ["clay", "glaze", "cone"], [clay, glaze, cone], "craze",
                block="lot"),
    ]
    with tempfile.TemporaryDirectory() as folder:
        for ds in plain:
            path = write(ds, folder)
            for ss in (1, 2, 3):
                if ss == 1 and ds["covs"]:
                    # patsy puts covariates after the factor terms whatever the formula
                    # says, so anova_lm's Type I cannot take sturdy's order here
                    compare(ds, path, ss, reference_nested(ds, ss),
                            "statsmodels OLS nested-model comparison")
                else:
                    compare(ds, path, ss, reference_anova_lm(ds, ss),
                            "statsmodels anova_lm")

        # one empty cell in a 3×3 crossing: glaze×atmos keeps 3 of its 4 df; Types I and
        # II test it with those 3 df (a nested comparison needs no more), Type III does
        # not, and every term is contained in it, so Type III tests none
        ds = dataset("kilnempty", 606, ["glaze", "atmos"], [glaze, atmos[:3]], "craze",
                     empty=[("shino", "salt")])
        path = write(ds, folder)
        for ss in (1, 2):
            compare(ds, path, ss, reference_nested(ds, ss),
                    "statsmodels OLS nested-model comparison")
        compare(ds, path, 3, reference_nested(ds, 3), "statsmodels OLS nested-model "
                "comparison", untestable=["glaze", "atmos", "glaze\u00d7atmos"])

        # --order 2 with an empty glaze×atmos margin: that term and the main effects it
        # contains cannot be tested under Type III; the others can (Types I/II test it
        # with the df that remain)
        ds = dataset("kilnmargin", 707, ["glaze", "atmos", "clay"],
                     [glaze, atmos[:3], clay], "craze", order=2,
                     empty=[("shino", "salt", c) for c in clay])
        path = write(ds, folder)
        for ss in (1, 2):
            compare(ds, path, ss, reference_nested(ds, ss),
                    "statsmodels OLS nested-model comparison")
        compare(ds, path, 3, reference_nested(ds, 3), "statsmodels OLS nested-model "
                "comparison", untestable=["glaze", "atmos", "glaze\u00d7atmos"])

        # one row per cell: no residual degrees of freedom
        ds = dataset("kilnsingle", 808, ["clay", "glaze", "cone"], [clay, glaze, cone],
                     "craze", fixed=1)
        path = write(ds, folder)
        compare(ds, path, 1, reference_anova_lm(ds, 1), "statsmodels anova_lm")
        for ss in (2, 3):
            compare(ds, path, ss, reference_nested(ds, ss),
                    "statsmodels OLS nested-model comparison")
    finish()


if __name__ == "__main__":
    main()
