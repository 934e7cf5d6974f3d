"""xcheck_compare.py — marginal means and pairwise comparisons (`sturdy check --format
json`, responses[].means[] and responses[].comparisons[]) against statsmodels, and the
studentized range (build/tests/probe_range) against scipy, on invented unbalanced data
(fixed numpy seeds).

Checks and tolerances (the reference is named on every line):
  * every least-squares marginal mean (each level of each main effect, each cell of each
    interaction) and its SE, on unbalanced 2- and 3-factor designs with a covariate:
    statsmodels OLS `t_test` on the contrast vector built from the fitted model's own
    design rows (patsy, C(factor, Sum) coding), averaged with equal weights over the
    other factors' levels at the covariate's mean; relative 1e-10;
  * every pairwise difference (main effects, simple effects of two-factor terms): its
    estimate, SE and unadjusted p from `t_test` on the difference of the two contrast
    vectors; relative 1e-10 (p: absolute 1e-10);
  * the Tukey–Kramer adjusted p and simultaneous interval of each difference:
    scipy.stats.studentized_range.sf(√2·|t|, k, df) and .ppf(conf, k, df), absolute
    1e-9 (scipy integrates numerically to about 1e-11);
  * the studentized range itself (probe_range) against scipy.stats.studentized_range,
    integrated and through the comparisons' table of its inner tail
    over k 2..20 and df 2..200 and ∞: upper tail absolute 1e-10, quantile relative 1e-9;
  * an empty cell: its cell mean and the marginal means that average over it are null
    with a note; the means that do not involve it still match statsmodels;
  * --control: only comparisons against the control level, each as level − control;
    --levels: the comparisons follow the order given;
  * Dunnett's exact many-to-one adjustment (--control on a main effect; Dunnett 1955):
    the comparisons' correlation matrix from statsmodels (contrast vectors through
    cov_params), tested for the product form ρ_ij = λ_iλ_j to 1e-9; where it holds
    sturdy must say "dunnett" and its adjusted p and interval ends must match this
    script's own integral (400-point Gauss–Legendre over z ~ N(0,1) inside
    scipy.integrate.quad over the density of s = √(χ²_df/df), scipy.stats.chi; the
    interval from scipy.optimize.brentq) to
    absolute 1e-8; where it does not hold (a covariate) sturdy must keep
    "tukey-kramer". The integral is also checked by Monte Carlo from the full
    correlation matrix (numpy seed 9, 400 000 draws of a multivariate t): within 4
    binomial SEs;
  * Games–Howell where the spread rule fires (one-way, SDs 1, 1, 6, 12): SE
    √(s_i²/n_i + s_j²/n_j), Welch df, adjusted p and interval from scipy's studentized
    range at that df, absolute 1e-9 (SE, df relative 1e-10; Games & Howell 1976).
Prints one line per check and "N passed, N failed"; exits 1 on any failure. A missing
reference library, probe or binary is a failure, never a skip.
"""
import functools
import itertools
import json
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import close, finish, missing_library, need_binary, need_probe, report  # noqa: E402

REL = 1e-10     # the brief's tolerance for means, SEs and contrasts
P_ABS = 1e-10   # unadjusted p from the t distribution
TK_ABS = 1e-9   # adjusted p and interval ends through scipy's studentized range

try:
    import numpy as np
    import pandas as pd
    import statsmodels.formula.api as smf
    from patsy import build_design_matrices
    from scipy.stats import studentized_range
except ImportError as exc:   # pragma: no cover
    missing_library(exc, "python3-numpy python3-pandas python3-statsmodels python3-scipy")

BIN = need_binary()
SRC = "statsmodels OLS t_test"


def make_data(seed, levels, sizes_low=2, sizes_high=6, drop=None):
    rng = np.random.default_rng(seed)
    rows = []
    names = sorted(levels)
    for cell in itertools.product(*[levels[f] for f in names]):
        if drop and cell == drop:
            continue
        n = int(rng.integers(sizes_low, sizes_high + 1))
        for _ in range(n):
            x = rng.normal(10, 3)
            eff = sum((i + 1) * 0.7 * levels[f].index(c) for i, (f, c) in enumerate(zip(names, cell)))
            rows.append(dict(zip(names, cell), x=round(x, 3),
                             y=round(50 + eff + 0.4 * x + rng.gamma(2.0, 1.5), 4)))
    return pd.DataFrame(rows)


