"""xcheck_diagnose.py — sturdy's residual diagnostics (src/checks/diagnose.c, through
build/tests/probe_diagnose) against independent implementations, fixed numpy seeds.

Checks and tolerances (the reference is named on every line):
  * Shapiro–Wilk W and p, n = 3 … 5000, normal / exponential / uniform / t3 / tied data:
    - vs R's shapiro.test (AS R94 in double precision): W relative 1e-12, p absolute
      1e-11;
    - vs scipy.stats.shapiro: scipy 1.10 runs AS R94 in SINGLE precision (its swilk
      wrapper takes float32 arrays), which alone moves W by up to 5e-5 and p by up to
      1e-3 at n = 5000 (and p by ~1e-6 already at n = 3). Tolerances follow what float32
      allows (about 3x the largest difference seen): n <= 50: W rel 1e-6, p abs 1e-5;
      n <= 500: W rel 1e-5, p abs 5e-4; larger n: W rel 2e-4, p abs 3e-3.
  * skewness / excess kurtosis vs exact rational arithmetic on the same doubles (Python
    fractions), relative 1e-12, and vs scipy.stats.skew / kurtosis (bias=True), relative
    1e-12 (absolute 1e-13 near zero); for data sitting on an offset of 1e6 scipy's own
    rounding reaches 1e-8, so there the scipy tolerance is 1e-7.
  * Brown–Forsythe vs scipy.stats.levene(center='median'): F relative 1e-12, p relative
    1e-9 (or absolute 1e-15 when tiny).
  * studentized residuals vs statsmodels OLSInfluence (resid_studentized_internal,
    resid_studentized_external), given statsmodels' own residuals, hat_matrix_diag and
    df_resid: relative 1e-10 (absolute 1e-12 near zero).
  * Shapiro–Wilk at n = 3 against its closed form; W's invariance to location, scale
    and order.
  * the error paths and NaN rules documented in include/sturdy/diagnose.h.
Prints one line per check and "N passed, N failed"; exits 1 on any failure.
"""
import math
import os
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import abort, close, finish, missing_library, need_probe, report  # noqa: E402


try:
    import numpy as np
    import scipy.stats as st
    from statsmodels.regression.linear_model import OLS
    from statsmodels.stats.outliers_influence import OLSInfluence
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-scipy, python3-statsmodels")

# probe(lines): the query lines to the probe, its answer lines back, one per query
probe = need_probe("probe_diagnose")


def nums(values):
    return " ".join(repr(float(v)) for v in values)


# ---------------- Shapiro–Wilk ----------------
rng = np.random.default_rng(20240611)
SW_N = [3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 15, 20, 30, 50, 100, 200, 500, 1000, 2000,
        5000]
DISTS = {
    "normal": lambda n: rng.normal(10.0, 2.0, n),
    "exponential": lambda n: rng.exponential(1.0, n),
    "uniform": lambda n: rng.uniform(-1.0, 3.0, n),
    "t3": lambda n: rng.standard_t(3, n),
    "ties": lambda n: np.round(rng.normal(0.0, 1.0, n) * 2.0) / 2.0,
}
cases = []
for n in SW_N:
    for name, draw in DISTS.items():
        x = draw(n)
        if np.ptp(x) == 0:
            x[0] += 1.0
        cases.append((n, name, x))
out = probe(["sw %d %s" % (n, nums(x)) for n, _, x in cases])

script = "options(digits = 17)\n" + "".join(
    "r <- shapiro.test(c(%s)); cat(sprintf('%%.17g %%.17g', r$statistic, r$p.value), "
    "'\\n')\n" % ",".join(repr(float(v)) for v in x) for _, _, x in cases)
try:
    rproc = subprocess.run(["Rscript", "-"], input=script, capture_output=True, text=True,
                           timeout=120)
except FileNotFoundError:
    rproc = None
if rproc is None or rproc.returncode != 0:
    abort("reference R (Rscript) missing or failed: install r-base-core")
r_ref = [tuple(float(v) for v in line.split()) for line in rproc.stdout.splitlines()]

for (n, name, x), o, (rw, rp) in zip(cases, out, r_ref):
    fields = o.split()
    tag = "Shapiro-Wilk n=%d %s" % (n, name)
    if fields[0] != "0":
        report(False, "%s: status %s (%s) [expected ok]" % (tag, fields[0], o))
        continue
    w, p = float(fields[1]), float(fields[2])
    close(tag + " W", w, rw, 1e-12, True, "R shapiro.test (AS R94, double)")
    close(tag + " p", p, rp, 1e-11, False, "R shapiro.test (AS R94, double)")
    sw = st.shapiro(x)
    wtol, ptol = (1e-6, 1e-5) if n <= 50 else (1e-5, 5e-4) if n <= 500 else (2e-4, 3e-3)
    close(tag + " W", w, float(sw.statistic), wtol, True,
          "scipy.stats.shapiro (float32 AS R94)")
    close(tag + " p", p, float(sw.pvalue), ptol, False,
          "scipy.stats.shapiro (float32 AS R94)")

