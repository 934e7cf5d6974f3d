"""xcheck_unequal.py — sturdy's heteroscedasticity-robust statistics (per term
"unequal_variance" in `sturdy check --format json`) against outside references, computed
live on invented unbalanced datasets with unequal spreads (fixed numpy seeds).

Checks (the reference is named on every line):
  1. One factor (k = 3, 4, 5 levels, 3..15 rows per level, unequal SDs, two seeds each):
     statistic, df1, df2 and p equal Welch's test from base R
     oneway.test(y ~ g, var.equal = FALSE) (one Rscript call for all datasets) and from
     statsmodels anova_oneway(use_var="unequal"), relative 1e-8 (p: relative 1e-8 or
     absolute 1e-12); wald against statsmodels OLS HC2 wald_test. The numpy Johansen
     construction used below is checked against both on the same data first.
  2. Factor-only unbalanced 2-factor (2x3, 3x4) and 3-factor (2x3x2) designs, every cell
     filled with 2..9 rows and its own SD, --ss 1, 2, 3:
       * Type III wald = statsmodels OLS on the sum-coded full factorial with
         cov_type="HC2", wald_test(use_f=False) of all the term's coefficients;
       * every type: wald = W = (L ybar)'(L S L')^-1 (L ybar), S = diag(s_c^2/n_c), L the
         rows spanning the part of the augmented model orthogonal (cell-size-weighted
         metric) to the SS type's reduced model, built independently in numpy in
         cell-mean space;
       * Johansen (1980): statistic = W/c, c = r + 2A - 6A/(r+2), df2 = r(r+2)/(3A),
         A = sum_c M_cc^2/(n_c - 1), M = S L'(L S L')^-1 L, p = F(r, df2) upper tail
         (numpy/scipy from the raw data); relative 1e-8 (p: or absolute 1e-12).
  3. ANOVA-type statistic (Brunner, Dette & Munk 1997), factor-only Type III:
     T = C'(CC')^- C with C the Kronecker contrast of the term (I - J/a for its factors,
     1'/a for the others), Sigma = diag(s_c^2/n_c): F = ybar'T ybar / tr(T Sigma),
     df1 = tr(T Sigma)^2 / tr(T Sigma T Sigma),
     df2 = tr(T Sigma)^2 / sum_c T_cc^2 Sigma_cc^2/(n_c - 1), p = F(df1, df2) upper tail.
  4. A numeric covariate (and, separately, a block): Type III wald = statsmodels OLS
     cov_type="HC3" wald_test of the term's coefficients in y ~ x + C(A,Sum)*C(B,Sum)
     (y ~ C(blk,Sum) + ... for the block); the same with x centred gives the same factor
     tests (checked in statsmodels, and sturdy run on the centred file); Types I and II
     against the n-space form W = (U'y)'(U' Omega U)^-1 (U'y), U an orthonormal basis of
     the augmented model's part orthogonal to the reduced model, Omega = HC3 weights
     e_i^2/(1-h_i)^2 of the full model (numpy); statistic = W/df1, df2 = residual df,
     reference "residual-df", covariance "HC3".
  5. Declines: a cell (or group) with one row, factor-only (no cell variance) and with a
     covariate (that row has leverage 1, HC3 divides by 0) -> the unequal_variance
     numbers and ats null, a note that names the row, exit status 0, the classical F
     still there.
  6. Resampling (-B 20000; 2000 under STURDY_QUICK=1) on one 2x3 heteroscedastic
     dataset, --ss 3 and --ss 2 (whose main effects have another reduced model):
     "p_wild" (--spread-scheme wild, and again under --spread-scheme permutation) against an
     independent numpy wild bootstrap of W (Rademacher signs on the reduced model's
     residuals / sqrt(1 - 1/n_c), added to the reduced fit, W* with the cell variances
     of y*); "p_permuted" (run with --spread-scheme permutation, the only run that
     computes it) against a numpy Freedman–Lane permutation of W (reduced-model
     residuals permuted over all rows, added to the reduced fit); each with its own
     RNG: agreement within a 99.9% two-sample binomial tolerance (printed). p_perm is
     the p of the named scheme, replicates = B, p_perm = (1+exceed)/(1+B), p_perm_ci
     the 99% Clopper–Pearson interval of exceed out of B (scipy beta quantiles).
The binary is $STURDY_BIN (default ./sturdy). One line per check, "N passed, N failed"
last, exit 1 on any failure. A missing reference tool (Rscript, numpy, scipy, pandas,
statsmodels) is a failure, never a skip.
"""
import itertools
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import QUICK, finish, missing_library, need_binary, report  # noqa: E402

try:
    import numpy as np
    import pandas as pd
    import scipy.stats as st
    import statsmodels.formula.api as smf
    from statsmodels.stats.oneway import anova_oneway
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-numpy python3-scipy python3-pandas python3-statsmodels")

BIN = need_binary()

REL = 1e-8          # the brief's tolerance for every classical number
P_ABS = 1e-12       # p-values: relative 1e-8 or absolute 1e-12
MC_Z = st.norm.ppf(1 - 0.001 / 2)   # 99.9% two-sided: 3.2905
B_MC = 2000 if QUICK else 20000
TIE_RTOL = 1e-10    # W* >= W·(1 − TIE_RTOL) counts as an exceedance
TIMES = "\u00d7"


def close(what, obs, exp, source, rel=REL, floor=0.0):
    """|obs − exp| ≤ max(rel·|exp|, floor); a null or non-number observed value fails."""
    ok = isinstance(obs, (int, float)) and not isinstance(obs, bool) and \
        exp is not None and math.isfinite(exp) and math.isfinite(obs) and \
        abs(obs - exp) <= max(rel * abs(exp), floor)
    report(ok, "%s: observed %r expected %r tol rel %.0e%s [%s]"
           % (what, obs, exp, rel, (" or abs %.0e" % floor) if floor else "", source))
    return ok