def run_sturdy(df, factors, extra=()):
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "d.csv")
        df.to_csv(path, index=False)
        cmd = [BIN, "check", path, "-y", "y", "-f", ",".join(factors), "-B", "0",
               "--bootstrap", "0", "--format", "json", "--compare", "all"] + list(extra)
        out = subprocess.run(cmd, capture_output=True, text=True)
        if out.returncode != 0:
            report(False, "sturdy %s exited %d: %s" % (" ".join(cmd[2:]), out.returncode,
                                                       out.stderr.strip()))
            return None
        return json.loads(out.stdout)


def contrast(fit, df, factors, fixed, covariate):
    """Equal-weight average of the model's design rows over the factors not in
    `fixed` (dict factor -> level), covariate at its mean."""
    others = [f for f in factors if f not in fixed]
    levels = {f: sorted(df[f].unique()) for f in factors}
    grid = []
    for combo in itertools.product(*[levels[f] for f in others]):
        row = dict(fixed)
        row.update(zip(others, combo))
        if covariate:
            row["x"] = df["x"].mean()
        grid.append(row)
    g = pd.DataFrame(grid)
    (X,) = build_design_matrices([fit.model.data.design_info], g)
    return np.asarray(X).mean(axis=0)


@functools.lru_cache(maxsize=None)
def range_quantile(conf, k, dfe):
    """scipy's studentized-range quantile (slow: a root search over numerical
    integrals), once per (conf, k, df)."""
    return float(studentized_range.ppf(conf, k, dfe))


def check_design(tag, df, factors, covariate=True, empty=None, extra=()):
    formula = "y ~ " + "*".join("C(%s, Sum)" % f for f in factors) + (" + x" if covariate else "")
    fit = smf.ols(formula, data=df).fit()
    js = run_sturdy(df, factors, (["--covariates", "x"] if covariate else []) + list(extra))
    if js is None:
        return
    resp = js["responses"][0]
    for m in resp["means"]:
        fixed = m["levels"]
        label = "%s mean %s" % (tag, ",".join("%s=%s" % kv for kv in fixed.items()))
        involves_empty = empty is not None and all(empty[f] == v for f, v in fixed.items())
        if involves_empty:
            report(m["estimate"] is None and bool(m["note"]),
                   "%s: not estimable, declined with note %r [the cell has no rows]"
                   % (label, m["note"]))
            continue
        L = contrast(fit, df, factors, fixed, covariate)
        tt = fit.t_test(L)
        close(label + " estimate", m["estimate"], float(tt.effect[0]), REL, True, SRC)
        close(label + " se", m["se"], float(tt.sd[0][0]), REL, True, SRC)
    for c in resp["comparisons"]:
        fa = {c["factor"]: c["level"]}
        fb = {c["factor"]: c["versus"]}
        if c["within"]:
            fa.update(c["within"])
            fb.update(c["within"])
        label = "%s diff %s: %s - %s%s" % (tag, c["factor"], c["level"], c["versus"],
                                           " within " + str(c["within"]) if c["within"] else "")
        if empty is not None and any(all(empty[f] == v for f, v in fx.items()) for fx in (fa, fb)):
            report(c["estimate"] is None and bool(c["note"]),
                   "%s: not estimable, declined [a mean averages over the empty cell]" % label)
            continue
        L = contrast(fit, df, factors, fa, covariate) - contrast(fit, df, factors, fb, covariate)
        tt = fit.t_test(L)
        close(label + " estimate", c["estimate"], float(tt.effect[0]), REL, True, SRC)
        close(label + " se", c["se"], float(tt.sd[0][0]), REL, True, SRC)
        close(label + " p", c["p"], float(tt.pvalue), P_ABS, False, SRC)
        # Tukey–Kramer: k = levels of the factor (main effect) or cells of the term
        k = 1
        for f in ([c["factor"]] + (list(c["within"]) if c["within"] else [])):
            k *= df[f].nunique()
        dfe = fit.df_resid
        q = range_quantile(0.95, k, float(dfe))
        half = q / np.sqrt(2) * float(tt.sd[0][0])
        padj = float(studentized_range.sf(np.sqrt(2) * abs(float(tt.tvalue)), k, dfe))
        src = "scipy studentized_range, k=%d df=%g" % (k, dfe)
        report(c["adjustment"] == "tukey-kramer", "%s adjustment is tukey-kramer [%s]"
               % (label, c["adjustment"]))
        close(label + " p_adjusted", c["p_adjusted"], padj, TK_ABS, False, src)
        close(label + " ci_simultaneous lo", c["ci_simultaneous"][0],
              float(tt.effect[0]) - half, TK_ABS, False, src)
        close(label + " ci_simultaneous hi", c["ci_simultaneous"][1],
              float(tt.effect[0]) + half, TK_ABS, False, src)


