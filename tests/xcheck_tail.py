"""P-values below 1/B from a generalised Pareto tail of F* (--tail-fit;
resampling/tail.c; issue 17, item 4; Knijnenburg, Wessels, Reinders & Shmulevich 2009).

1. The ML fit (probe_tail fit) against scipy.stats.genpareto.fit(z, floc=0) on the same
   values, heavy and light tails (ξ from −0.4 to 1) and sizes 40 to 250, plus the
   exceedances of a real run's F* tail: shape and scale within 1e-6 (relative; absolute
   near ξ = 0) of scipy's MLE polished by scipy.optimize.minimize (Nelder–Mead from
   scipy's fit, tolerances 1e-12), and a log-likelihood no lower than scipy's own fit's.
   The Anderson–Darling A² against the formula evaluated with scipy's GPD cdf at the C
   fit (rel 1e-10), and the bootstrap AD p-value against
   scipy.stats.goodness_of_fit(genpareto, known loc 0, 'ad') — an independent Monte
   Carlo p of the same statistic under the same composite null — within 0.15 (about
   three standard errors of the difference of two 199-sample Monte Carlo p-values).
2. A run's p_tail against Knijnenburg's formula computed in Python from the part's own
   largest F* (raw f_top of a --shard 1/1 part): with N_exc and the threshold as the
   run reports them, p = (N_exc/B)·(1 − F_GPD(F − t)) with scipy's polished fit, rel 1e-5;
   N_exc and t themselves recomputed from f_top.
3. Calibration: a 3×2 design (4 rows per cell, normal errors) whose permutation p is
   about 1e-4 by a run of B = 1,000,000 (about 100 exceedances). Twenty runs of B = 999
   (seeds 1–20), where the plain p is at least 1/1000: the median tail p within a factor
   of 2 of the large-B p, and at least 15 of 20 within a factor of 10 (measured: 17 of
   20; the extrapolation 100-fold beyond 1/B is noisy: single runs ranged from 4e-10 to
   5e-4).
4. Determinism: the min-heaps of tail.c keep exactly Python's sorted()[:251] of a set,
   whatever its split over 1, 3 or 8 heaps (probe_tail top); identical JSON for 1 and 2 threads, and for 3 shards merged in another
   order (the largest F* are a multiset, merged order-free); a part written without
   --tail-fit carries no f_top. (tests/xcheck_shards.sh and xcheck_mpi.sh also run a
   --tail-fit case.)
5. The fall-backs, through probe_tail estimate (the engine's heap and merge, then the
   procedure): each reason on values built to reach it — fewer than 31 values
   (few_values), 10 or more exceedances (not_needed), an infinite F* (infinite_values),
   F* rounded to halves so that ties sit at the thresholds (gof_rejected), uniform values
   (shape ξ̂ ≈ −1: shape_invalid), a GPD(−0.3) sample with F beyond its fitted end
   (beyond_support); and a known tail: 999 draws of F(2, 20) give p_tail for F = 30
   within a factor 3 of scipy.stats.f.sf(30, 2, 20) = 9.5e-7.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import (close, finish, missing_library, need_binary, probe_path,  # noqa: E402
                     report)

try:
    import numpy as np
    from scipy import optimize, stats
except ImportError as exc:
    missing_library(exc, "python3-numpy python3-scipy")

SBIN = os.path.abspath(need_binary())
PROBE = probe_path("probe_tail")
TMP = tempfile.mkdtemp()


def c_fit(z):
    out = subprocess.run([PROBE, "fit"], input="\n".join(repr(float(v)) for v in z),
                         capture_output=True, text=True, timeout=60)
    if out.returncode != 0:
        return None
    return [float(v) for v in out.stdout.split()]


def loglik(z, c, s):
    return float(np.sum(stats.genpareto.logpdf(z, c, 0, s)))


def scipy_mle(z):
    """scipy's fit, then polished: (ξ, σ, ℓ of the polished, ℓ of scipy's own fit)."""
    c0, _, s0 = stats.genpareto.fit(z, floc=0)
    ll0 = loglik(z, c0, s0)

    def nll(v):
        ll = loglik(z, v[0], math.exp(v[1]))
        return -ll if math.isfinite(ll) else 1e300
    r = optimize.minimize(nll, [c0, math.log(s0)], method="Nelder-Mead",
                          options={"xatol": 1e-12, "fatol": 1e-12, "maxiter": 20000})
    c1, s1 = r.x[0], math.exp(r.x[1])
    if -r.fun < ll0:
        c1, s1 = c0, s0
    return c1, s1, loglik(z, c1, s1), ll0


def ad_stat(z, c, s):
    z = np.sort(z)
    n = len(z)
    F = stats.genpareto.cdf(z, c, 0, s)
    i = np.arange(1, n + 1)
    return float(-n - np.sum((2 * i - 1) * (np.log(F) + np.log1p(-F[::-1]))) / n)


def check_fit(label, z, gof=False):
    got = c_fit(z)
    if got is None:
        report(False, "%s: the C fit failed" % label)
        return
    xi, sg, ll, ad, adp = got
    c1, s1, ll1, ll0 = scipy_mle(z)
    src = "scipy.stats.genpareto.fit(floc=0) polished by optimize.minimize"
    close("%s: shape" % label, xi, c1, 1e-6, True, src, floor=1e-6)
    close("%s: scale" % label, sg, s1, 1e-6, True, src)
    report(ll >= ll0 - 1e-9 * abs(ll0),
           "%s: log-likelihood %.12f >= scipy.stats.genpareto.fit's %.12f" % (label, ll, ll0))
    report(ll >= ll1 - 1e-10 * abs(ll1),
           "%s: log-likelihood %.14f >= the polished scipy MLE's %.14f (to 1e-10 rel)"
           % (label, ll, ll1))
    close("%s: log-likelihood at the C fit" % label, ll, loglik(z, xi, sg), 1e-10, True,
          "scipy.stats.genpareto.logpdf")
    close("%s: Anderson-Darling A2" % label, ad, ad_stat(z, xi, sg), 1e-10, True,
          "A2 formula with scipy.stats.genpareto.cdf")
    if gof:
        g = stats.goodness_of_fit(stats.genpareto, z, known_params={"loc": 0},
                                  statistic="ad", n_mc_samples=199, random_state=1)
        report(abs(adp - g.pvalue) <= 0.15,
               "%s: AD bootstrap p %.3f vs %.3f [scipy.stats.goodness_of_fit, 199 samples; "
               "tol 0.15]" % (label, adp, g.pvalue))


def write_design(path, eff, seed=7):
    rng = np.random.default_rng(seed)
    with open(path, "w") as f:
        f.write("dose,site,y\n")
        for a in range(3):
            for b in range(2):
                for _ in range(4):
                    y = eff * (a - 1) + 0.3 * b + rng.standard_normal()
                    f.write("a%d,b%d,%.6f\n" % (a, b, y))


def sturdy(*args):
    r = subprocess.run([SBIN, "check"] + list(args), capture_output=True, text=True,
                       timeout=300, cwd=TMP)
    if r.returncode != 0:
        report(False, "sturdy check %s: exit %d %s" % (" ".join(args), r.returncode,
                                                       r.stderr.strip()))
    return r


def main():
    rng = np.random.default_rng(2009)
    # 1. the fit
    for c, n in ((0.5, 250), (0.25, 250), (0.0, 200), (-0.2, 250), (-0.4, 100),
                 (1.0, 60), (0.1, 40)):
        z = stats.genpareto.rvs(c, scale=1.7, size=n, random_state=rng)
        check_fit("GPD(xi=%g) n=%d" % (c, n), z, gof=(c == 0.1))

    cal = os.path.join(TMP, "cal.csv")
    write_design(cal, 1.5)
    base = ["cal.csv", "-y", "y", "-f", "dose,site", "--bootstrap", "0"]
    # 2. a run's p_tail against the formula on its own largest F*
    sturdy(*base, "-B", "999", "--tail-fit", "--seed", "3", "--shard", "1/1", "-o", "p.json")
    sturdy(*base, "-B", "999", "--tail-fit", "--seed", "3", "--format", "json", "-o", "s.json")
    part = json.load(open(os.path.join(TMP, "p.json")))
    whole = json.load(open(os.path.join(TMP, "s.json")))
    t_part = part["responses"][0]["terms"][0]
    t = whole["responses"][0]["terms"][0]
    top = np.array([math.inf if v is None else v for v in t_part["raw"]["f_top"]])
    fit = t["tail_fit"]
    report(fit["status"] == "fitted" and t["exceed"] < 10 and len(top) == 251 and
           all(top[i] >= top[i + 1] for i in range(len(top) - 1)),
           "run: dose fitted (exceed %d), 251 largest F* kept, descending" % t["exceed"])
    N = fit["n_exc"]
    thr = 0.5 * (top[N - 1] + top[N])
    close("run: threshold", fit["threshold"], thr, 1e-15, True, "midway between f_top[N-1], f_top[N]")
    z = top[:N] - thr
    check_fit("run's exceedances (N_exc=%d)" % N, z)
    c1, s1, _, _ = scipy_mle(z)
    p_ref = N / 999 * stats.genpareto.sf(t["f"] - thr, c1, 0, s1)
    close("run: p_tail", t["p_tail"], p_ref, 1e-5, True,
          "(N_exc/B)(1 - F_GPD(F - t)) with scipy's fit (Knijnenburg et al. 2009)")
    report(t["p_perm"] == 1 / 1000, "run: p_perm %.6g kept beside p_tail %.3g" % (
        t["p_perm"], t["p_tail"]))

    # 3. calibration against a large-B run
    sturdy(*base, "-B", "1000000", "--threads", "1", "--format", "json", "-o", "big.json")
    big = json.load(open(os.path.join(TMP, "big.json")))["responses"][0]["terms"][0]
    p_big = big["p_perm"]
    report(5e-5 < p_big < 2e-4, "calibration: B = 1,000,000 gives p %.3g (%d exceedances)"
           % (p_big, big["exceed"]))
    tails = []
    for seed in range(1, 21):
        r = sturdy(*base, "-B", "999", "--tail-fit", "--seed", str(seed), "--format", "json")
        tt = json.loads(r.stdout)["responses"][0]["terms"][0]
        tails.append(tt["p_tail"] if tt["p_tail"] is not None else math.nan)
    tails = np.array(tails)
    ratio = tails / p_big
    med = float(np.nanmedian(tails))
    within10 = int(np.sum((ratio > 0.1) & (ratio < 10)))
    report(0.5 < med / p_big < 2, "calibration: median p_tail at B = 999 %.3g vs %.3g at "
           "B = 1e6 (ratio %.2f, want within 2)" % (med, p_big, med / p_big))
    report(within10 >= 15, "calibration: %d of 20 runs within a factor 10 (want >= 15); "
           "range %.2g to %.2g" % (within10, np.nanmin(tails), np.nanmax(tails)))

    # 4. determinism
    args = base + ["-B", "1999", "--tail-fit", "--seed", "5"]
    sturdy(*args, "--threads", "1", "--format", "json", "-o", "t1.json")
    sturdy(*args, "--threads", "2", "--format", "json", "-o", "t2.json")
    for i in (1, 2, 3):
        sturdy(*args, "--shard", "%d/3" % i, "--threads", str(i % 2 + 1), "-o", "sh%d.json" % i)
    m = subprocess.run([SBIN, "merge", "sh3.json", "sh1.json", "sh2.json", "-o", "m.json"],
                       cwd=TMP, capture_output=True, text=True)
    b1 = open(os.path.join(TMP, "t1.json"), "rb").read()
    report(b1 == open(os.path.join(TMP, "t2.json"), "rb").read(),
           "determinism: 1 and 2 threads give identical JSON with --tail-fit")
    report(m.returncode == 0 and b1 == open(os.path.join(TMP, "m.json"), "rb").read(),
           "determinism: 3 shards merged in another order = the single run (bytes)")
    report('"p_tail": null' not in b1.decode().split('"terms"')[1].split('"term": "site"')[0],
           "determinism: the compared run has a fitted p_tail for dose")
    # the engine's heaps: the largest 251 exactly, whatever the split
    r4 = np.random.default_rng(4)
    for label, vals in (("5000 normal values", r4.standard_normal(5000)),
                        ("3000 values with ties", np.round(r4.exponential(size=3000), 1)),
                        ("100 values", r4.standard_normal(100))):
        want = sorted(vals, reverse=True)[:251]
        same = True
        for k in (1, 3, 8):
            out = subprocess.run([PROBE, "top", str(k)],
                                 input="\n".join(repr(float(v)) for v in vals),
                                 capture_output=True, text=True, timeout=60).stdout.split()
            same &= [float(v) for v in out] == [float(v) for v in want]
        report(same, "heaps: %s, split over 1, 3 and 8 heaps: the 251 largest exactly "
               "[sorted() in Python]" % label)

    # 5. fall-backs and a known tail
    def est(vals, F, B, ex):
        out = subprocess.run([PROBE, "estimate", repr(F), str(B), str(ex)],
                             input="\n".join(repr(float(v)) for v in vals),
                             capture_output=True, text=True, timeout=120).stdout.split()
        return out[0], float(out[1])
    r5 = np.random.default_rng(5)
    x = stats.f.rvs(2, 20, size=999, random_state=r5)
    st, p = est(x, 30.0, 999, 0)
    ref = stats.f.sf(30, 2, 20)
    report(st == "fitted" and ref / 3 < p < ref * 3,
           "known tail: p_tail %.3g for F = 30 from 999 F(2,20) draws vs %.3g "
           "[scipy.stats.f.sf; within a factor 3]" % (p, ref))
    for label, vals, F, B, ex, want in (
            ("25 values", x[:25], 30.0, 25, 0, "few_values"),
            ("40 exceedances", x, 3.0, 999, 40, "not_needed"),
            ("an infinite F*", list(x) + [math.inf], 30.0, 1000, 1, "infinite_values"),
            ("F* rounded to halves", np.round(x * 2) / 2, 30.0, 999, 0, "gof_rejected"),
            ("uniform values", r5.uniform(0, 1, 999), 1.5, 999, 0, "shape_invalid"),
            ("GPD(-0.3), F beyond its end",
             stats.genpareto.rvs(-0.3, size=999, random_state=r5), 10.0, 999, 0,
             "beyond_support")):
        st, p = est(vals, F, B, ex)
        report(st == want and math.isnan(p), "fall-back on %s: %s (want %s), p_tail %s"
               % (label, st, want, p))

    sturdy(*base, "-B", "99", "--shard", "1/2", "-o", "plain.json")
    report('"f_top"' not in open(os.path.join(TMP, "plain.json")).read(),
           "a part written without --tail-fit carries no f_top")
    finish()


main()