def close_p(what, obs, exp, source):
    return close(what, obs, exp, source, REL, P_ABS)


def exact(what, obs, exp, source):
    report(obs == exp, "%s: observed %r expected %r exact [%s]" % (what, obs, exp, source))


# ---------------------------------------------------------------- invented datasets

def make_factorial(seed, factors, levels, lo, hi, yname="y", single=None,
                   sd_range=(0.4, 5.0), effect=2.0):
    """Rows for every cell of the crossing (lo..hi rows per cell, one row in the cell
    `single`), each cell with its own SD (log-uniform in sd_range) and its own mean
    (main effects and interactions), in shuffled file order; y rounded to 4 decimals."""
    rng = np.random.default_rng(seed)
    cells = list(itertools.product(*levels))
    eff = {}
    for k in range(1, len(factors) + 1):
        for combo in itertools.combinations(range(len(factors)), k):
            for sub in itertools.product(*[levels[f] for f in combo]):
                eff[(combo, sub)] = rng.normal(0.0, effect / k)
    rows, ys = [], []
    for cell in cells:
        cnt = 1 if cell == single else int(rng.integers(lo, hi + 1))
        sd = math.exp(rng.uniform(math.log(sd_range[0]), math.log(sd_range[1])))
        mu = 50.0 + sum(v for (combo, sub), v in eff.items()
                        if tuple(cell[f] for f in combo) == sub)
        for _ in range(cnt):
            rows.append(cell)
            ys.append(mu + rng.normal(0.0, sd))
    order = rng.permutation(len(rows))
    df = pd.DataFrame({f: [rows[i][j] for i in order] for j, f in enumerate(factors)})
    df[yname] = np.round(np.array(ys)[order], 4)
    return df, rng


def write_csv(df, folder, name, factors, block=None):
    """Writes the file sturdy reads and reads it back, so both sides see the same text."""
    path = os.path.join(folder, name + ".csv")
    df.to_csv(path, index=False)
    text = {c: str for c in list(factors) + ([block] if block else [])}
    return path, pd.read_csv(path, dtype=text)


# ---------------------------------------------------------------- running sturdy

def run_sturdy(path, y, factors, ss=3, covs=(), block=None, B=0, extra=()):
    args = [BIN, "check", path, "-y", y, "-f", ",".join(factors), "--format", "json",
            "-B", str(B), "--bootstrap", "0", "--ss", str(ss)] + list(extra)
    if covs:
        args += ["--covariates", ",".join(covs)]
    if block:
        args += ["--block", block]
    try:
        proc = subprocess.run(args, capture_output=True, text=True, timeout=300)
    except (OSError, subprocess.TimeoutExpired) as exc:
        return None, "could not run: %s" % exc, None
    if proc.returncode != 0:
        return None, "exit %d: %s" % (proc.returncode, proc.stderr.strip()[:300]), \
            proc.returncode
    try:
        return json.loads(proc.stdout), None, 0
    except ValueError as exc:
        return None, "output is not JSON (%s)" % exc, 0


def uv_terms(out, tag):
    """{term name: (term object, unequal_variance object)}; reports a missing field."""
    res = {}
    for t in out["responses"][0]["terms"]:
        uv = t.get("unequal_variance")
        if not isinstance(uv, dict):
            report(False, "%s %s: no unequal_variance object in the JSON (%r) [schema, "
                   "README, JSON schema]" % (tag, t["term"], uv))
            uv = None
        res[t["term"]] = (t, uv)
    return res


def sturdy_or_fail(tag, *a, **kw):
    out, why, _ = run_sturdy(*a, **kw)
    if out is None:
        report(False, "%s: sturdy failed: %s" % (tag, why))
        return None
    return uv_terms(out, tag)


# ---------------------------------------------------------------- numpy references

def sum_coding(a):
    """a × (a−1): identity over the first a−1 levels, −1 for the last (patsy's Sum)."""
    return np.vstack([np.eye(a - 1), -np.ones((1, a - 1))])


def factor_terms(nf):
    """sturdy's order: main effects, then 2-way, ... (lexicographic index lists)."""
    return [c for k in range(1, nf + 1) for c in itertools.combinations(range(nf), k)]


def term_name(factors, t):
    return TIMES.join(factors[i] for i in t)


def cell_columns(sizes, t):
    """Cell-level (product order, last factor fastest) sum-coded columns of term t."""
    m = np.ones((1, 1))
    for f, a in enumerate(sizes):
        m = np.kron(m, sum_coding(a) if f in t else np.ones((a, 1)))
    return m


def reduced_terms(terms, t, ss):
    i = terms.index(t)
    if ss == 1:
        return terms[:i]
    if ss == 2:
        return [u for u in terms if u != t and not set(t) < set(u)]
    return [u for u in terms if u != t]


class Cells:
    """Cell summaries of a factor-only dataset: index per row, n_c, ybar_c, s_c^2."""

    def __init__(self, df, factors, y, levels=None):
        self.levels = levels or [sorted(df[f].unique()) for f in factors]
        self.sizes = [len(lv) for lv in self.levels]
        pos = [{v: i for i, v in enumerate(lv)} for lv in self.levels]
        idx = np.zeros(len(df), dtype=int)
        for f, p in zip(factors, pos):
            idx = idx * len(p) + df[f].map(p).to_numpy()
        self.idx = idx
        self.C = int(np.prod(self.sizes))
        self.G = np.zeros((len(df), self.C))
        self.G[np.arange(len(df)), idx] = 1.0
        self.y = df[y].to_numpy(dtype=float)
        self.n = self.G.sum(axis=0)
        self.ybar, self.s2 = self.summaries(self.y[None, :])
        self.ybar, self.s2 = self.ybar[0], self.s2[0]

    def summaries(self, Y):
        """Cell means and variances of every row of Y (B × n)."""
        ybar = (Y @ self.G) / self.n
        dev = Y - ybar[:, self.idx]
        return ybar, (dev * dev) @ self.G / (self.n - 1)


