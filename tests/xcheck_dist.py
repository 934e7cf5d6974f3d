"""xcheck_dist.py — sturdy's distribution functions (src/classical/dist.c, through
build/tests/probe_dist) against scipy.stats.

Checks and tolerances (the reference is named on every line):
  * F upper tail vs scipy.stats.f.sf, relative 1e-9. scipy's own error reaches 5e-10 at
    df2 = 1e6 (measured against 40-digit mpmath), so 1e-9 is as tight as it allows;
    with both df >= 1e6 scipy is off by 1e-6, so those points use R's pf (TOMS 708),
    relative 1e-10.
  * F quantile vs scipy.stats.f.isf, relative 1e-9, for q >= 1e-4; below that scipy's
    isf is off (1e-5 relative at q = 1e-10, df2 = 1000, and useless at df2 = 1e6), so
    for all q, including 1e-10, the quantile is plugged back into R's pf, which must
    return q (or 1 - q from the lower tail when q > 1/2) to relative 1e-9 (scipy's
    f.sf at such points is itself off by 2e-8 at df2 = 1e6).
  * noncentral F CDF vs scipy.stats.ncf.cdf (Boost), relative 1e-9, λ up to 1e5 and
    df2 up to 1e6.
  * noncentral-F interval for partial eta squared (Steiger 2004): each positive λ bound
    plugged into scipy.stats.ncf.cdf must give its target (1 - (1-conf)/2 or
    (1-conf)/2) to absolute 1e-8; a zero bound needs ncf.cdf(f; λ=0) <= its target; the
    bounds must equal scipy.optimize.brentq roots of the same equation to relative 1e-7
    (absolute 1e-9 near 0); eta = λ/(λ+df1+df2+1) to relative 1e-14.
  * Clopper–Pearson vs scipy.stats.binomtest(k, n).proportion_ci(method='exact'),
    relative 1e-6 (scipy's beta.ppf is off by 1e-7 at k = 1, n = 1e6, where the bound
    has the closed form 1 - (1 - alpha/2)^(1/n)), and vs R's qbeta, relative 1e-10,
    and vs that closed form for k = 1 (lower) and k = n - 1 (upper), relative 1e-12.
  * normal quantile and CDF vs scipy.stats.norm.ppf / norm.cdf, relative 1e-12 (scipy's
    norm.cdf is off by 1.1e-13 at z = -37, where GSL agrees with R and mpmath).
  * argument edges against the documented contract (header include/sturdy/dist.h).
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
    import scipy.optimize as so
    import scipy.stats as st
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-scipy")

# probe(lines): the query lines to the probe, its answer lines back, one per query
probe = need_probe("probe_dist")


def r_eval(exprs):
    """Evaluates R expressions (each giving one number) with Rscript; returns floats."""
    script = "options(digits = 17)\n" + "".join(
        "cat(sprintf('%%.17g', %s), '\\n')\n" % e for e in exprs)
    try:
        proc = subprocess.run(["Rscript", "-"], input=script, capture_output=True,
                              text=True, timeout=120)
    except FileNotFoundError:
        proc = None
    if proc is None or proc.returncode != 0:
        abort("reference R (Rscript) missing or failed: install r-base-core %s"
              % ("" if proc is None else proc.stderr.strip()[:200]))
    return [float(v) for v in proc.stdout.split()]


# ---------------- central F ----------------
D1 = [1, 2, 3, 5, 10, 30, 100]
D2 = [1, 2, 5, 10, 30, 100, 1000, 1e4, 1e6]
FS = [0.01, 0.5, 1, 2, 5, 20, 100]
pts = [(f, a, b) for f in FS for a in D1 for b in D2]
out = probe(["fsf %r %r %r" % p for p in pts])
for p, o in zip(pts, out):
    close("F sf f=%g df1=%g df2=%g" % p, float(o), float(st.f.sf(*p)), 1e-9, True,
          "scipy.stats.f.sf")
# both shapes huge (GSL's own continued fraction drifts or gives up there)
pts = [(1.0, 2e6, 2e6), (1.001, 2e6, 2e6), (0.999, 1e6, 3e6), (1.01, 2e5, 2e5),
       (3.5, 1, 3e6), (0.98, 5e4, 1e6)]
out = probe(["fsf %r %r %r" % p for p in pts])
ref = r_eval(["pf(%r, %r, %r, lower.tail = FALSE)" % p for p in pts])
for p, o, e in zip(pts, out, ref):
    close("F sf f=%g df1=%g df2=%g" % p, float(o), e, 1e-10, True, "R pf (TOMS 708)")

QS = [1e-10, 1e-4, 0.01, 0.025, 0.05, 0.5, 0.95, 0.999]
pts = [(q, a, b) for q in QS for a in D1 for b in D2]
out = probe(["fisf %r %r %r" % p for p in pts])
back = r_eval(["pf(%r, %r, %r, lower.tail = %s)" % (float(o), p[1], p[2],
                                                    "FALSE" if p[0] <= 0.5 else "TRUE")
               for p, o in zip(pts, out)])
for p, o, b in zip(pts, out, back):
    f = float(o)
    if p[0] >= 1e-4:
        close("F isf q=%g df1=%g df2=%g" % p, f, float(st.f.isf(*p)), 1e-9, True,
              "scipy.stats.f.isf")
    close("F tail at F isf(q) q=%g df1=%g df2=%g" % p, b,
          p[0] if p[0] <= 0.5 else 1 - p[0], 1e-9, True, "R pf at sturdy's quantile")

# ---------------- noncentral F ----------------
pts = []
for lam in [0, 0.1, 1, 10, 100, 1000, 1e4, 1e5]:
    for a in [1, 3, 10]:
        for b in [5, 30, 1000, 1e6]:
            mean = (a + lam) / a
            for fac in [0.3, 0.7, 1.0, 1.3, 2.0]:
                pts.append((mean * fac, a, b, lam))
out = probe(["ncfcdf %r %r %r %r" % p for p in pts])
for p, o in zip(pts, out):
    exp = float(st.ncf.cdf(*p)) if p[3] > 0 else float(st.f.cdf(*p[:3]))
    close("ncF cdf f=%.6g df1=%g df2=%g lambda=%g" % p, float(o), exp, 1e-9, True,
          "scipy.stats.ncf.cdf" if p[3] > 0 else "scipy.stats.f.cdf")

# ---------------- noncentral-F interval for partial eta squared ----------------
CI = [(5.0, 2, 30, 0.95), (12.3, 1, 20, 0.95), (0.8, 3, 40, 0.95), (1.0, 4, 12, 0.90),
      (3.2, 2, 18, 0.99), (25.0, 6, 200, 0.95), (150.0, 1, 8, 0.95), (2.5, 12, 1000, 0.95),
      (0.05, 2, 27, 0.95), (40.0, 3, 1e6, 0.95), (3000.0, 2, 60, 0.95), (4.0, 1, 5, 0.8)]
out = probe(["ncfci %r %r %r %r" % c for c in CI])


def scipy_root(f, d1, d2, target):
    g = lambda lam: st.ncf.cdf(f, d1, d2, lam) - target
    if st.f.cdf(f, d1, d2) <= target:
        return 0.0
    hi = max(1.0, d1 * f)
    while g(hi) > 0:
        hi *= 2
    return so.brentq(g, 0.0 if hi == max(1.0, d1 * f) else hi / 2, hi, xtol=1e-14,
                     rtol=1e-15, maxiter=500)


for c, o in zip(CI, out):
    f, d1, d2, conf = c
    fields = o.split()
    tag = "ncF interval f=%g df1=%g df2=%g conf=%g" % c
    report(fields[0] == "0", "%s: status observed %s expected 0 [dist.h contract]"
           % (tag, fields[0]))
    elo, ehi, llo, lhi = (float(v) for v in fields[1:])
    alpha = 1 - conf
    for side, lam, eta, target in (("lower", llo, elo, 1 - alpha / 2),
                                   ("upper", lhi, ehi, alpha / 2)):
        if lam > 0:
            close("%s %s bound: ncf.cdf(f; lambda)" % (tag, side),
                  float(st.ncf.cdf(f, d1, d2, lam)), target, 1e-8, False,
                  "scipy.stats.ncf.cdf at sturdy's lambda")
        else:
            cdf0 = float(st.f.cdf(f, d1, d2))
            report(cdf0 <= target, "%s %s bound 0: F cdf(f) %.17g <= target %.17g "
                   "[scipy.stats.f.cdf]" % (tag, side, cdf0, target))
        ref = scipy_root(f, d1, d2, target)
        if ref < 1e-2:
            close("%s %s lambda" % (tag, side), lam, ref, 1e-9, False,
                  "scipy.optimize.brentq on scipy.stats.ncf.cdf")
        else:
            close("%s %s lambda" % (tag, side), lam, ref, 1e-7, True,
                  "scipy.optimize.brentq on scipy.stats.ncf.cdf")
        close("%s %s eta2 = lambda/(lambda+df1+df2+1)" % (tag, side), eta,
              lam / (lam + d1 + d2 + 1), 1e-14, True, "Steiger 2004 definition")
    report(llo <= lhi, "%s: lambda_lo %.17g <= lambda_hi %.17g [ordering]" % (tag, llo, lhi))

# ---------------- Clopper–Pearson ----------------
CP = [(0, 10, 0.95), (1, 10, 0.95), (5, 10, 0.95), (10, 10, 0.95), (0, 9999, 0.99),
      (3, 9999, 0.99), (250, 9999, 0.99), (9998, 9999, 0.99), (1, 1000000, 0.95),
      (499, 1000, 0.9), (17, 40, 0.5), (2000000, 4000000, 0.99), (7, 7, 0.95)]
out = probe(["cp %d %d %r" % c for c in CP])
rq = []
for k, n, conf in CP:
    a2 = (1 - conf) / 2
    rq.append("qbeta(%r, %d, %d)" % (a2, k, n - k + 1) if k > 0 else "0")
    rq.append("qbeta(%r, %d, %d, lower.tail = FALSE)" % (a2, k + 1, n - k) if k < n else "1")
ref = r_eval(rq)
for i, (c, o) in enumerate(zip(CP, out)):
    k, n, conf = c
    a2 = (1 - conf) / 2
    lo, hi = (float(v) for v in o.split())
    with np.errstate(all="ignore"):
        ci = st.binomtest(k, n).proportion_ci(confidence_level=conf, method="exact")
    for side, obs, sp, rr in (("lo", lo, ci.low, ref[2 * i]), ("hi", hi, ci.high, ref[2 * i + 1])):
        close("Clopper-Pearson k=%d n=%d conf=%g %s" % (k, n, conf, side), obs, float(sp),
              1e-6, True, "scipy.stats.binomtest(...).proportion_ci(method='exact')")
        close("Clopper-Pearson k=%d n=%d conf=%g %s" % (k, n, conf, side), obs, rr,
              1e-10, True, "R qbeta")
    if k == 1:
        close("Clopper-Pearson k=1 n=%d conf=%g lo" % (n, conf), lo,
              -math.expm1(math.log1p(-a2) / n), 1e-12, True,
              "closed form 1-(1-alpha/2)^(1/n) (Clopper & Pearson 1934)")
    if k == n - 1:
        close("Clopper-Pearson k=n-1 n=%d conf=%g hi" % (n, conf), hi,
              math.exp(math.log1p(-a2) / n), 1e-12, True,
              "closed form (1-alpha/2)^(1/n) (Clopper & Pearson 1934)")

# ---------------- normal ----------------
PS = [1e-300, 1e-20, 1e-10, 1e-3, 0.025, 0.3, 0.5, 0.7, 0.975, 1 - 1e-6]
out = probe(["normppf %r" % p for p in PS])
for p, o in zip(PS, out):
    exp = float(st.norm.ppf(p))
    if exp == 0:
        close("normal ppf p=%g" % p, float(o), exp, 1e-15, False, "scipy.stats.norm.ppf")
    else:
        close("normal ppf p=%g" % p, float(o), exp, 1e-13, True, "scipy.stats.norm.ppf")
ZS = [-37.0, -8.0, -1.96, -0.3, 0.0, 0.7, 1.6448536269514722, 5.0]
out = probe(["normcdf %r" % z for z in ZS])
for z, o in zip(ZS, out):
    close("normal cdf z=%g" % z, float(o), float(st.norm.cdf(z)), 1e-12, True,
          "scipy.stats.norm.cdf")

# ---------------- argument edges (contract in include/sturdy/dist.h) ----------------
EDGE = [("fsf 0 3 10", "1"), ("fsf -2 3 10", "1"), ("fsf inf 3 10", "0"),
        ("fsf 2 0 10", "nan"), ("fsf 2 3 -1", "nan"), ("fisf 0 3 10", "inf"),
        ("fisf 1 3 10", "0"), ("fisf 0.5 3 nan", "nan"), ("ncfcdf 0 3 10 5", "0"),
        ("ncfcdf inf 3 10 5", "1"), ("ncfcdf 2 3 10 -1", "nan"), ("ncfci 2 3 10 1", "2"),
        ("ncfci -1 3 10 0.95", "2"), ("ncfci 2 0 10 0.95", "2"), ("cp 11 10 0.95", "nan"),
        ("cp 3 0 0.95", "nan"), ("cp 3 10 1.5", "nan"), ("normppf 0", "-inf"),
        ("normppf 1", "inf")]
out = probe([q for q, _ in EDGE])
for (q, want), o in zip(EDGE, out):
    got = o.split()[0]
    report(got == want, "edge '%s': observed %s expected %s [dist.h contract]"
           % (q, got, want))
out = probe(["ncfci 0 3 10 0.95"])
report(out[0].split() == ["0", "0", "0", "0", "0"],
       "edge 'ncfci 0 3 10 0.95': observed '%s' expected both bounds 0 [Steiger 2004: "
       "no positive root]" % out[0])

finish()
