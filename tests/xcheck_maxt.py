"""xcheck_maxt.py — the resampling family of the pairwise comparisons: single-step max-T
permutation-adjusted p-values (responses[].comparisons[].p_perm_adjusted; Westfall &
Young 1993) computed from the main tests' own rearrangements, the max-|t| bootstrap band
(ci_bootstrap_simultaneous) and its own single-step max-T p (p_boot_adjusted).

Checks (the reference is named on every line):
  * identity: a two-level factor's family is its one difference, whose t² is the term's
    F with the same null model, so its max-T p must equal the term's p_perm exactly —
    under Freedman–Lane, ter Braak, raw permutation and sign flipping, and with a
    covariate (reference: the definition of both tests);
  * monotone in the family: the adjusted p of the largest |t| is the smallest of its
    family, and no adjusted p is below the family's smallest (reference: max-T);
  * bit-identical over --threads 1, 2, 3 and over 3 shards merged (reference: the
    contract of DESIGN.md);
  * family-wise error under the global null by simulation: 300 one-way datasets (4
    levels × 5 rows, centred exponential errors, numpy seed 12; -B 199, --bootstrap
    199, seeds 1..300; STURDY_SLOW=1: 1000): the share with any p_perm_adjusted ≤ 0.05
    must lie in the binomial 99% band around 0.05 for 300 datasets, [0.020, 0.083]
    (exact band from scipy.stats.binom: P(X < lo) and P(X > hi) at most 0.005 each); the
    permutation test is exact here, so a failure means a wrong family or count. The same
    band for the bootstrap max-T p, p_boot_adjusted (the band's replicate maxima). About
    8 s.
  * with one true difference (level d shifted by 3 SD) the max-T family finds it in
    most datasets (≥ 0.80 of 100; a sanity floor, not a power claim).
  * simultaneous coverage of the max-|t| bootstrap band (ci_bootstrap_simultaneous,
    residual scheme, --bootstrap 299) by simulation: one-way, 4 levels × 8 rows,
    centred exponential errors (numpy seed 21, --seed 1..N), under the global null and
    with true differences (0, 0, 1, 2.5 SD); a dataset is covered when every one of the
    6 true differences lies in its interval. Quick tier (make check): 150 datasets each,
    asserting coverage ≥ 0.95 − 2.58·√(0.95·0.05/150) = 0.90 (binomial 99% lower
    band); STURDY_SLOW=1: 1000 datasets each, asserting ≥ 0.93 as the issue asks.
  * unequal spreads: one-way, 4 cells with SDs 1, 1, 1, 4 and n 16, 12, 10, 8 (the noisy
    cell smallest; normal errors, numpy seed 33; -B 199, --bootstrap 199, seeds 1..N).
    Where the spread rule fires, the comparisons are Games–Howell and both resampling
    families studentise each difference by its own SE (maxt.c, bootcmp.c). Over those
    datasets the family-wise error of the bootstrap max-T p (p_boot_adjusted, the
    adjusted p quoted for Games–Howell families) must lie in the binomial 99% band
    around 0.05, p_boot_adjusted must invert the band in every comparison (p ≤ 0.05 only
    where the band excludes 0; below 0.05 + 2/(B + 1) where it does), and the max-|t|
    band's simultaneous coverage must reach the binomial 99% lower band of 0.95
    (STURDY_SLOW=1: 0.93, as the issue asks). The permutation max-T p moves rows between
    cells of unequal spread and is only asymptotically valid there (Janssen 1997): at
    1000 datasets its family-wise error was 0.077 over 917, above the band [0.033,
    0.070] (docs/compare_study.md; the quick tier's 231 gave 0.100), so under unequal
    spreads its family-wise error is printed ("info" line), not asserted (the pooled-SE
    version before own-SE studentisation gave 0.164, and coverage 0.82, on 116 such
    datasets). The same checks with SDs all 1 (equal spreads) over all datasets, where
    the permutation max-T band is asserted. Quick tier: 250 datasets with SDs 1,1,1,4
    and 100 with equal SDs (about 50 s on 2 cores); STURDY_SLOW=1: 1000 per case.
Prints one line per check and "N passed, N failed"; exits 1 on any failure. A missing
library or binary is a failure, never a skip.
"""
import json
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, missing_library, need_binary, report  # noqa: E402