def check_range():
    probe = need_probe("probe_range")
    qs = []
    for k in (2, 3, 5, 10, 20):
        # df below 5 (Games–Howell with small cells) take the outer integral over log s
        for dfv in (1, 1.5, 2, 3.3, 4.9, 5, 12, 40, 200, "inf"):
            for q in (0.5, 2.0, 3.5, 5.0, 8.0):
                qs.append(("upper", q, k, dfv))
            qs.append(("quant", 0.95, k, dfv))
    against_scipy(probe, qs, "")


def against_scipy(probe, qs, label):
    """Each (kind, a, k, df) query of probe_range against scipy.stats.studentized_range:
    tails (upper, tupper) to 1e-10 relative, quantiles (quant, tquant) to 1e-9."""
    out = probe(["%s %r %d %s" % x for x in qs])
    for (kind, a, k, dfv), line in zip(qs, out):
        d = np.inf if dfv == "inf" else float(dfv)
        src = "scipy studentized_range k=%d df=%s" % (k, dfv)
        if kind.endswith("upper"):
            close("%srange P(Q>%g)" % (label, a), float(line),
                  float(studentized_range.sf(a, k, d)), 1e-10, False, src)
        else:
            close("%srange q(%g)" % (label, a), float(line),
                  float(studentized_range.ppf(a, k, d)), 1e-9, True, src)


def check_range_table():
    """The tabulated inner tail (sturdy_range_table, used by the comparisons): tails and
    quantiles against scipy at the tolerances of check_range, and against the integral
    itself (the untabulated functions) far into the tails."""
    probe = need_probe("probe_range")
    qs = []
    for k in (3, 5, 10, 20):
        for dfv in (1, 3.3, 5, 40, "inf"):
            for q in (2.0, 5.0, 8.0):
                qs.append(("tupper", q, k, dfv))
            qs.append(("tquant", 0.95, k, dfv))
    against_scipy(probe, qs, "table: ")
    keys = [(k, dfv, p) for k in (3, 8, 50) for dfv in ("2", "12", "1000", "inf")
            for p in ("0.95", "0.999999", "0.999999999")]
    exact_q = probe(["quant %s %d %s" % (p, k, dfv) for k, dfv, p in keys])
    tab_q = probe(["tquant %s %d %s" % (p, k, dfv) for k, dfv, p in keys])
    worst_q = max(abs(float(a) - float(b)) / float(a) for a, b in zip(exact_q, tab_q))
    report(worst_q <= 1e-13, "table: quantiles at 0.95, 1-1e-6, 1-1e-9 (k 3, 8, 50; df 2 to "
           "inf) within %.1e of the integral's <= 1e-13 [sturdy_range_quantile]" % worst_q)
    exact_u = probe(["upper %s %d %s" % (q, k, dfv) for (k, dfv, _), q in zip(keys, exact_q)])
    tab_u = probe(["tupper %s %d %s" % (q, k, dfv) for (k, dfv, _), q in zip(keys, exact_q)])
    worst_u = max(abs(float(a) - float(b)) / float(a) for a, b in zip(exact_u, tab_u))
    report(worst_u <= 1e-13, "table: tails down to 1e-9 within %.1e of the integral's "
           "(relative) <= 1e-13 [sturdy_range_upper]" % worst_u)