# n = 3 in closed form: W = (x3 - x1)^2 / (2 SS) with a = (-1/sqrt 2, 0, 1/sqrt 2), and
# P(W <= w) = (6/pi)(asin(sqrt w) - pi/3) (Shapiro & Wilk 1965). For (0, 1, 3): W = 27/28.
out = probe(["sw 3 3 0 1"])
fields = out[0].split()
close("Shapiro-Wilk n=3 (0,1,3) W", float(fields[1]), 27 / 28, 1e-14, True,
      "closed form (Shapiro & Wilk 1965)")
close("Shapiro-Wilk n=3 (0,1,3) p", float(fields[2]),
      6 / math.pi * (math.asin(math.sqrt(27 / 28)) - math.pi / 3), 1e-13, False,
      "exact n = 3 distribution (Shapiro & Wilk 1965)")

# Scale and order invariance: W depends on the data only up to location, scale, order.
x = cases[-5][2]
out = probe(["sw %d %s" % (len(x), nums(x)),
             "sw %d %s" % (len(x), nums(1e9 + 1e-3 * x[::-1]))])
w0, w1 = float(out[0].split()[1]), float(out[1].split()[1])
close("Shapiro-Wilk n=%d W invariant to 1e9 + 1e-3*x, reversed" % len(x), w1, w0, 1e-7,
      True, "invariance of W (Shapiro & Wilk 1965); rounding of 1e9 + 1e-3 x limits it")

# ---------------- moments ----------------
from fractions import Fraction


def exact_moments(x):
    """Skewness and excess kurtosis of the doubles in x, in exact rational arithmetic."""
    fx = [Fraction(float(v)) for v in x]
    m = sum(fx) / len(fx)
    m2, m3, m4 = (sum((v - m) ** k for v in fx) / len(fx) for k in (2, 3, 4))
    return float(m3 / m2) / math.sqrt(float(m2)), float(m4 / (m2 * m2)) - 3.0


mom = [rng.normal(0, 1, 25), rng.exponential(2.0, 200), rng.standard_t(5, 1000),
       1e6 + rng.uniform(0, 1, 50), np.array([1.0, 2.0]), np.array([3.0, 3.0, 4.0])]
out = probe(["moments %d %s" % (len(x), nums(x)) for x in mom])
for x, o in zip(mom, out):
    g1, g2 = (float(v) for v in o.split())
    e1, e2 = exact_moments(x)
    tag = "moments n=%d%s" % (len(x), " offset 1e6" if x[0] > 1e5 else "")
    stol = 1e-7 if x[0] > 1e5 else 1e-12
    close(tag + " skewness", g1, e1, 1e-12, True, "exact rational arithmetic", 1e-13)
    close(tag + " excess kurtosis", g2, e2, 1e-12, True, "exact rational arithmetic", 1e-13)
    close(tag + " skewness", g1, float(st.skew(x, bias=True)), stol, True,
          "scipy.stats.skew(bias=True)", 1e-13)
    close(tag + " excess kurtosis", g2, float(st.kurtosis(x, bias=True)), stol, True,
          "scipy.stats.kurtosis(bias=True)", 1e-13)
out = probe(["moments 1 5", "moments 4 0.1 0.1 0.1 0.1"])
report(out[0] == "nan nan", "moments n=1: observed '%s' expected 'nan nan' [diagnose.h]"
       % out[0])
report(out[1] == "nan nan", "moments of equal values: observed '%s' expected 'nan nan' "
       "[diagnose.h: m2 = 0]" % out[1])

# ---------------- Brown–Forsythe ----------------
bf_cases = []
sizes = [5, 8, 6, 7]
bf_cases.append([rng.normal(0, s, m) for s, m in zip([1, 1.5, 0.7, 2], sizes)])
bf_cases.append([rng.exponential(1.0, 10) for _ in range(3)])
bf_cases.append([rng.standard_t(3, m) for m in [3, 4, 3, 5, 3, 4]])
bf_cases.append([rng.normal(0, 1, 40), 5 + rng.normal(0, 4, 35)])
bf_cases.append([np.round(rng.normal(0, 1, 9)), np.round(rng.normal(0, 2, 9))])  # ties
lines = []
for groups in bf_cases:
    # rows interleaved across groups; one empty group added at the end (must be ignored)
    rows = [(g, v) for g, vals in enumerate(groups) for v in vals]
    order = rng.permutation(len(rows))
    rows = [rows[i] for i in order]
    lines.append("bf %d %d %s" % (len(rows), len(groups) + 1,
                                 " ".join("%d %r" % (g, float(v)) for g, v in rows)))
