"""xcheck_bootstrap.py — sturdy's bootstrap intervals for effect sizes (`sturdy check
--format json`) against independent references.

(a) cells scheme vs scipy.stats.bootstrap: a one-way design (3 groups of 10–20 rows,
    skewed data). scipy resamples each group on its own, as sturdy's cells scheme does;
    the statistic (eta2, omega2, cohens_f of the groups) is written here from the
    textbook formulas. Percentile and BCa endpoints are compared, and the BCa −
    percentile gap (scipy's jackknife acceleration across several samples).
(b) residual and wild schemes vs a numpy implementation written here from Davison &
    Hinkley (1997, §6.2.3), Wu (1986) and Efron (1987), sharing no code with the C: a
    2×3 unbalanced design with skewed errors, sum-coded design matrix, fits by
    numpy.linalg.lstsq, leverages from the hat matrix, adjusted residuals e/√(1−h)
    (centred and drawn with replacement; or times Rademacher signs), every term's SS
    (Type III and Type I) recomputed per replicate, percentile endpoints by
    numpy.percentile, BCa with the acceleration from leave-one-row-out refits.
    partial_eta2 and eta2 of every term; and the BCa − percentile gap of each endpoint,
    which isolates the bias correction and the acceleration (the acceleration check).

Monte Carlo tolerance (the random streams differ, so endpoints agree only in
distribution): each side is run with M independent seeds of B replicates (M = 8,
B = 20000; STURDY_QUICK=1: M = 5, B = 10000); the check compares the means over the
seeds, and the tolerance is k standard errors of that difference,
tol = k · s_pool · √(2/M), s_pool² = (s_sturdy² + s_ref²)/2 from the seed-to-seed
variances of the endpoint on each side (both use the same B, so they estimate the same
variance). As s_pool is itself estimated from 2M − 2 degrees of freedom, k is the
Student t quantile at a two-sided 1e-4 per check (k = 5.4 for M = 8, where 4 would
be the known-variance choice): about 190 checks then raise a false alarm with
probability below 2%. Wrong schemes fail by far more (measured on deliberately broken
copies: unadjusted residuals, acceleration of the wrong sign or zero, an unstratified
jackknife for the cells scheme each fail 12 to 130 checks). Each line prints both
means, the tolerance, k and s_pool.
Prints one line per check and "N passed, N failed"; exits 1 on any failure.
"""
import atexit
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import QUICK, abort, finish, missing_library, need_binary, report  # noqa: E402


try:
    import numpy as np
    import scipy.special as sp
    import scipy.stats as st
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-scipy")

if not hasattr(st, "bootstrap"):
    abort("scipy.stats.bootstrap missing (scipy >= 1.7 needed)")

BIN = need_binary()

B = 10000 if QUICK else 20000   # replicates per run, on both sides
M = 5 if QUICK else 8           # independent seeds per side
CONF = 0.95
PER_CHECK_ALPHA = 1e-4          # two-sided false-alarm rate of one check (see the top)
TOL_SE = float(st.t.ppf(1 - PER_CHECK_ALPHA / 2, 2 * M - 2))
WORK = tempfile.mkdtemp(prefix="xcheck_boot_")
atexit.register(shutil.rmtree, WORK, ignore_errors=True)


def write_csv(path, cols, rows):
    with open(path, "w") as fh:
        fh.write(",".join(cols) + "\n")
        for r in rows:
            fh.write(",".join(x if isinstance(x, str) else "%.17g" % x for x in r) + "\n")


def run_sturdy(csv, factors, scheme, ss, seed, nboot=B):
    cmd = [BIN, "check", csv, "-y", "y", "-f", ",".join(factors), "-B", "0",
           "--bootstrap", str(nboot), "--bootstrap-scheme", scheme, "--ss", str(ss),
           "--seed", str(seed), "--format", "json", "--threads", "2"]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    if proc.returncode != 0:
        abort("sturdy exited %d: %s (%s)" % (proc.returncode, proc.stderr.strip(),
                                             " ".join(cmd)))
    try:
        doc = json.loads(proc.stdout)
        return {t["term"]: t for t in doc["responses"][0]["terms"]}
    except (ValueError, KeyError, IndexError) as exc:
        abort("sturdy JSON unreadable (%s): %s" % (exc, " ".join(cmd)))