def hypothesis_rows(cells, terms, t, ss):
    """L (r × C): rows spanning Z'N, Z = the term's columns made N-orthogonal to the
    reduced model's (intercept + reduced terms), N = diag(n_c)."""
    XR = np.hstack([np.ones((cells.C, 1))] +
                   [cell_columns(cells.sizes, u) for u in reduced_terms(terms, t, ss)])
    Xt = cell_columns(cells.sizes, t)
    N = np.diag(cells.n)
    Z = Xt - XR @ np.linalg.pinv(XR.T @ N @ XR) @ (XR.T @ N @ Xt)
    u, sv, vt = np.linalg.svd(Z.T @ N)
    r = int(np.sum(sv > sv[0] * 1e-10)) if sv.size and sv[0] > 0 else 0
    return vt[:r], XR


def wald_cells(L, ybar, S):
    """W = (L ybar)'(L S L')^-1 (L ybar) for every row of ybar and S (B × C)."""
    v = ybar @ L.T
    LSL = np.einsum("rc,bc,qc->brq", L, S, L)
    return np.einsum("br,br->b", v, np.linalg.solve(LSL, v[..., None])[..., 0])


def johansen(L, cells, W):
    r = L.shape[0]
    S = cells.s2 / cells.n
    M = (S[:, None] * L.T) @ np.linalg.solve((L * S) @ L.T, L)
    A = float(np.sum(np.diag(M) ** 2 / (cells.n - 1)))
    c = r + 2 * A - 6 * A / (r + 2)
    stat = W / c
    df2 = r * (r + 2) / (3 * A)
    return {"wald": W, "statistic": stat, "df1": r, "df2": df2,
            "p": float(st.f.sf(stat, r, df2))}


def ats(cells, t):
    """Brunner, Dette & Munk (1997) ANOVA-type statistic with the Box approximation."""
    C = np.ones((1, 1))
    for f, a in enumerate(cells.sizes):
        C = np.kron(C, np.eye(a) - np.ones((a, a)) / a if f in t else np.ones((1, a)) / a)
    T = C.T @ np.linalg.pinv(C @ C.T) @ C
    Sig = np.diag(cells.s2 / cells.n)
    TS = T @ Sig
    tr = np.trace(TS)
    F = float(cells.ybar @ T @ cells.ybar / tr)
    df1 = tr ** 2 / np.trace(TS @ TS)
    df2 = tr ** 2 / np.sum(np.diag(T) ** 2 * np.diag(Sig) ** 2 / (cells.n - 1))
    return {"statistic": F, "df1": df1, "df2": df2, "p": float(st.f.sf(F, df1, df2))}


def row_design(df, factors, covs=(), block=None):
    """Row-level columns per term (sturdy order: block, covariates, factor terms) with
    patsy-independent sum coding; returns (list of term keys, {key: columns}, names)."""
    levels = [sorted(df[f].unique()) for f in factors]
    main = []
    for f, lv in zip(factors, levels):
        pos = df[f].map({v: i for i, v in enumerate(lv)}).to_numpy()
        main.append(sum_coding(len(lv))[pos])
    keys, cols, names = [], {}, {}
    if block:
        lv = sorted(df[block].unique())
        pos = df[block].map({v: i for i, v in enumerate(lv)}).to_numpy()
        keys.append(("block",))
        cols[("block",)] = sum_coding(len(lv))[pos]
        names[("block",)] = block
    for c in covs:
        keys.append(("cov", c))
        cols[("cov", c)] = df[c].to_numpy(dtype=float)[:, None]
        names[("cov", c)] = c
    for t in factor_terms(len(factors)):
        m = np.ones((len(df), 1))
        for f in t:
            m = np.einsum("ni,nj->nij", m, main[f]).reshape(len(df), -1)
        keys.append(t)
        cols[t] = m
        names[t] = term_name(factors, t)
    return keys, cols, names


def reduced_keys(keys, t, ss):
    def contains(u, v):  # factor term u strictly contains v
        return all(isinstance(x, int) for x in u + v) and set(v) < set(u)
    i = keys.index(t)
    if ss == 1:
        return keys[:i]
    if ss == 2:
        return [u for u in keys if u != t and not contains(u, t)]
    return [u for u in keys if u != t]


def orth(M, tol=1e-10):
    u, sv, _ = np.linalg.svd(M, full_matrices=False)
    return u[:, :int(np.sum(sv > sv[0] * tol))] if sv.size and sv[0] > 0 else u[:, :0]


def wald_rows(y, keys, cols, t, ss, hc):
    """n-space W = (U'y)'(U' Omega U)^-1 (U'y); Omega = HC2 or HC3 weights of the full
    model (e_i^2/(1-h_i) or e_i^2/(1-h_i)^2); U spans the term's columns made orthogonal
    to the reduced model (intercept + reduced terms)."""
    n = len(y)
    X = np.hstack([np.ones((n, 1))] + [cols[k] for k in keys])
    Q = orth(X)
    e = y - Q @ (Q.T @ y)
    h = np.sum(Q * Q, axis=1)
    omega = e * e / (1 - h) ** (2 if hc == 3 else 1)
    XR = np.hstack([np.ones((n, 1))] + [cols[k] for k in reduced_keys(keys, t, ss)])
    QR = orth(XR)
    Xt = cols[t]
    U = orth(Xt - QR @ (QR.T @ Xt))
    v = U.T @ y
    return float(v @ np.linalg.solve((U * omega[:, None]).T @ U, v)), U.shape[1], \
        n - Q.shape[1]


