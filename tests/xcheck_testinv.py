"""xcheck_testinv.py — the bootstrap test-inversion interval (src/resampling/testinv.c,
through build/tests/probe_testinv, and the whole program) against the independent numpy
reference tests/ref_testinv.py and against scipy's noncentral F.

Checks and tolerances:
  * Endpoints on random replicate pieces (v, u*, SSE*; df1 1-4, B 1-3000, with tied
    replicates, rows left out as NaN/inf, F far below and far above its null
    distribution, no observed effect): the probe's (s_lo, s_hi) against
    ref_testinv.testinv_core on the same pieces, relative 1e-8 (absolute 1e-12 near 0);
    the number of usable replicates and the null-world count N(0) exactly.
  * The program's own replicate rows (a whole-run part, --shard 1/1, of the demo): each
    row's partial eta^2 equals (A + 2 vu + uu)/(A + 2 vu + uu + SSE*) from its raw
    columns (relative 1e-9: the rows carry what the effect sizes were computed from),
    and the probe's endpoints on those triples equal the reference's, relative 1e-8.
    The triples go to the reference through a 2-column embedding v = (sqrt A, 0),
    u* = (vu/sqrt A, sqrt(uu - vu^2/A)), exact up to rounding.
  * The program's JSON test_inversion interval of partial eta^2, Cohen's f and partial
    omega^2 for every term of the demo: the reference's endpoints on the part's triples,
    mapped with lambda = s^2 A / sigma2_w (sigma2_w from ref_testinv.world on the demo
    data, full sum-coded factorial model), relative 1e-8.
  * Under normal errors the inversion is the noncentral-F interval up to Monte Carlo
    error: (u*, SSE*) drawn from N(0, I) and chi^2(df2), B = 200000, each endpoint
    lambda plugged into scipy.stats.ncf must give its tail level (P(F* >= F) = alpha/2
    at lambda_lo, 1 - alpha/2 at lambda_hi) within 4 binomial standard errors,
    4 sqrt(a(1-a)/B) = 0.0014; a zero end needs P(F >= F_obs | lambda = 0) > alpha/2, as
    for scipy's interval; and the lambda ends agree with ref_testinv.ncf_interval
    within 3% relative (0.02 absolute near 0).
Prints one line per check and "N passed, N failed"; exits 1 on any failure.
"""
import json
import math
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
from harness import (abort, close, finish, missing_library, need_binary,  # noqa: E402
                     need_problem_probe, report)

try:
    import numpy as np
    from scipy import stats
    import ref_testinv as ref
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-numpy python3-scipy")

RUN_TI = need_problem_probe("probe_testinv")


def probe(problems):
    """problems: list of (A, k, alpha_lo, alpha_hi, triples (B x 3)); returns a list of
    (s_lo, s_hi, used, null_count)."""
    parts = []
    for A, k, alo, ahi, tri in problems:
        parts.append("%r %r %r %r %d" % (A, k, alo, ahi, len(tri)))
        parts.extend("%r %r %r" % (float(a), float(b), float(c)) for a, b, c in tri)
    out = RUN_TI(parts, len(problems))
    res = []
    for line in out:
        a, b, u, n = line.split()
        res.append((float(a), float(b), int(u), int(n)))
    return res


def triples(v, U, sse):
    return np.column_stack([U @ v, np.einsum("ij,ij->i", U, U), sse])


def ref_endpoints(v, U, sse, A, k, alo, ahi):
    """The reference's (s_lo, s_hi, B, N(0)) on its usable rows."""
    ok = np.all(np.isfinite(U), axis=1) & np.isfinite(sse)
    U, sse = U[ok], sse[ok]
    t, V = ref.count_segments(v, U, sse, k)
    s_lo, s_hi = ref.endpoints_from_segments(t, V, U.shape[0], alo, ahi)
    return s_lo, s_hi, U.shape[0], int(V[0])


def same_ends(name, got, exp, source):
    for i, what in enumerate(("s_lo", "s_hi")):
        close("%s %s" % (name, what), got[i], exp[i], 1e-8, True, source, floor=1e-12)
    report(got[2] == exp[2] and got[3] == exp[3],
           "%s: %d usable replicates, N(0) = %d (expected %d, %d) [%s]"
           % (name, got[2], got[3], exp[2], exp[3], source))