def compare(name, st_vals, ref_vals, source):
    """st_vals, ref_vals: M endpoint values each, from independent seeds."""
    a = np.asarray(st_vals, float)
    b = np.asarray(ref_vals, float)
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(b))):
        report(False, "%s: non-finite endpoint (sturdy %s, reference %s) [%s]"
               % (name, a, b, source))
        return
    s_pool = math.sqrt((a.var(ddof=1) + b.var(ddof=1)) / 2)
    tol = TOL_SE * s_pool * math.sqrt(2.0 / len(a))
    diff = a.mean() - b.mean()
    report(abs(diff) <= tol,
           "%s: observed %.6f expected %.6f diff %+.2e tol %.2e (%.1f SE, s_pool %.2e, %d "
           "seeds x B=%d each side) [%s]" % (name, a.mean(), b.mean(), diff, tol, TOL_SE,
                                              s_pool, len(a), B, source))


# ---------------------------------------------------------------------------------------
# (a) cells scheme vs scipy.stats.bootstrap, one-way design

def oneway_effects(*samples, axis=-1):
    """eta2, omega2, cohens_f of k groups (Hays 1963 for omega2), vectorized along axis."""
    k = len(samples)
    ns = [s.shape[axis] for s in samples]
    n = sum(ns)
    means = [s.mean(axis=axis) for s in samples]
    grand = sum(m * ng for m, ng in zip(means, ns)) / n
    ssb = sum(ng * (m - grand) ** 2 for m, ng in zip(means, ns))
    sse = sum(((s - np.expand_dims(m, axis)) ** 2).sum(axis=axis) for s, m in zip(samples, means))
    sst = ssb + sse
    mse = sse / (n - k)
    eta2 = ssb / sst
    return {"eta2": eta2, "omega2": (ssb - (k - 1) * mse) / (sst + mse),
            "cohens_f": np.sqrt(eta2 / (1 - eta2))}


def stratified_acceleration(groups, e):
    """Jackknife acceleration for several samples, each left-one-out in turn, in the
    form scipy.stats.bootstrap uses (only printed, to show what the BCa checks see)."""
    num = den = 0.0
    for j, g in enumerate(groups):
        vals = []
        for i in range(len(g)):
            s = list(groups)
            s[j] = np.delete(g, i)
            vals.append(float(oneway_effects(*s)[e]))
        vals = np.array(vals)
        u = (len(g) - 1) * (vals.mean() - vals)
        num += (u ** 3).sum() / len(g) ** 3
        den += (u ** 2).sum() / len(g) ** 2
    return num / (6.0 * den ** 1.5)


def part_a():
    # three skewed groups of unequal size; this draw has a sizeable acceleration
    # (about -0.055 for eta2, where pooling the jackknife over groups would give -0.006),
    # so the BCa endpoints depend visibly on it
    rng = np.random.default_rng(17)
    sizes = [10, 20, 20]
    shifts = [0.0, 0.6, 1.2]
    groups = [s + rng.lognormal(0.0, 0.8, size=ng) for s, ng in zip(shifts, sizes)]
    csv = os.path.join(WORK, "oneway.csv")
    write_csv(csv, ["g", "y"], [("g%d" % (j + 1), v) for j, g in enumerate(groups) for v in g])
    es_names = ["eta2", "omega2", "cohens_f"]
    st_runs = [run_sturdy(csv, ["g"], "cells", 3, 101 + k)["g"] for k in range(M)]
    # the point estimates: sturdy's against the formula (no Monte Carlo involved)
    est = oneway_effects(*groups)
    for e in es_names:
        obs = st_runs[0][e]
        report(abs(obs - est[e]) <= 1e-12 * max(1.0, abs(est[e])),
               "one-way %s estimate: observed %.15g expected %.15g rel tol 1e-12 "
               "[textbook formula, numpy]" % (e, obs, float(est[e])))
    src = "scipy.stats.bootstrap method=%r, groups resampled separately"
    for e in es_names:
        def stat(*s, axis=-1, _e=e):
            return oneway_effects(*s, axis=axis)[_e]
        ref = {"percentile": [], "BCa": []}
        for method in ref:
            for k in range(M):
                # the same seed for both methods: the same resamples, so the BCa −
                # percentile gap of each seed comes from one bootstrap distribution
                res = st.bootstrap(groups, stat, n_resamples=B, method=method,
                                   confidence_level=CONF, vectorized=True, batch=5000,
                                   random_state=np.random.default_rng(900 + k))
                ci = res.confidence_interval
                ref[method].append((ci.low, ci.high))
        pct, bca = np.array(ref["percentile"]), np.array(ref["BCa"])
        sv = {key: np.array([r["ci"][e][key] for r in st_runs], float)
              for key in ("percentile", "bca")}
        for idx, end in ((0, "lo"), (1, "hi")):
            compare("cells one-way %s percentile %s" % (e, end), sv["percentile"][:, idx],
                    pct[:, idx], src % "percentile")
            compare("cells one-way %s bca %s" % (e, end), sv["bca"][:, idx], bca[:, idx],
                    src % "BCa")
        acc = stratified_acceleration(groups, e)
        for idx, end in ((0, "lo"), (1, "hi")):
            compare("cells one-way %s bca-percentile gap %s (jackknife a=%.4f)" % (e, end, acc),
                    sv["bca"][:, idx] - sv["percentile"][:, idx], bca[:, idx] - pct[:, idx],
                    src % "BCa" + " minus method='percentile', same resamples")