def check_range_many():
    """sturdy_range_quantiles: a Games–Howell family's quantiles (one k, a Welch df per
    pair) through the Chebyshev series in 1/df, against scipy at every df."""
    probe = need_probe("probe_range")
    rng = np.random.default_rng(5)
    for k, lo, hi in ((5, 6.0, 30.0), (8, 3.5, 12.0), (3, 10.0, 400.0)):
        dfs = np.round(rng.uniform(lo, hi, 40), 6)
        out = probe(["many 0.95 %d %s" % (k, " ".join("%r" % float(d) for d in dfs))])[0].split()
        report(out[0] == "1", "range quantiles, k=%d, 40 df in [%g, %g]: interpolated [%s]"
               % (k, lo, hi, out[0]))
        out = out[1:] + [None]
        src = "scipy studentized_range.ppf k=%d" % k
        worst = max(abs(float(q) - studentized_range.ppf(0.95, k, d)) / studentized_range.ppf(0.95, k, d)
                    for q, d in zip(out[:-1], dfs))
        report(worst <= 1e-9, "range quantiles, k=%d: worst relative error %.2e <= 1e-9 [%s]"
               % (k, worst, src))
    out = probe(["many 0.95 2 %s" % " ".join("%r" % d for d in (3.0, 7.5, 20.0, 1e9))])[0].split()
    out = out[1:] + [None]
    worst = max(abs(float(q) - studentized_range.ppf(0.95, 2, d)) / studentized_range.ppf(0.95, 2, d)
                for q, d in zip(out[:-1], (3.0, 7.5, 20.0, 1e9)))
    report(worst <= 1e-9, "range quantiles, k=2 (sqrt 2 times Student's t): worst relative "
           "error %.2e <= 1e-9 [scipy studentized_range.ppf]" % worst)


def check_control_and_order():
    df = make_data(11, {"A": ["p", "q", "r", "s"], "B": ["u", "v"]})
    js = run_sturdy(df, ["A", "B"], ["--control", "A=r", "--levels", "A=s,r,q,p"])
    if js is None:
        return
    comps = [c for c in js["responses"][0]["comparisons"] if c["term"] == "A"]
    report(len(comps) == 3 and all(c["versus"] == "r" for c in comps),
           "--control A=r: 3 comparisons, each level - r [%s]"
           % [(c["level"], c["versus"]) for c in comps])
    report([c["level"] for c in comps] == ["s", "q", "p"],
           "--levels A=s,r,q,p orders the comparisons [%s]" % [c["level"] for c in comps])
    simple = [c for c in js["responses"][0]["comparisons"] if c["term"] != "A" and c["factor"] == "A"]
    report(len(simple) == 3 * 2 and all(c["versus"] == "r" for c in simple),
           "--control A=r holds in the simple effects of A within B [%d]" % len(simple))
    means = [m for m in js["responses"][0]["means"] if m["term"] == "A"]
    report([m["levels"]["A"] for m in means] == ["s", "r", "q", "p"],
           "means follow --levels order [%s]" % [m["levels"]["A"] for m in means])
    bad = subprocess.run([BIN, "demo", "--control", "nosuch=x", "-B", "0", "--bootstrap", "0"],
                         capture_output=True, text=True)
    report(bad.returncode == 2 and "control" in bad.stderr,
           "--control naming no factor: exit 2 with a message [exit %d: %s]"
           % (bad.returncode, bad.stderr.strip().splitlines()[0][:80] if bad.stderr.strip() else ""))


def dunnett_upper(c, lam, dfe):
    """P(max |T_i| > c) for product correlation λ_iλ_j (Dunnett 1955), by nested quad."""
    from scipy import integrate
    from scipy.special import roots_legendre
    from scipy.stats import chi, norm
    lam = np.asarray(lam)[:, None]
    r = np.sqrt(1 - lam ** 2)
    zn, zw = roots_legendre(400)          # the inner integral over z ∈ [−9, 9]
    z, zw = 9.0 * zn, 9.0 * zw

    def inner(x):
        g = norm.cdf((lam * z + x) / r) - norm.cdf((lam * z - x) / r)
        return float(np.sum(zw * norm.pdf(z) * np.prod(g, axis=0)))

    dens = chi(dfe, scale=1 / np.sqrt(dfe))
    lo, hi = dens.ppf(1e-16), dens.isf(1e-16)
    return integrate.quad(lambda s: dens.pdf(s) * (1 - inner(c * s)), lo, hi,
                          epsabs=1e-13, epsrel=1e-11, limit=200)[0]