def sm_wald(df, formula, term, cov_type):
    """statsmodels OLS with the given HC covariance; wald_test (chi-square) of all the
    coefficients of the patsy term."""
    fit = smf.ols(formula, data=df).fit(cov_type=cov_type)
    sl = fit.model.data.design_info.term_name_slices[term]
    R = np.zeros((sl.stop - sl.start, len(fit.params)))
    R[np.arange(sl.stop - sl.start), np.arange(sl.start, sl.stop)] = 1.0
    res = fit.wald_test(R, use_f=False, scalar=True)
    return float(np.squeeze(res.statistic)), int(R.shape[0])


def patsy_term(factors, t):
    return ":".join("C(%s, Sum)" % factors[i] for i in t)


# ---------------------------------------------------------------- check 1: one factor

R_WELCH = r"""
args <- commandArgs(trailingOnly = TRUE)
specs <- read.delim(args[1], header = FALSE, stringsAsFactors = FALSE)
out <- character()
for (i in seq_len(nrow(specs))) {
  d <- read.csv(specs[i, 2], colClasses = "character")
  y <- as.numeric(d[[specs[i, 4]]]); g <- factor(d[[specs[i, 3]]])
  r <- oneway.test(y ~ g, var.equal = FALSE)
  out <- c(out, paste(specs[i, 1], sprintf("%.17g", r$statistic),
                      sprintf("%.17g", r$parameter[1]), sprintf("%.17g", r$parameter[2]),
                      sprintf("%.17g", r$p.value), sep = "\t"))
}
writeLines(out, args[2])
"""


def check_one_factor(folder):
    sets = []
    for k in (3, 4, 5):
        for seed in (11, 12):
            name = "welch_k%d_s%d" % (k, seed)
            lv = ["roaster%d" % (i + 1) for i in range(k)]
            df, _ = make_factorial(100 * k + seed, ["roaster"], [lv], 3, 15,
                                   yname="acidity")
            path, df = write_csv(df, folder, name, ["roaster"])
            sets.append((name, path, df))
    rscript = shutil.which("Rscript")
    rref = {}
    if not rscript:
        report(False, "Rscript not found: install r-base-core (source: base R oneway.test)")
    else:
        spec = os.path.join(folder, "welch_specs.tsv")
        with open(spec, "w") as fh:
            for name, path, _ in sets:
                fh.write("%s\t%s\troaster\tacidity\n" % (name, path))
        rfile = os.path.join(folder, "welch.R")
        with open(rfile, "w") as fh:
            fh.write(R_WELCH)
        outp = os.path.join(folder, "welch_r.tsv")
        proc = subprocess.run([rscript, "--vanilla", rfile, spec, outp],
                              capture_output=True, text=True, timeout=120)
        if proc.returncode != 0 or not os.path.exists(outp):
            report(False, "Rscript failed (source: base R oneway.test): %s"
                   % proc.stderr.strip()[-400:])
        else:
            for line in open(outp):
                f = line.rstrip("\n").split("\t")
                rref[f[0]] = dict(zip(("statistic", "df1", "df2", "p"), map(float, f[1:])))

    for name, path, df in sets:
        cells = Cells(df, ["roaster"], "acidity")
        L, _ = hypothesis_rows(cells, [(0,)], (0,), 3)
        W = float(wald_cells(L, cells.ybar[None], (cells.s2 / cells.n)[None])[0])
        mine = johansen(L, cells, W)
        groups = [df.loc[df["roaster"] == lv, "acidity"].to_numpy(float)
                  for lv in cells.levels[0]]
        sm = anova_oneway(groups, use_var="unequal", welch_correction=True)
        smref = {"statistic": float(sm.statistic), "df1": float(sm.df[0]),
                 "df2": float(sm.df[1]), "p": float(sm.pvalue)}
        hc2, _ = sm_wald(df, "acidity ~ C(roaster, Sum)", "C(roaster, Sum)", "HC2")
        # the numpy construction used for checks 2 and 3 against the outside references
        tag = "%s reference self-check numpy Johansen" % name
        for key in ("statistic", "df1", "df2", "p"):
            if name in rref:
                close(tag + " " + key, mine[key], rref[name][key], "base R oneway.test",
                      floor=P_ABS if key == "p" else 0.0)
            close(tag + " " + key, mine[key], smref[key],
                  "statsmodels anova_oneway use_var='unequal'",
                  floor=P_ABS if key == "p" else 0.0)
        close(tag + " wald", W, hc2, "statsmodels OLS wald_test HC2")

        uv = sturdy_or_fail(name, path, "acidity", ["roaster"])
        if uv is None or "roaster" not in uv:
            continue
        _, u = uv["roaster"]
        if u is None:  # reported by uv_terms
            continue
        tag = "%s (k=%d, n=%d) roaster unequal_variance" % (name, len(groups), len(df))
        for key in ("statistic", "df1", "df2", "p"):
            fl = P_ABS if key == "p" else 0.0
            if name in rref:
                close(tag + " " + key, u.get(key), rref[name][key],
                      "base R oneway.test var.equal=FALSE", floor=fl)
            else:
                report(False, "%s %s: no base R reference (Rscript failed)" % (tag, key))
            close(tag + " " + key, u.get(key), smref[key],
                  "statsmodels anova_oneway use_var='unequal'", floor=fl)
        close(tag + " wald", u.get("wald"), hc2, "statsmodels OLS wald_test HC2")
        exact(tag + " reference/covariance", (u.get("reference"), u.get("covariance")),
              ("johansen", "cell-variances"), "README, JSON schema, factor-only")