# ---------------------------------------------------------------------------------------
# (b) residual and wild schemes vs an independent numpy implementation, 2×3 design

def sum_coded(levels, nlev):
    """Deviation coding: column j is 1 for level j, -1 for the last level, else 0."""
    X = np.zeros((len(levels), nlev - 1))
    for j in range(nlev - 1):
        X[levels == j, j] = 1.0
    X[levels == nlev - 1, :] = -1.0
    return X


def two_way_blocks(a, b):
    XA = sum_coded(a, 2)
    XB = sum_coded(b, 3)
    XAB = np.column_stack([XA[:, i] * XB[:, j] for i in range(XA.shape[1])
                           for j in range(XB.shape[1])])
    return {"1": np.ones((len(a), 1)), "A": XA, "B": XB, "A×B": XAB}


TERMS = ["A", "B", "A×B"]
DF = {"A": 1, "B": 2, "A×B": 2}


def model_pairs(ss):
    """For each term, the (reduced, augmented) lists of blocks its SS compares."""
    full = ["1", "A", "B", "A×B"]
    if ss == 3:
        return {t: ([x for x in full if x != t], full) for t in TERMS}
    seq = {}
    for i, t in enumerate(TERMS):
        seq[t] = (full[:i + 1], full[:i + 2])
    return seq


def rss(blocks, names, Y):
    """Residual sum of squares of the lstsq fit of every column of Y."""
    X = np.column_stack([blocks[k] for k in names])
    coef = np.linalg.lstsq(X, Y, rcond=None)[0]
    R = Y - X @ coef
    return (R * R).sum(axis=0)


def effects_from_ss(ss, df, sse, dfe, sst, n):
    mse = sse / dfe
    pe = ss / (ss + sse)
    return {"eta2": ss / sst, "partial_eta2": pe,
            "omega2": (ss - df * mse) / (sst + mse),
            "cohens_f": np.sqrt(pe / (1 - pe))}


def all_effects(blocks, Y, ss):
    """Every term's effect sizes for each column of Y (n × R)."""
    n = Y.shape[0]
    full = ["1", "A", "B", "A×B"]
    p = sum(blocks[k].shape[1] for k in full)
    cache = {}

    def r(names):
        key = tuple(names)
        if key not in cache:
            cache[key] = rss(blocks, names, Y)
        return cache[key]
    sse = r(full)
    sst = r(["1"])
    out = {}
    for t, (red, aug) in model_pairs(ss).items():
        out[t] = effects_from_ss(r(red) - r(aug), DF[t], sse, n - p, sst, n)
    return out


def bca_endpoints(reps, theta, jack, conf):
    """Efron (1987) BCa: z0 from the share of replicates below the estimate, acceleration
    from the jackknife values; endpoints by numpy.percentile (linear)."""
    z0 = sp.ndtri(np.mean(reps < theta))
    d = jack.mean() - jack
    acc = (d ** 3).sum() / (6.0 * ((d ** 2).sum()) ** 1.5)
    out = []
    for q in ((1 - conf) / 2, 1 - (1 - conf) / 2):
        z = z0 + sp.ndtri(q)
        out.append(np.percentile(reps, 100 * sp.ndtr(z0 + z / (1 - acc * z))))
    return out, acc