# ---------------- (a) random replicate pieces ----------------
rng = np.random.default_rng(20261210)
cases = []
for i in range(60):
    df1 = int(rng.integers(1, 5))
    df2 = int(rng.integers(2, 80))
    B = int(rng.choice([1, 2, 7, 50, 999, 3000]))
    scale = float(rng.choice([1e-3, 1.0, 1e4]))
    v = rng.standard_normal(df1) * scale * float(rng.choice([0.0, 0.3, 1.0, 3.0, 10.0]))
    U = rng.standard_normal((B, df1)) * scale
    if i % 3 == 0:   # skewed draws
        U = (rng.exponential(1.0, (B, df1)) - 1.0) * scale
    sse = scale ** 2 * rng.chisquare(df2, B)
    if i % 5 == 1 and B > 4:   # tied replicates: the same draw several times
        U[B // 2:] = U[0]
        sse[B // 2:] = sse[0]
    if i % 7 == 2 and B > 4:   # rows left out
        U[1, 0] = np.nan
        sse[3] = np.inf
    A = float(v @ v)
    sse_obs = scale ** 2 * float(rng.chisquare(df2))
    if i % 11 == 4:            # F far below its null distribution
        sse_obs *= 1e3
    k = A / sse_obs
    conf = float(rng.choice([0.8, 0.9, 0.95, 0.99]))
    alo = ahi = (1 - conf) / 2
    if i % 4 == 3:             # unequal tails
        alo, ahi = 0.01, 0.04
    cases.append((v, U, sse, A, k, alo, ahi, "random %d (df1 %d, B %d)" % (i, df1, B)))
got = probe([(A, k, alo, ahi, triples(v, U, sse)) for v, U, sse, A, k, alo, ahi, _ in cases])
for (v, U, sse, A, k, alo, ahi, name), g in zip(cases, got):
    same_ends(name, g, ref_endpoints(v, U, sse, A, k, alo, ahi),
              "ref_testinv.count_segments/endpoints_from_segments")
    report(0 <= g[0] <= g[1] or g[2] == 0, "%s: 0 <= s_lo <= s_hi [definition]" % name)

# ---------------- (b) the program's own replicates: a whole-run part of the demo ----------
binary = need_binary()
B_DEMO, CONF = 999, 0.95
common = ["demo", "-B", "0", "--bootstrap", str(B_DEMO), "--conf", str(CONF),
          "--format", "json", "--threads", "2"]
part = subprocess.run([binary] + common + ["--shard", "1/1"], capture_output=True,
                      text=True, timeout=600)
whole = subprocess.run([binary] + common, capture_output=True, text=True, timeout=600)
if part.returncode != 0 or whole.returncode != 0:
    abort("sturdy demo failed: %s %s" % (part.stderr.strip(), whole.stderr.strip()))
pj, wj = json.loads(part.stdout), json.loads(whole.stdout)
presp, wresp = pj["responses"][0], wj["responses"][0]
sse_obs = presp["error"]["ss"]
N_ROWS = pj["input"]["rows_used"]
demo_tri = []
for t in presp["terms"]:
    rows = ref.json_rows(t["raw"]["boot"])
    report(rows.shape == (B_DEMO, 9), "demo %s: %d replicate rows of 9 values [contract]"
           % (t["term"], rows.shape[0]))
    A = t["ss"]
    vu, uu, ss_e = rows[:, 5], rows[:, 6], rows[:, 7]
    ssr = A + 2 * vu + uu
    pe = ssr / (ssr + ss_e)
    dev = float(np.max(np.abs(pe - rows[:, 1]) / np.abs(rows[:, 1])))
    report(dev <= 1e-9, "demo %s: partial eta^2 of each row from its raw columns, max rel "
           "deviation %.2g <= 1e-9 [identity]" % (t["term"], dev))
    demo_tri.append((t["term"], A, rows[:, 5:8]))
alpha2 = (1 - CONF) / 2
got = probe([(A, A / sse_obs, alpha2, alpha2, tri) for _, A, tri in demo_tri])


def embed(A, tri):
    """v and u* in two columns with vᵀu* and ‖u*‖² as given (up to rounding)."""
    ra = math.sqrt(A)
    c1 = tri[:, 0] / ra
    c2 = np.sqrt(np.maximum(tri[:, 1] - c1 * c1, 0.0))
    return np.array([ra, 0.0]), np.column_stack([c1, c2])


# sigma2_w of the demo: the reference's own world on the demo data
y, X, world = ref.demo_fit(os.path.join(HERE, "..", "examples", "demo.csv"))
report(len(y) == N_ROWS, "demo rows used: %d (reference %d)" % (N_ROWS, len(y)))
close("demo SSE", sse_obs, world["sse"], 1e-10, True, "ref_testinv.world")
s2w = world["sigma2_w"]
for (name, A, tri), g, wt in zip(demo_tri, got, wresp["terms"]):
    v, U = embed(A, tri)
    exp = ref_endpoints(v, U, tri[:, 2], A, A / sse_obs, alpha2, alpha2)
    same_ends("demo %s" % name, g, exp, "ref_testinv on the part's triples")
    lam = [s * s * A / s2w for s in exp[:2]]
    pe = [x / (x + N_ROWS) for x in lam]
    fexp = [math.sqrt(x / N_ROWS) for x in lam]
    ci = wt["ci"]
    for key, want in (("partial_eta2", pe), ("partial_omega2", pe), ("cohens_f", fexp)):
        ti = ci[key].get("test_inversion")
        if ti is None or None in ti:
            report(False, "demo %s %s: no test_inversion in the JSON" % (name, key))
            continue
        for j in range(2):
            close("demo %s %s test_inversion[%d]" % (name, key, j), ti[j], want[j], 1e-8,
                  True, "ref_testinv, sigma2_w from ref_testinv.world", floor=1e-12)
    for key in ("eta2", "omega2"):
        report("test_inversion" not in ci[key] or ci[key]["test_inversion"] is None,
               "demo %s %s: no test_inversion (not a function of one noncentrality)"
               % (name, key))

# ---------------- (c) normal draws: the noncentral-F interval ----------------
B_N = 200000
ncases = [(2, 72, 0.752), (2, 72, 9.381), (1, 20, 5.0), (3, 42, 18.91), (2, 12, 0.05),
          (2, 12, 0.01)]
probs, meta = [], []
for df1, df2, F in ncases:
    v = np.zeros(df1)
    v[0] = math.sqrt(F * df1)        # sigma^2 = 1 and SSE = df2: F_obs = ‖v‖²/df1
    A = float(v @ v)
    U = rng.standard_normal((B_N, df1))
    sse = rng.chisquare(df2, B_N)
    probs.append((A, A / df2, alpha2, alpha2, triples(v, U, sse)))
    meta.append((df1, df2, F, A))
got = probe(probs)
tol_p = 4 * math.sqrt(alpha2 * (1 - alpha2) / B_N)
for (df1, df2, F, A), g in zip(meta, got):
    name = "normal draws df1 %d df2 %d F %g" % (df1, df2, F)
    lam_lo, lam_hi = g[0] ** 2 * A, g[1] ** 2 * A      # sigma2_w = 1
    (rlo, rhi), _ = ref.ncf_interval(F, df1, df2, df1 + df2 + 1, CONF)
    for lam, target, which, r in ((lam_lo, 1 - alpha2, "lower", rlo),
                                  (lam_hi, alpha2, "upper", rhi)):
        if lam > 0:
            cdf = float(stats.ncf.cdf(F, df1, df2, lam))
            close("%s: ncf.cdf(F; lambda_%s = %.4g)" % (name, which, lam), cdf, target,
                  tol_p, False, "scipy.stats.ncf, 4 binomial SE")
        else:
            cdf0 = float(stats.f.cdf(F, df1, df2))
            report(cdf0 <= target + tol_p, "%s: %s end 0, F.cdf(F) %.4g <= %.4g [scipy]"
                   % (name, which, cdf0, target))
        close("%s: lambda_%s vs noncentral-F interval" % (name, which), lam, r, 0.03, True,
              "ref_testinv.ncf_interval (scipy)", floor=0.02)
finish()