try:
    import numpy as np
    import pandas as pd
    from scipy.stats import binom
except ImportError as exc:   # pragma: no cover
    missing_library(exc, "python3-numpy python3-pandas python3-scipy")

BIN = need_binary()
N_SIM = 1000 if os.environ.get("STURDY_SLOW") == "1" else 300
ALPHA = 0.05


def band99(n, p):
    """Binomial 99% band of a share over n trials at rate p: P(X < lo), P(X > hi) ≤ 0.005."""
    return binom.ppf(0.005, n, p) / n, binom.isf(0.005, n, p) / n


def run(path, args, expect_ok=True):
    out = subprocess.run([BIN, "check", path] + args, capture_output=True, text=True)
    if out.returncode != 0 and expect_ok:
        report(False, "sturdy %s exited %d: %s" % (" ".join(args), out.returncode,
                                                   out.stderr.strip()[:200]))
        return None
    return out.stdout


def identity_checks(tmp):
    rng = np.random.default_rng(4)
    rows = []
    for a in ("a1", "a2", "a3"):
        for b in ("lo", "hi"):
            for _ in range(int(rng.integers(3, 7))):
                x = rng.normal(0, 1)
                rows.append(dict(A=a, B=b, x=round(x, 3),
                                 y=round(5 + (b == "hi") * 0.8 + 0.5 * x + rng.exponential(1.0), 4)))
    path = os.path.join(tmp, "id.csv")
    pd.DataFrame(rows).to_csv(path, index=False)
    variants = [("freedman-lane", []), ("ter-braak", ["--method", "ter-braak"]),
                ("raw", ["--method", "raw"]), ("flip", ["--flip"]),
                ("covariate", ["--covariates", "x"])]
    for name, extra in variants:
        text = run(path, ["-y", "y", "-f", "A,B", "-B", "499", "--bootstrap", "0",
                          "--format", "json", "--compare", "all"] + extra)
        if text is None:
            continue
        resp = json.loads(text)["responses"][0]
        term = [t for t in resp["terms"] if t["term"] == "B"][0]
        comp = [c for c in resp["comparisons"] if c["term"] == "B"]
        report(len(comp) == 1 and comp[0]["p_perm_adjusted"] == term["p_perm"],
               "%s: two-level B, max-T p %r == term p_perm %r [definition: t² = F]"
               % (name, comp[0]["p_perm_adjusted"] if comp else None, term["p_perm"]))
        fam = [c for c in resp["comparisons"] if c["term"] == "A"]
        best = max(fam, key=lambda c: abs(c["t"]) if c["t"] is not None else -1)
        lowest = min(c["p_perm_adjusted"] for c in fam)
        report(best["p_perm_adjusted"] == lowest,
               "%s: the largest |t| of A's family has its smallest adjusted p (%r) [max-T]"
               % (name, lowest))
        report(all(c["p_perm_adjusted"] >= c["p"] - 1e-12 or c["p_perm_adjusted"] >= 1.0 / 500
                   for c in fam),
               "%s: adjusted p not far below the unadjusted [max-T]" % name)
    # threads and shards
    args = ["-y", "y", "-f", "A,B", "-B", "999", "--bootstrap", "0", "--format", "json",
            "--compare", "all"]
    outs = [run(path, args + ["--threads", str(t)]) for t in (1, 2, 3)]
    report(outs[0] is not None and outs[0] == outs[1] == outs[2],
           "--threads 1, 2, 3 give byte-identical JSON with the comparisons [DESIGN.md]")
    parts = []
    for i in (1, 2, 3):
        p = os.path.join(tmp, "part%d.json" % i)
        run(path, args + ["--shard", "%d/3" % i, "-o", p])
        parts.append(p)
    merged = os.path.join(tmp, "merged.json")
    subprocess.run([BIN, "merge", parts[2], parts[0], parts[1], "-o", merged],
                   capture_output=True, text=True)
    single = json.loads(outs[0]) if outs[0] else None
    try:
        mj = json.load(open(merged))
    except (OSError, ValueError):
        mj = None
    same = (single is not None and mj is not None and
            single["responses"][0]["comparisons"] == mj["responses"][0]["comparisons"])
    report(same, "3 shards merged: comparisons identical to the single run [DESIGN.md]")
    mcsv = subprocess.run([BIN, "merge", parts[1], parts[0], parts[2], "--format",
                           "csv-comparisons", "-q"], capture_output=True, text=True)
    scsv = run(path, args + ["--threads", "1", "--format", "csv-comparisons", "-q"])
    report(mcsv.returncode == 0 and scsv is not None and mcsv.stdout == scsv and
           scsv.count("\n") > 5,
           "merge --format csv-comparisons: byte-identical to the single run's "
           "(exit %d) [DESIGN.md]" % mcsv.returncode)
    # the same with own-SE studentisation (spreads differ: Games–Howell families)
    rng = np.random.default_rng(35)
    ns, sds = [16, 12, 10, 8], [1, 1, 1, 5]
    y = np.concatenate([rng.normal(0, sds[i], ns[i]) for i in range(4)])
    path = os.path.join(tmp, "het.csv")
    pd.DataFrame({"g": np.repeat(list("abcd"), ns), "y": np.round(y, 6)}).to_csv(path, index=False)
    for extra in ([], ["--flip"]):
        args = ["-y", "y", "-f", "g", "-B", "999", "--bootstrap", "499", "--format", "json",
                "--compare", "all"] + extra
        outs = [run(path, args + ["--threads", str(t)]) for t in (1, 3)]
        comps = json.loads(outs[0])["responses"][0]["comparisons"] if outs[0] else []
        report(bool(comps) and all(c["adjustment"] == "games-howell" for c in comps) and
               all(0 < c["p_perm_adjusted"] <= 1 and c["ci_bootstrap_simultaneous"][0] is not None
                   and c["p_boot_adjusted"] is not None and 0 < c["p_boot_adjusted"] <= 1
                   for c in comps),
               "spreads differ%s: Games–Howell families with max-T p, band and bootstrap "
               "max-T p [maxt.c, bootcmp.c]"
               % (" (--flip)" if extra else ""))
        report(outs[0] is not None and outs[0] == outs[1],
               "spreads differ%s: --threads 1 and 3 give byte-identical JSON [DESIGN.md]"
               % (" (--flip)" if extra else ""))
        parts = []
        for i in (1, 2, 3):
            p = os.path.join(tmp, "hpart%d.json" % i)
            run(path, args + ["--shard", "%d/3" % i, "-o", p])
            parts.append(p)
        merged = os.path.join(tmp, "hmerged.json")
        subprocess.run([BIN, "merge", parts[1], parts[2], parts[0], "-o", merged],
                       capture_output=True, text=True)
        try:
            mj = json.load(open(merged))["responses"][0]["comparisons"]
        except (OSError, ValueError):
            mj = None
        report(mj is not None and mj == comps, "spreads differ%s: 3 shards merged give the "
               "single run's comparisons [DESIGN.md]" % (" (--flip)" if extra else ""))