def part_b():
    rng = np.random.default_rng(77031)
    counts = [[4, 6, 5], [7, 3, 5]]
    a_eff = [0.6, -0.6]
    b_eff = [-0.5, 0.1, 0.4]
    rows_a, rows_b = [], []
    for i in range(2):
        for j in range(3):
            rows_a += [i] * counts[i][j]
            rows_b += [j] * counts[i][j]
    a = np.array(rows_a)
    b = np.array(rows_b)
    n = len(a)
    # skewed errors: centred exponential, plus a small interaction
    y = (10 + np.array([a_eff[i] for i in a]) + np.array([b_eff[j] for j in b])
         + 0.3 * (a == 0) * (b == 2) + rng.exponential(1.0, n) - 1.0)
    csv = os.path.join(WORK, "twoway.csv")
    write_csv(csv, ["A", "B", "y"], [("a%d" % (i + 1), "b%d" % (j + 1), v)
                                     for i, j, v in zip(a, b, y)])
    blocks = two_way_blocks(a, b)
    X = np.column_stack([blocks[k] for k in ["1", "A", "B", "A×B"]])
    coef = np.linalg.lstsq(X, y, rcond=None)[0]
    fitted = X @ coef
    e = y - fitted
    H = X @ np.linalg.pinv(X)
    h = np.diag(H)
    adj = e / np.sqrt(1 - h)
    # leave-one-row-out refits for the acceleration (same for both schemes)
    jack = {ss: {t: {k: np.empty(n) for k in ("eta2", "partial_eta2")} for t in TERMS}
            for ss in (3, 1)}
    for i in range(n):
        keep = np.arange(n) != i
        bl = {k: v[keep] for k, v in blocks.items()}
        for ss in (3, 1):
            eff = all_effects(bl, y[keep, None], ss)
            for t in TERMS:
                for k in ("eta2", "partial_eta2"):
                    jack[ss][t][k][i] = eff[t][k][0]
    theta = {ss: all_effects(blocks, y[:, None], ss) for ss in (3, 1)}
    a2 = (1 - CONF) / 2
    for scheme in ("residual", "wild"):
        # reference: M seeds of B replicates
        ref = {ss: {t: {k: [] for k in ("eta2", "partial_eta2")} for t in TERMS}
               for ss in (3, 1)}
        noacc_gap = {}
        for k in range(M):
            g = np.random.default_rng(5000 + k)
            if scheme == "residual":
                pool = adj - adj.mean()
                R = pool[g.integers(0, n, size=(n, B))]
            else:
                R = adj[:, None] * g.choice([-1.0, 1.0], size=(n, B))
            Y = fitted[:, None] + R
            for ss in (3, 1):
                eff = all_effects(blocks, Y, ss)
                for t in TERMS:
                    for es in ("eta2", "partial_eta2"):
                        reps = eff[t][es]
                        th = theta[ss][t][es][0]
                        pct = np.percentile(reps, [100 * a2, 100 * (1 - a2)])
                        bca, acc = bca_endpoints(reps, th, jack[ss][t][es], CONF)
                        ref[ss][t][es].append((pct[0], pct[1], bca[0], bca[1]))
                        if k == 0:
                            # BCa without the acceleration, to show what the check can see
                            z0 = sp.ndtri(np.mean(reps < th))
                            bc = [np.percentile(reps, 100 * sp.ndtr(2 * z0 + sp.ndtri(q)))
                                  for q in (a2, 1 - a2)]
                            noacc_gap[(ss, t, es)] = (acc, bc[0] - bca[0], bc[1] - bca[1])
        for ss in (3, 1):
            runs = [run_sturdy(csv, ["A", "B"], scheme, ss, 301 + k) for k in range(M)]
            for t in TERMS:
                for es in ("partial_eta2", "eta2"):
                    obs = runs[0][t][es]
                    exp = theta[ss][t][es][0]
                    report(abs(obs - exp) <= 1e-10 * max(1.0, abs(exp)),
                           "%s Type %d %s %s estimate: observed %.15g expected %.15g rel tol "
                           "1e-10 [numpy lstsq, sum-coded]" % (scheme, ss, t, es, obs, exp))
                    rv = np.array(ref[ss][t][es])
                    sv = np.array([[r[t]["ci"][es]["percentile"][0],
                                    r[t]["ci"][es]["percentile"][1],
                                    r[t]["ci"][es]["bca"][0], r[t]["ci"][es]["bca"][1]]
                                   for r in runs], float)
                    src = ("numpy %s bootstrap written here (Davison & Hinkley 1997 §6.2.3%s)"
                           % (scheme, "; Wu 1986" if scheme == "wild" else ""))
                    for col, label in ((0, "percentile lo"), (1, "percentile hi"),
                                       (2, "bca lo"), (3, "bca hi")):
                        compare("%s Type %d %s %s %s" % (scheme, ss, t, es, label),
                                sv[:, col], rv[:, col],
                                src + ("; Efron 1987 BCa, lstsq jackknife" if col >= 2 else ""))
                    # acceleration, indirectly: the BCa − percentile gap of each endpoint
                    acc, dlo, dhi = noacc_gap[(ss, t, es)]
                    for col, label, dn in ((0, "lo", dlo), (1, "hi", dhi)):
                        compare("%s Type %d %s %s bca-percentile gap %s (reference a=%.4f; "
                                "a=0 would move the BCa endpoint by %+.2e)"
                                % (scheme, ss, t, es, label, acc, dn),
                                sv[:, col + 2] - sv[:, col], rv[:, col + 2] - rv[:, col],
                                "numpy BCa, Efron 1987, leave-one-row-out lstsq refits")


part_a()
part_b()
finish()