# ---------------------------------------------------------------- checks 2 and 3

def check_factorial(folder):
    designs = [
        ("sprout2x3_a", 201, ["soil", "light"],
         [["clay", "loam"], ["dim", "mid", "bright"]]),
        ("sprout2x3_b", 202, ["soil", "light"],
         [["clay", "loam"], ["dim", "mid", "bright"]]),
        ("sprout3x4", 203, ["soil", "water"],
         [["clay", "loam", "sand"], ["w1", "w2", "w3", "w4"]]),
        ("sprout2x3x2_a", 204, ["soil", "light", "seed"],
         [["clay", "loam"], ["dim", "mid", "bright"], ["heirloom", "hybrid"]]),
        ("sprout2x3x2_b", 205, ["soil", "light", "seed"],
         [["clay", "loam"], ["dim", "mid", "bright"], ["heirloom", "hybrid"]]),
    ]
    for name, seed, factors, levels in designs:
        df, _ = make_factorial(seed, factors, levels, 2, 9, yname="height")
        path, df = write_csv(df, folder, name, factors)
        cells = Cells(df, factors, "height")
        terms = factor_terms(len(factors))
        full = "height ~ " + "*".join("C(%s, Sum)" % f for f in factors)
        keys, cols, _ = row_design(df, factors)
        for ss in (1, 2, 3):
            uv = sturdy_or_fail("%s --ss %d" % (name, ss), path, "height", factors, ss=ss)
            for t in terms:
                tn = term_name(factors, t)
                tag = "%s --ss %d %s unequal_variance" % (name, ss, tn)
                L, _ = hypothesis_rows(cells, terms, t, ss)
                W = float(wald_cells(L, cells.ybar[None], (cells.s2 / cells.n)[None])[0])
                ref = johansen(L, cells, W)
                # the cell-space construction against the n-space one (HC2 weights)
                Wn, rn, _ = wald_rows(cells.y, keys, cols, t, ss, 2)
                close("%s --ss %d %s reference self-check cell-space W vs n-space HC2 W"
                      % (name, ss, tn), W, Wn, "numpy, two constructions")
                if ss == 3:
                    hc2, r_sm = sm_wald(df, full, patsy_term(factors, t), "HC2")
                    close("%s --ss 3 %s reference self-check numpy W" % (name, tn), W, hc2,
                          "statsmodels OLS wald_test HC2, sum coding")
                if uv is None:
                    continue
                if tn not in uv:
                    report(False, "%s: term missing from sturdy's output" % tag)
                    continue
                trow, u = uv[tn]
                if u is None:  # reported by uv_terms
                    continue
                if ss == 3:
                    close(tag + " wald", u.get("wald"), hc2,
                          "statsmodels OLS C(.,Sum) full factorial cov_type=HC2 wald_test "
                          "use_f=False")
                close(tag + " wald", u.get("wald"), W,
                      "numpy cell-mean-space L of the Type %s hypothesis, "
                      "S = diag(s_c^2/n_c)" % ("I" * ss))
                close(tag + " statistic", u.get("statistic"), ref["statistic"],
                      "Johansen 1980 W/c, numpy")
                exact(tag + " df1", u.get("df1"), ref["df1"], "rank of L, numpy")
                close(tag + " df2", u.get("df2"), ref["df2"],
                      "Johansen 1980 r(r+2)/(3A), numpy")
                close_p(tag + " p", u.get("p"), ref["p"], "scipy.stats.f.sf at Johansen F")
                exact(tag + " reference/covariance", (u.get("reference"), u.get("covariance")),
                      ("johansen", "cell-variances"), "README, JSON schema, factor-only")
                if ss == 3:
                    a = ats(cells, t)
                    got = u.get("ats")
                    if not isinstance(got, dict):
                        report(False, "%s ats: observed %r, expected an object [Brunner, "
                               "Dette & Munk 1997]" % (tag, got))
                        continue
                    for key in ("statistic", "df1", "df2", "p"):
                        (close_p if key == "p" else close)(
                            "%s ats %s" % (tag, key), got.get(key), a[key],
                            "ATS, Brunner, Dette & Munk 1997, Box approximation, numpy")


# ---------------------------------------------------------------- check 4: HC3 models