def fwer_simulation(tmp):
    rng = np.random.default_rng(12)
    hits_null = hits_boot = 0
    for s in range(N_SIM):
        y = rng.exponential(1.0, size=20) - 1.0
        df = pd.DataFrame({"g": np.repeat(["a", "b", "c", "d"], 5), "y": np.round(y, 6)})
        path = os.path.join(tmp, "sim.csv")
        df.to_csv(path, index=False)
        text = run(path, ["-y", "y", "-f", "g", "-B", "199", "--bootstrap", "199", "--format",
                          "json", "--compare", "all", "--seed", str(s + 1), "--threads", "1"])
        if text is None:
            return
        comps = json.loads(text)["responses"][0]["comparisons"]
        hits_null += any(c["p_perm_adjusted"] <= ALPHA for c in comps)
        hits_boot += any(c["p_boot_adjusted"] is not None and c["p_boot_adjusted"] <= ALPHA
                         for c in comps)
    lo, hi = band99(N_SIM, ALPHA)
    rate = hits_null / N_SIM
    report(lo <= rate <= hi,
           "family-wise error under the global null: %.3f in the binomial 99%% band "
           "[%.3f, %.3f] of %d datasets [Westfall & Young 1993: FWER = alpha]"
           % (rate, lo, hi, N_SIM))
    rate = hits_boot / N_SIM
    report(lo <= rate <= hi,
           "bootstrap max-T p (p_boot_adjusted, --bootstrap 199): family-wise error %.3f in "
           "the binomial 99%% band [%.3f, %.3f] of %d datasets [single-step max-T over the "
           "band's replicate maxima]" % (rate, lo, hi, N_SIM))
    found = 0
    for s in range(100):
        y = rng.exponential(1.0, size=20) - 1.0
        y[15:] += 3.0
        df = pd.DataFrame({"g": np.repeat(["a", "b", "c", "d"], 5), "y": np.round(y, 6)})
        path = os.path.join(tmp, "alt.csv")
        df.to_csv(path, index=False)
        text = run(path, ["-y", "y", "-f", "g", "-B", "199", "--bootstrap", "0", "--format",
                          "json", "--compare", "all", "--seed", str(s + 1), "--threads", "1"])
        if text is None:
            return
        comps = json.loads(text)["responses"][0]["comparisons"]
        found += any(c["level"] == "d" and c["versus"] == "a" and c["p_perm_adjusted"] <= ALPHA
                     for c in comps)
    report(found / 100 >= 0.80, "one true difference (3 SD) found by max-T in %d of 100 "
           "datasets (floor 80) [sanity]" % found)