out = probe(lines)
for groups, o in zip(bf_cases, out):
    fields = o.split()
    tag = "Brown-Forsythe %d groups, sizes %s" % (len(groups), [len(g) for g in groups])
    if fields[0] != "0":
        report(False, "%s: status %s (%s) [expected ok]" % (tag, fields[0], o))
        continue
    f, d1, d2, p = (float(v) for v in fields[1:5])
    ref = st.levene(*groups, center="median")
    close(tag + " F", f, float(ref.statistic), 1e-12, True,
          "scipy.stats.levene(center='median')")
    close(tag + " p", p, float(ref.pvalue), 1e-9, True,
          "scipy.stats.levene(center='median')", 1e-15)
    k, n = len(groups), sum(len(g) for g in groups)
    report(d1 == k - 1 and d2 == n - k, "%s df: observed %g, %g expected %d, %d "
           "[Brown & Forsythe 1974]" % (tag, d1, d2, k - 1, n - k))

# ---------------- studentized residuals ----------------
n = 30
fac = np.repeat(np.arange(3), 10)
x1 = rng.uniform(0, 10, n)
X = np.column_stack([np.ones(n), x1, fac == 1, fac == 2]).astype(float)
y = 2.0 + 0.5 * x1 + np.array([0.0, 1.0, -1.0])[fac] + rng.standard_t(4, n)
y[7] += 6.0  # one clear outlier
fit = OLS(y, X).fit()
infl = OLSInfluence(fit)
e, h, df = fit.resid, infl.hat_matrix_diag, int(round(fit.df_resid))
out = probe(["stud %d %d %s" % (n, df, " ".join("%r %r" % (float(a), float(b))
                                                for a, b in zip(e, h)))])
vals = [float(v) for v in out[0].split()]
for i in range(n):
    close("studentized internal row %d" % (i + 1), vals[2 * i],
          float(infl.resid_studentized_internal[i]), 1e-10, True,
          "statsmodels OLSInfluence.resid_studentized_internal", 1e-12)
    close("studentized external row %d" % (i + 1), vals[2 * i + 1],
          float(infl.resid_studentized_external[i]), 1e-10, True,
          "statsmodels OLSInfluence.resid_studentized_external", 1e-12)
out = probe(["stud 3 2 1.0 0.5 -1.0 1.0 0.5 0.3", "stud 2 0 1.0 0.5 -1.0 0.5",
             "stud 3 1 1.0 0.5 -1.0 0.5 0.0 0.2"])
f0 = out[0].split()
report(f0[2:4] == ["nan", "nan"] and f0[0] != "nan",
       "studentized: leverage 1 gives NaN, others finite: observed '%s' [diagnose.h]"
       % out[0])
report(out[1].split() == ["nan"] * 4, "studentized: df 0 gives NaN: observed '%s' "
       "[diagnose.h]" % out[1])
f2 = out[2].split()
report(all(v == "nan" for v in f2[1::2]) and all(v != "nan" for v in f2[0::2]),
       "studentized: df 1 gives NaN external only: observed '%s' [diagnose.h]" % out[2])

# ---------------- error paths (include/sturdy/diagnose.h) ----------------
EDGE = [("sw 2 1 2", "4"), ("sw 5001 " + nums(rng.normal(0, 1, 5001)), "4"),
        ("sw 4 1.5 1.5 1.5 1.5", "4"), ("sw 4 1 2 nan 3", "3"), ("sw 3 1 inf 2", "3"),
        ("sw 3 -1e308 0 1e308", "3"),
        ("bf 4 2 0 1 0 2 5 3 1 4", "1"), ("bf 4 2 0 1 0 2 0 3 0 4", "4"),
        ("bf 4 2 0 1 0 2 1 3 1 4", "4"), ("bf 6 3 0 1 0 2 1 3 1 5 2 7 2 10", "4"),
        ("bf 5 2 0 1 0 2 0 3 1 4 1 nan", "3"), ("bf 6 2 0 5 0 5 0 5 1 2 1 2 1 2", "4")]
out = probe([q for q, _ in EDGE])
for (q, want), o in zip(EDGE, out):
    got = o.split()[0]
    report(got == want and (got == "0" or len(o.split()) > 5 or q.startswith("sw")),
           "error path '%s': status %s expected %s (%s) [diagnose.h]"
           % (q[:40], got, want, " ".join(o.split()[3 if q.startswith("sw") else 5:])))

finish()