def check_hc3(folder):
    # a 2×3 and a 3×2 with a numeric covariate correlated with the first factor
    for name, seed, levels in (
            ("mulch_cov_a", 401, [["bark", "straw"], ["n0", "n1", "n2"]]),
            ("mulch_cov_b", 402, [["bark", "straw", "wool"], ["n0", "n1"]])):
        factors = ["mulch", "feed"]
        df, rng = make_factorial(seed, factors, levels, 3, 9, yname="crop")
        shift = {v: 2.0 * i for i, v in enumerate(levels[0])}
        x = np.round(np.array([rng.normal(15.0, 3.0) + shift[m] for m in df["mulch"]]), 2)
        df.insert(2, "moist", x)
        slope = 0.8 * (1 + 0.05 * rng.normal(size=len(x)))
        df["crop"] = np.round(df["crop"] + slope * x, 4)
        path, df = write_csv(df, folder, name, factors)
        dfc = df.copy()
        dfc["moist"] = dfc["moist"] - dfc["moist"].mean()
        pathc = os.path.join(folder, name + "_centred.csv")
        dfc.to_csv(pathc, index=False, float_format="%.17g")
        keys, cols, names = row_design(df, factors, covs=["moist"])
        y = df["crop"].to_numpy(float)
        form = "crop ~ moist + C(mulch, Sum)*C(feed, Sum)"
        formc = form
        ptn = {("cov", "moist"): "moist", (0,): "C(mulch, Sum)", (1,): "C(feed, Sum)",
               (0, 1): "C(mulch, Sum):C(feed, Sum)"}
        centred_uv = sturdy_or_fail(name + " centred --ss 3", pathc, "crop", factors, ss=3,
                                    covs=["moist"])
        for ss in (1, 2, 3):
            uv = sturdy_or_fail("%s --ss %d" % (name, ss), path, "crop", factors, ss=ss,
                                covs=["moist"])
            for k in keys:
                tn = names[k]
                tag = "%s --ss %d %s unequal_variance" % (name, ss, tn)
                W, r, dfe = wald_rows(y, keys, cols, k, ss, 3)
                if ss == 3:
                    Wsm, _ = sm_wald(df, form, ptn[k], "HC3")
                    Wsmc, _ = sm_wald(dfc, formc, ptn[k], "HC3")
                    close("%s --ss 3 %s reference self-check numpy n-space HC3 W" % (name, tn),
                          W, Wsm, "statsmodels OLS wald_test HC3")
                    close("%s --ss 3 %s reference self-check: centring x leaves the test"
                          % (name, tn), Wsmc, Wsm, "statsmodels OLS HC3, x centred vs raw")
                if uv is None or tn not in uv:
                    if uv is not None:
                        report(False, "%s: term missing from sturdy's output" % tag)
                    continue
                _, u = uv[tn]
                if u is None:  # reported by uv_terms
                    continue
                if ss == 3:
                    close(tag + " wald", u.get("wald"), Wsm,
                          "statsmodels OLS %s cov_type=HC3 wald_test use_f=False" % form)
                    if centred_uv is not None and tn in centred_uv and \
                            centred_uv[tn][1] is not None:
                        close(tag + " wald on the centred-x file",
                              centred_uv[tn][1].get("wald"), Wsm,
                              "statsmodels OLS HC3 (centring leaves the test)")
                else:
                    close(tag + " wald", u.get("wald"), W,
                          "numpy n-space Type %s hypothesis, HC3 weights of the full model"
                          % ("I" * ss))
                exact(tag + " df1", u.get("df1"), r, "rank of the term's columns given the "
                      "reduced model, numpy")
                exact(tag + " df2", u.get("df2"), dfe, "residual df n - rank, numpy")
                close(tag + " statistic", u.get("statistic"), W / r, "W/df1")
                close_p(tag + " p", u.get("p"), float(st.f.sf(W / r, r, dfe)),
                        "scipy.stats.f.sf(W/df1, df1, residual df)")
                exact(tag + " reference/covariance", (u.get("reference"), u.get("covariance")),
                      ("residual-df", "HC3"), "README, JSON schema, with covariates")

    # an additive block (firing lot) beside two factors
    name, factors = "mulch_block", ["mulch", "feed"]
    levels = [["bark", "straw"], ["n0", "n1", "n2"]]
    df, rng = make_factorial(403, factors, levels, 3, 9, yname="crop")
    lots = ["lot%d" % (i + 1) for i in range(3)]
    beff = dict(zip(lots, rng.normal(0.0, 3.0, 3)))
    b = [lots[int(rng.integers(0, 3))] for _ in range(len(df))]
    df.insert(2, "lot", b)
    df["crop"] = np.round(df["crop"] + np.array([beff[v] for v in b]), 4)
    path, df = write_csv(df, folder, name, factors, block="lot")
    keys, cols, names = row_design(df, factors, block="lot")
    form = "crop ~ C(lot, Sum) + C(mulch, Sum)*C(feed, Sum)"
    ptn = {("block",): "C(lot, Sum)", (0,): "C(mulch, Sum)", (1,): "C(feed, Sum)",
           (0, 1): "C(mulch, Sum):C(feed, Sum)"}
    uv = sturdy_or_fail(name + " --ss 3", path, "crop", factors, ss=3, block="lot")
    y = df["crop"].to_numpy(float)
    for k in keys:
        tn = names[k]
        tag = "%s --ss 3 %s unequal_variance" % (name, tn)
        Wsm, r = sm_wald(df, form, ptn[k], "HC3")
        W, r2, dfe = wald_rows(y, keys, cols, k, 3, 3)
        close("%s --ss 3 %s reference self-check numpy n-space HC3 W" % (name, tn), W, Wsm,
              "statsmodels OLS wald_test HC3")
        if uv is None or tn not in uv:
            if uv is not None:
                report(False, "%s: term missing from sturdy's output" % tag)
            continue
        _, u = uv[tn]
        if u is None:  # reported by uv_terms
            continue
        close(tag + " wald", u.get("wald"), Wsm,
              "statsmodels OLS %s cov_type=HC3 wald_test use_f=False" % form)
        exact(tag + " df1", u.get("df1"), r, "number of the term's coefficients")
        exact(tag + " df2", u.get("df2"), dfe, "residual df n - rank, numpy")
        close(tag + " statistic", u.get("statistic"), Wsm / r, "W/df1")
        close_p(tag + " p", u.get("p"), float(st.f.sf(Wsm / r, r, dfe)),
                "scipy.stats.f.sf(W/df1, df1, residual df)")
        exact(tag + " reference/covariance", (u.get("reference"), u.get("covariance")),
              ("residual-df", "HC3"), "README, JSON schema, with a block")


# ---------------------------------------------------------------- check 5: declines