def product_form(R):
    """λ with R_ij = λ_iλ_j (i ≠ j) to 1e-9, or None."""
    m = len(R)
    if m == 1:
        return [0.0]
    if m == 2:
        l0 = np.sqrt(abs(R[0, 1]))
    else:
        j, k = max(((j, k) for j in range(1, m) for k in range(j + 1, m)),
                   key=lambda jk: abs(R[jk]))
        l2 = R[0, j] * R[0, k] / R[j, k]
        if l2 <= 0:
            return None
        l0 = np.sqrt(l2)
    lam = np.array([l0] + [R[0, i] / l0 for i in range(1, m)])
    ok = all(abs(lam[i] * lam[j] - R[i, j]) <= 1e-9 for i in range(m) for j in range(i + 1, m))
    return lam if ok and np.all(np.abs(lam) < 1) else None


def check_dunnett():
    from scipy.optimize import brentq
    src = "own Dunnett 1955 integral, scipy.integrate.quad + scipy.stats.chi"
    cases = []
    rng = np.random.default_rng(41)
    ns = [6, 4, 5, 7, 3]
    y = np.concatenate([rng.normal(0.4 * i, 1, n) for i, n in enumerate(ns)])
    cases.append(("one-way", pd.DataFrame({"A": np.repeat(list("vwxyz"), ns), "y": y.round(5)}),
                  ["A"], "A=w", False))
    rows = [dict(A=a, B=b, y=round(rng.normal(0.5 * "pqrs".index(a), 1), 5),
                 x=round(rng.normal(), 4))
            for a in "pqrs" for b in "uv" for _ in range(int(rng.integers(2, 6)))]
    two = pd.DataFrame(rows)
    cases.append(("two-way unbalanced", two, ["A", "B"], "A=q", False))
    # a covariate whose level means differ: the least-squares means share the slope's
    # error, so with 4 comparisons the product form fails (3 always fit one)
    rows = [dict(A=a, B=b, x=round(rng.normal("pqrst".index(a) ** 1.5, 1), 4),
                 y=round(rng.normal(0.5 * "pqrst".index(a), 1), 5))
            for a in "pqrst" for b in "uv" for _ in range(int(rng.integers(2, 6)))]
    cases.append(("two-way with covariate", pd.DataFrame(rows), ["A", "B"], "A=q", True))
    for tag, df, factors, ctl, cov in cases:
        extra = ["--control", ctl] + (["--covariates", "x"] if cov else [])
        js = run_sturdy(df, factors, extra)
        if js is None:
            continue
        cf, cl = ctl.split("=")
        comps = [c for c in js["responses"][0]["comparisons"] if c["term"] == cf]
        rhs = " * ".join("C(%s, Sum)" % f for f in factors) + (" + x" if cov else "")
        fit = smf.ols("y ~ " + rhs, data=df).fit()
        L = np.array([contrast(fit, df, factors, {cf: c["level"]}, cov) -
                      contrast(fit, df, factors, {cf: cl}, cov) for c in comps])
        V = L @ fit.cov_params().to_numpy() @ L.T
        R = V / np.sqrt(np.outer(np.diag(V), np.diag(V)))
        lam = product_form(R)
        want = "dunnett" if lam is not None else "tukey-kramer"
        report(all(c["adjustment"] == want for c in comps),
               "%s: --control %s adjustment %s (product form %s) [%s correlations]"
               % (tag, ctl, [c["adjustment"] for c in comps][0],
                  "holds" if lam is not None else "fails", SRC))
        if lam is None:
            continue
        dfe = fit.df_resid
        q = brentq(lambda c: dunnett_upper(c, lam, dfe) - 0.05, 1.0, 10.0, xtol=1e-13)
        for c in comps:
            label = "%s Dunnett %s - %s" % (tag, c["level"], c["versus"])
            close(label + " p_adjusted", c["p_adjusted"], dunnett_upper(abs(c["t"]), lam, dfe),
                  1e-8, False, src)
            close(label + " ci_simultaneous lo", c["ci_simultaneous"][0],
                  c["estimate"] - q * c["se"], 1e-8, False, src)
            close(label + " ci_simultaneous hi", c["ci_simultaneous"][1],
                  c["estimate"] + q * c["se"], 1e-8, False, src)
        if tag == "one-way":   # Monte Carlo from the full correlation matrix
            mc = np.random.default_rng(9)
            n = 400000
            z = mc.multivariate_normal(np.zeros(len(R)), R, size=n)
            s = np.sqrt(mc.chisquare(dfe, size=n) / dfe)
            mx = np.abs(z).max(axis=1) / s
            for c in comps[:2]:
                pm = float(np.mean(mx > abs(c["t"])))
                se = np.sqrt(pm * (1 - pm) / n)
                report(abs(pm - c["p_adjusted"]) <= 4 * se + 1e-12,
                       "%s Dunnett %s - %s p_adjusted %.6f vs Monte Carlo %.6f ± %.6f "
                       "[multivariate t from the full correlation matrix, 4 SE]"
                       % (tag, c["level"], c["versus"], c["p_adjusted"], pm, se))