def boot_coverage(tmp):
    slow = os.environ.get("STURDY_SLOW") == "1"
    n_sets = 1000 if slow else 150
    floor = 0.93 if slow else 0.95 - 2.58 * np.sqrt(0.95 * 0.05 / n_sets)
    rng = np.random.default_rng(21)
    levels = ["a", "b", "c", "d"]
    for name, shift in (("global null", [0, 0, 0, 0]), ("true differences", [0, 0, 1, 2.5])):
        covered = 0
        for s in range(n_sets):
            y = rng.exponential(1.0, size=32) - 1.0 + np.repeat(shift, 8)
            df = pd.DataFrame({"g": np.repeat(levels, 8), "y": np.round(y, 6)})
            path = os.path.join(tmp, "cov.csv")
            df.to_csv(path, index=False)
            text = run(path, ["-y", "y", "-f", "g", "-B", "0", "--bootstrap", "299",
                              "--format", "json", "--compare", "all", "--seed", str(s + 1),
                              "--threads", "1"])
            if text is None:
                return
            comps = json.loads(text)["responses"][0]["comparisons"]
            ok = True
            for c in comps:
                true = shift[levels.index(c["level"])] - shift[levels.index(c["versus"])]
                lo, hi = c["ci_bootstrap_simultaneous"]
                ok &= lo is not None and lo <= true <= hi
            covered += ok
        rate = covered / n_sets
        report(rate >= floor, "max-|t| bootstrap band, %s: simultaneous coverage %.3f of %d "
               "datasets ≥ %.3f [nominal 0.95; binomial band]" % (name, rate, n_sets, floor))