def check_declines(folder):
    cases = [("single2x3", 501, ["soil", "light"],
              [["clay", "loam"], ["dim", "mid", "bright"]], ("loam", "mid")),
             ("single1", 502, ["soil"], [["clay", "loam", "sand", "silt"]], ("sand",)),
             # with a covariate the one-row cell's row has leverage 1: HC3 divides by 0
             ("single2x3cov", 503, ["soil", "light"], [["clay", "loam"],
                                                        ["dim", "mid", "bright"]],
              ("clay", "bright"))]
    for name, seed, factors, levels, single in cases:
        df, rng = make_factorial(seed, factors, levels, 3, 8, yname="height", single=single)
        covs = ["temp"] if name.endswith("cov") else []
        if covs:
            df.insert(len(factors), "temp", np.round(rng.normal(18.0, 2.5, len(df)), 2))
        path, df = write_csv(df, folder, name, factors)
        out, why, rc = run_sturdy(path, "height", factors, ss=3, covs=covs)
        report(out is not None and rc == 0, "%s (cell %s has one row): exit status %r, "
               "expected 0 [decline, not an error] %s"
               % (name, "/".join(single), rc, why or ""))
        if out is None:
            continue
        for tn, (trow, u) in uv_terms(out, name).items():
            if u is None:  # reported by uv_terms
                continue
            nums = {k: u.get(k) for k in ("wald", "statistic", "df2", "p")}
            a = u.get("ats")
            ats_null = a is None or (isinstance(a, dict) and all(
                a.get(k) is None for k in ("statistic", "df1", "df2", "p")))
            note = u.get("note")
            ok = all(v is None for v in nums.values()) and ats_null and \
                isinstance(note, str) and "row" in note.lower()
            report(ok, "%s %s: one-row cell: unequal_variance %r ats %r note %r; expected "
                   "nulls and a note naming the row [%s]"
                   % (name, tn, nums, a, note, "HC3 needs leverage < 1" if covs else
                      "a cell variance needs two rows"))
            report(isinstance(trow.get("f"), float), "%s %s: classical F still given: %r"
                   % (name, tn, trow.get("f")))


# ---------------------------------------------------------------- check 6: resampling

def check_resampling(folder):
    name, factors = "resample2x3", ["soil", "light"]
    levels = [["clay", "loam"], ["dim", "mid", "bright"]]
    df, _ = make_factorial(637, factors, levels, 3, 9, yname="height", effect=0.9,
                           sd_range=(0.3, 3.0))
    path, df = write_csv(df, folder, name, factors)
    cells = Cells(df, factors, "height")
    terms = factor_terms(2)
    n = len(df)
    sq = np.sqrt(1.0 - 1.0 / cells.n[cells.idx])
    N = np.diag(cells.n)
    for ss in (3, 2):  # Type II main effects have another reduced model
        # the wild bootstrap and the studentised permutation (the default resamples
        # nothing: checked in check_default_scheme)
        runs = {}
        for scheme in ("wild", "permutation"):
            extra = ("--spread-scheme", scheme)
            out, why, _ = run_sturdy(path, "height", factors, ss=ss, B=B_MC, extra=extra)
            if out is None:
                report(False, "%s --ss %d -B %d %s: sturdy failed: %s"
                       % (name, ss, B_MC, " ".join(extra), why))
                continue
            runs[scheme] = uv_terms(out, "%s %s" % (name, " ".join(extra)))
        rng = np.random.default_rng(60600 + ss)
        for t in terms:
            tn = term_name(factors, t)
            L, XR = hypothesis_rows(cells, terms, t, ss)
            W = float(wald_cells(L, cells.ybar[None], (cells.s2 / cells.n)[None])[0])
            # the reduced (restricted) model's fit: cell space, cell-size weighted
            fit = (XR @ np.linalg.solve(XR.T @ N @ XR, XR.T @ N @ cells.ybar))[cells.idx]
            e = cells.y - fit
            signs = rng.choice([-1.0, 1.0], size=(B_MC, n))
            yb, s2 = cells.summaries(fit[None] + signs * (e / sq)[None])
            Wb = wald_cells(L, yb, s2 / cells.n)
            p_wild = (1 + int(np.sum(Wb >= W * (1 - TIE_RTOL)))) / (1 + B_MC)
            perm = np.argsort(rng.random((B_MC, n)), axis=1)
            yb, s2 = cells.summaries(fit[None] + e[perm])
            Wp = wald_cells(L, yb, s2 / cells.n)
            p_fl = (1 + int(np.sum(Wp >= W * (1 - TIE_RTOL)))) / (1 + B_MC)
            for scheme, uv in runs.items():
                tag = "%s --ss %d -B %d %s %s unequal_variance" \
                    % (name, ss, B_MC, "--spread-scheme " + scheme, tn)
                if tn not in uv:
                    report(False, "%s: term missing from sturdy's output" % tag)
                    continue
                _, u = uv[tn]
                if u is None:  # reported by uv_terms
                    continue
                close(tag + " wald", u.get("wald"), W,
                      "numpy cell-space W, Type %s" % ("I" * ss))
                checks = [("p_wild", p_wild, "numpy wild bootstrap, Rademacher, restricted "
                           "residuals/sqrt(1-1/n_c)")]
                if scheme == "permutation":
                    checks.append(("p_permuted", p_fl,
                                   "numpy Freedman-Lane permutation of W"))
                for key, mine, src in checks:
                    obs = u.get(key)
                    if not isinstance(obs, float):
                        report(False, "%s %s: observed %r, expected about %r [%s]"
                               % (tag, key, obs, mine, src))
                        continue
                    # two independent estimates (1+X)/(1+B), X ~ Bin(B, p): the
                    # difference has sd sqrt(2 p (1-p) / B)·B/(1+B); p by the pooled value
                    pbar = (obs + mine) / 2
                    tol = MC_Z * math.sqrt(2 * pbar * (1 - pbar) / B_MC) * B_MC / (1 + B_MC)
                    report(abs(obs - mine) <= tol,
                           "%s %s: observed %r expected %r |diff| %.3g tol %.3g "
                           "(99.9%% two-sample binomial, z=%.4f, B=%d each) [%s]"
                           % (tag, key, obs, mine, abs(obs - mine), tol, MC_Z, B_MC, src))
                exact(tag + " replicates", u.get("replicates"), B_MC, "-B")
                key = {"wild": "p_wild", "permutation": "p_permuted"}[scheme]
                label = {"wild": "wild-bootstrap", "permutation": "permutation"}[scheme]
                report(u.get("scheme") == label and u.get("p_perm") is not None and
                       u.get("p_perm") == u.get(key),
                       "%s p_perm: observed %r scheme %r %s %r; expected scheme %r and "
                       "p_perm = %s [README, JSON schema, --spread-scheme]"
                       % (tag, u.get("p_perm"), u.get("scheme"), key, u.get(key), label,
                          key))
                k = u.get("exceed")
                if isinstance(k, int):
                    close(tag + " p_perm = (1+exceed)/(1+B)", u.get("p_perm"),
                          (1 + k) / (1 + B_MC), "Phipson & Smyth 2010", rel=1e-12)
                    lo = 0.0 if k == 0 else float(st.beta.ppf(0.005, k, B_MC - k + 1))
                    hi = 1.0 if k == B_MC else float(st.beta.ppf(0.995, k + 1, B_MC - k))
                    ci = u.get("p_perm_ci") or [None, None]
                    close(tag + " p_perm_ci lo", ci[0], lo,
                          "99% Clopper-Pearson, scipy beta.ppf", rel=1e-8, floor=1e-12)
                    close(tag + " p_perm_ci hi", ci[1], hi,
                          "99% Clopper-Pearson, scipy beta.ppf", rel=1e-8, floor=1e-12)
                else:
                    report(False, "%s exceed: observed %r, expected an integer" % (tag, k))