def check_games_howell():
    rng = np.random.default_rng(31)
    sds = {"g1": 1.0, "g2": 1.0, "g3": 6.0, "g4": 12.0}
    rows = [dict(G=g, y=round(10 + rng.normal(0, sd), 5)) for g, sd in sds.items()
            for _ in range(9)]
    df = pd.DataFrame(rows)
    js = run_sturdy(df, ["G"])
    if js is None:
        return
    resp = js["responses"][0]
    report(resp["diagnostics"]["spread_differs"] is True,
           "Games–Howell data: the spread rule fires [Brown–Forsythe, by construction]")
    src = "Games & Howell 1976 with numpy and scipy studentized_range"
    for c in resp["comparisons"]:
        a = df[df.G == c["level"]].y.to_numpy()
        b = df[df.G == c["versus"]].y.to_numpy()
        va, vb = a.var(ddof=1) / len(a), b.var(ddof=1) / len(b)
        se = np.sqrt(va + vb)
        dfw = (va + vb) ** 2 / (va ** 2 / (len(a) - 1) + vb ** 2 / (len(b) - 1))
        est = a.mean() - b.mean()
        q = float(studentized_range.ppf(0.95, 4, dfw))
        label = "GH %s - %s" % (c["level"], c["versus"])
        report(c["adjustment"] == "games-howell", "%s adjustment %s [%s]"
               % (label, c["adjustment"], src))
        close(label + " se", c["se"], se, REL, True, src)
        close(label + " df", c["df"], dfw, REL, True, src)
        close(label + " p_adjusted", c["p_adjusted"],
              float(studentized_range.sf(np.sqrt(2) * abs(est) / se, 4, dfw)), TK_ABS, False, src)
        close(label + " ci_simultaneous lo", c["ci_simultaneous"][0], est - q / np.sqrt(2) * se,
              TK_ABS, False, src)
        close(label + " ci_simultaneous hi", c["ci_simultaneous"][1], est + q / np.sqrt(2) * se,
              TK_ABS, False, src)


def main():
    check_range()
    check_range_table()
    check_range_many()
    check_games_howell()
    df2 = make_data(3, {"A": ["a1", "a2", "a3"], "B": ["b1", "b2"]})
    check_design("2-factor+cov", df2, ["A", "B"])
    df3 = make_data(5, {"A": ["a1", "a2"], "B": ["b1", "b2", "b3"], "D": ["d1", "d2"]})
    check_design("3-factor+cov", df3, ["A", "B", "D"])
    dfe = make_data(7, {"A": ["a1", "a2", "a3"], "B": ["b1", "b2"]}, drop=("a2", "b1"))
    # without the covariate too, so that the empty cell is the only reason for a decline
    # (Type II: under Type III sturdy tests nothing here and exits 4)
    check_design("empty cell", dfe, ["A", "B"], covariate=False, empty={"A": "a2", "B": "b1"},
                 extra=["--ss", "2"])
    check_control_and_order()
    check_dunnett()
    finish()


if __name__ == "__main__":
    main()