def unequal_spreads(tmp):
    slow = os.environ.get("STURDY_SLOW") == "1"
    ns = [16, 12, 10, 8]
    levels = ["a", "b", "c", "d"]
    rng = np.random.default_rng(33)
    B = 199
    for case, sds, only_fired, n_sets in (("SDs 1,1,1,4", [1, 1, 1, 4], True, 1000 if slow else 250),
                                          ("equal SDs", [1, 1, 1, 1], False, 1000 if slow else 100)):
        used = fw = fwb = cov = fired = 0
        inverse = []   # comparisons where p_boot_adjusted and the band disagree beyond
        for s in range(n_sets):
            y = np.concatenate([rng.normal(0, sds[i], ns[i]) for i in range(4)])
            df = pd.DataFrame({"g": np.repeat(levels, ns), "y": np.round(y, 6)})
            path = os.path.join(tmp, "uneq.csv")
            df.to_csv(path, index=False)
            text = run(path, ["-y", "y", "-f", "g", "-B", "199", "--bootstrap", "199",
                              "--format", "json", "--compare", "all", "--seed", str(s + 1),
                              "--threads", "1"])
            if text is None:
                return
            comps = json.loads(text)["responses"][0]["comparisons"]
            gh = comps[0]["adjustment"] == "games-howell"
            fired += gh
            if only_fired and not gh:
                continue
            used += 1
            fw += any(c["p_perm_adjusted"] <= ALPHA for c in comps)
            fwb += any(c["p_boot_adjusted"] is not None and c["p_boot_adjusted"] <= ALPHA
                       for c in comps)
            cov += all(c["ci_bootstrap_simultaneous"][0] is not None and
                       c["ci_bootstrap_simultaneous"][0] <= 0 <= c["ci_bootstrap_simultaneous"][1]
                       for c in comps)
            for c in comps:   # the band's discreteness allows p < alpha + 2/(B + 1)
                lo_, hi_ = c["ci_bootstrap_simultaneous"]
                out = lo_ is not None and not lo_ <= 0 <= hi_
                p = c["p_boot_adjusted"]
                if p is None or (p <= ALPHA and not out) or (out and p >= ALPHA + 2 / (B + 1)):
                    inverse.append((s + 1, c["level"], c["versus"], p, lo_, hi_))
        if used < 20:
            report(False, "%s: the spread rule fired in only %d of %d datasets" % (case, fired, n_sets))
            continue
        lo, hi = band99(used, ALPHA)
        where = " where the rule fired" if only_fired else ""
        report(not inverse, "%s: p_boot_adjusted inverts the band in every comparison of %d "
               "datasets (p ≤ 0.05 only where the band excludes 0, and below 0.05 + 2/(B+1) "
               "there)%s [bootcmp.c]" % (case, used, " — " + repr(inverse[:3]) if inverse else ""))
        report(lo <= fwb / used <= hi,
               "%s: bootstrap max-T p (p_boot_adjusted) family-wise error %.3f over %d "
               "datasets%s in the binomial 99%% band [%.3f, %.3f] [single-step max-T over "
               "the wild bootstrap's replicate maxima]" % (case, fwb / used, used, where, lo, hi))
        if only_fired:
            # Permutation moves rows between cells of unequal spread: with own-SE
            # studentisation max-T is only asymptotically valid here (Janssen 1997), and it
            # was measured above its band (0.077 over 917 datasets against [0.033, 0.070];
            # docs/compare_study.md). p_boot_adjusted is the adjusted p quoted for these
            # families and is asserted above; this figure is printed, not asserted.
            print("info %s: permutation max-T (p_perm_adjusted) family-wise error %.3f over "
                  "%d datasets%s, approximate under unequal spreads; its binomial 99%% band "
                  "would be [%.3f, %.3f] (not asserted; the bootstrap max-T p is quoted)"
                  % (case, fw / used, used, where, lo, hi))
        else:
            report(lo <= fw / used <= hi,
                   "%s: max-T family-wise error %.3f over %d datasets%s in the binomial 99%% "
                   "band [%.3f, %.3f] [Westfall & Young 1993; own-SE studentisation]"
                   % (case, fw / used, used, where, lo, hi))
        # quick tier: the binomial 99% lower band; slow tier: 0.93, as the other coverage
        # checks of the 1000-dataset tier (the floor for 95%)
        floor = 0.93 if slow else 0.95 - 2.58 * np.sqrt(0.95 * 0.05 / used)
        report(cov / used >= floor,
               "%s: max-|t| band simultaneous coverage %.3f over %d datasets ≥ %.3f "
               "[nominal 0.95; binomial 99%% lower band]" % (case, cov / used, used, floor))


def main():
    with tempfile.TemporaryDirectory() as tmp:
        identity_checks(tmp)
        fwer_simulation(tmp)
        boot_coverage(tmp)
        unequal_spreads(tmp)
    finish()


if __name__ == "__main__":
    main()