def check_bf_modified(folder):
    """diagnostics.brown_forsythe_modified against scipy.stats.f_oneway on the absolute
    deviations from each cell's median with, in each cell of odd size, the one zero
    deviation of its median value set aside (Hines & O'Hara Hines 2000); plain
    brown_forsythe against scipy.stats.levene(center='median')."""
    for seed, levels, lo, hi in ((31, [["a1", "a2"], ["b1", "b2", "b3"]], 2, 9),
                                 (32, [["p", "q", "r"], ["u", "v"]], 3, 8),
                                 (33, [["x1", "x2"], ["y1", "y2"]], 1, 5)):
        df, _ = make_factorial(seed, ["A", "B"], levels, lo, hi)
        path, df = write_csv(df, folder, "bfm%d" % seed, ["A", "B"])
        out, why, _ = run_sturdy(path, "y", ["A", "B"])
        tag = "Brown-Forsythe seed %d" % seed
        if out is None:
            report(False, "%s: sturdy failed: %s" % (tag, why))
            continue
        dg = out["responses"][0]["diagnostics"]
        groups, reduced = [], []
        for _, g in df.groupby(["A", "B"]):
            v = np.sort(g["y"].to_numpy(dtype=float))
            groups.append(v)
            z = np.abs(v - np.median(v))
            if len(v) % 2 == 1:
                z = np.delete(z, len(v) // 2)
            if len(z):
                reduced.append(z)
        ref = st.levene(*groups, center="median")
        close(tag + " plain F", dg["brown_forsythe"]["f"], ref.statistic,
              "scipy.stats.levene center='median'", rel=1e-9)
        ref = st.f_oneway(*reduced)
        close(tag + " without structural zeros F", dg["brown_forsythe_modified"]["f"],
              ref.statistic, "scipy.stats.f_oneway on |y - cell median|, the median's zero "
              "set aside per odd cell", rel=1e-9)
        close(tag + " without structural zeros p", dg["brown_forsythe_modified"]["p"],
              ref.pvalue, "scipy.stats.f_oneway", rel=1e-8, floor=1e-12)
        exact(tag + " spread_differs follows p < 0.05", dg["spread_differs"],
              bool(ref.pvalue < 0.05), "the documented rule")


def check_default_scheme(folder):
    """Without --spread-scheme the statistic is not resampled: scheme "none", p_perm,
    p_wild and p_permuted null with a perm_note, while p (Johansen) is there."""
    df, _ = make_factorial(41, ["A", "B"], [["a1", "a2"], ["b1", "b2", "b3"]], 3, 8)
    path, df = write_csv(df, folder, "default_scheme", ["A", "B"])
    res = sturdy_or_fail("default scheme", path, "y", ["A", "B"], B=999)
    for tn, (_, u) in (res or {}).items():
        if u is None:
            continue
        report(u.get("scheme") == "none" and u.get("p_perm") is None and
               u.get("p_wild") is None and u.get("p_permuted") is None and
               bool(u.get("perm_note")) and u.get("p") is not None,
               "default scheme %s: scheme %r, p_perm %r, p_wild %r, perm_note %r, p %r; "
               "expected none/null/null/a note/a number [README, --spread-scheme]"
               % (tn, u.get("scheme"), u.get("p_perm"), u.get("p_wild"),
                  u.get("perm_note"), u.get("p")))


def main():
    with tempfile.TemporaryDirectory() as folder:
        check_default_scheme(folder)
        check_bf_modified(folder)
        check_one_factor(folder)
        check_factorial(folder)
        check_hc3(folder)
        check_declines(folder)
        check_resampling(folder)
    finish()


if __name__ == "__main__":
    main()
