"""xcheck_stop_early.py — sequential stopping of the permutation tests (--stop-early;
Besag & Clifford 1991, h = 20; resampling/sequential.c).

Checks (the reference is named on every line):
  * decisions at alpha = 0.05 against the full-B run (-B 4999, same seed) over 6 invented
    datasets (numpy seed 17; 3 factors 2 × 3 × 2, 4 rows per cell, 12 responses each
    with effects of random size, so the full-B p-values spread over (0, 1)): every term
    whose decision differs must lie within its own Monte Carlo error of alpha. That
    error is stated exactly: with true p the sequential decision "p ≤ alpha" is
    "fewer than h exceedances among the first ⌈h/alpha⌉ − 1 rearrangements", a binomial
    event; a term counts as within its error when, for some p within 3 standard errors
    of its full-B estimate (√(p(1−p)/B)), that event's probability of differing from
    the full-B decision exceeds 1e-3 (scipy.stats.binom). Outside that band a
    disagreement has probability below 1e-3 per term (reference: the binomial law of
    the exceedance count);
  * a term that never saw h exceedances keeps the full-B count, so its p equals the
    full-B run's p exactly (reference: the same rearrangements, sturdy_pcg_for(seed, b));
  * a stopped term's L is the exact index of its h-th exceedance: a plain run with
    -B L counts exactly h exceedances for it and -B L−1 counts h − 1 (reference: the
    rearrangement b depends on (seed, b) alone, so -B L repeats the first L); its p is
    h/L;
  * the run stops at a checkpoint (128, 256, …) that is ≥ every stopped term's L, and
    the family-wise p uses that many rearrangements;
  * bit-identical JSON with --threads 1, 2 and 3 (reference: the contract of DESIGN.md);
  * the re-test of a term without its deciding rows (p_perm_without) uses every
    rearrangement the run made: it equals a plain run's at -B (rearrangements made),
    on tests/data/input/retest_stops.csv (a re-test whose p is near 0.09, which once
    stopped at its 20th exceedance and reported 21/(1 + B)) and on the 6 datasets
    (reference: rearrangement b depends on (seed, b) alone);
  * --stop-early with --shard is refused (exit 2) with a message naming both.
About 15 s of CPU on one core.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, missing_library, need_binary, report  # noqa: E402

try:
    import numpy as np
    from scipy.stats import binom
except ImportError as exc:
    missing_library(exc, "python3-numpy python3-scipy")

BIN = need_binary()
H = 20
ALPHA = 0.05
B = 4999
NRESP = 12


def run(path, args):
    out = subprocess.run([BIN, "check", path] + args, capture_output=True, text=True)
    if out.returncode != 0:
        report(False, "sturdy %s exited %d: %s" % (" ".join(args), out.returncode,
                                                 out.stderr.strip()))
        finish()
    return out.stdout


def dataset(rng, path):
    a = np.repeat([0, 1], 24)
    b = np.tile(np.repeat([0, 1, 2], 8), 2)
    c = np.tile([0, 1], 24)
    cols = {}
    for k in range(NRESP):
        # effects of random size on every term, some null, some near the edge
        s = rng.choice([0.0, 0.0, 0.3, 0.5, 0.8], size=4) * rng.uniform(0.5, 1.5, size=4)
        y = (s[0] * (a - 0.5) * 2 + s[1] * (b - 1) + s[2] * (c - 0.5) * 2 +
             s[3] * ((a - 0.5) * (b - 1)) + rng.standard_normal(48))
        cols["y%d" % k] = y
    with open(path, "w") as f:
        f.write("A,B,C," + ",".join(cols) + "\n")
        for i in range(48):
            f.write("a%d,b%d,c%d," % (a[i], b[i], c[i]) +
                    ",".join("%.6f" % cols[k][i] for k in cols) + "\n")


def terms(doc):
    for r in doc["responses"]:
        for t in r["terms"]:
            if t["p_perm"] is not None:
                yield r["response"], t


def flip_prob(p):
    """Probability that the sequential decision (p̂ ≤ alpha) differs from p ≤ alpha,
    for true exceedance probability p: p̂ ≤ alpha ⇔ fewer than H exceedances among the
    first m = ⌈H/alpha⌉ − 1 rearrangements (B ≥ m here)."""
    m = math.ceil(H / ALPHA) - 1
    seq_signif = binom.cdf(H - 1, m, p)
    return seq_signif if p > ALPHA else 1.0 - seq_signif


def within_error(p_full):
    se = math.sqrt(max(p_full * (1 - p_full), 1.0 / B) / B)
    grid = np.linspace(max(p_full - 3 * se, 0.0), min(p_full + 3 * se, 1.0), 41)
    # the decision of the full run is p_full ≤ alpha; a p in the band on the other side
    # of alpha makes the full decision itself uncertain
    if (grid.min() <= ALPHA) != (grid.max() <= ALPHA):
        return True
    return max(flip_prob(q) for q in grid) > 1e-3


def main():
    rng = np.random.default_rng(17)
    tmp = tempfile.mkdtemp(prefix="sturdy_stop_")
    resp = ",".join("y%d" % k for k in range(NRESP))
    base = ["-y", resp, "-f", "A,B,C", "--bootstrap", "0", "--compare", "none",
            "--format", "json", "--quiet", "--threads", "1"]
    n_terms = n_stopped = n_agree = n_band = 0
    bad = []
    unstopped_equal = True
    stop_ok = True
    exact_checks = []
    for ds in range(6):
        path = os.path.join(tmp, "d%d.csv" % ds)
        dataset(rng, path)
        seed = str(100 + ds)
        full = json.loads(run(path, base + ["-B", str(B), "--seed", seed]))
        seq = json.loads(run(path, base + ["-B", str(B), "--seed", seed, "--stop-early"]))
        done = seq["settings"]["permutations"]
        if seq["settings"]["permutations_asked"] != B:
            stop_ok = False
        fp = {(r, t["term"]): t for r, t in terms(full)}
        for r, t in terms(seq):
            f = fp[(r, t["term"])]
            n_terms += 1
            if t["stopped_early"]:
                n_stopped += 1
                L = t["perm_used"]
                if not (abs(t["p_perm"] - H / L) < 1e-15 and t["exceed"] == H and L <= done):
                    stop_ok = False
                if len(exact_checks) < 6 and ds < 3:
                    exact_checks.append((path, seed, r, t["term"], L))
            else:
                if t["p_perm"] != f["p_perm"] or t["perm_used"] != B or done != B:
                    unstopped_equal = False
            same = (t["p_perm"] <= ALPHA) == (f["p_perm"] <= ALPHA)
            if same:
                n_agree += 1
            elif within_error(f["p_perm"]):
                n_band += 1
            else:
                bad.append("dataset %d %s %s: full p %.4f, sequential p %.4f (L %d)" % (
                    ds, r, t["term"], f["p_perm"], t["p_perm"], t["perm_used"]))
        # the family-wise p of the sequential run is over the rearrangements made
        for r, t in terms(seq):
            pf = t["p_perm_fwer"]
            if not (pf >= t["p_perm"] - 1e-15 and pf >= 1.0 / (done + 1) - 1e-15):
                stop_ok = False
        cps, c = [], 0
        while c < B:
            step = 128
            while c >= 1024 and step * 2 <= c // 8:
                step *= 2
            c = min((c // step + 1) * step, B)
            cps.append(c)
        if done not in cps:
            stop_ok = False
    report(not bad and n_terms > 0,
           "decisions at alpha 0.05 equal the full-B run's for %d of %d terms; %d differ "
           "within their Monte Carlo error band, %d outside it%s (binomial law of the "
           "exceedance count)" % (n_agree, n_terms, n_band, len(bad),
                                  (": " + "; ".join(bad)) if bad else ""))
    report(n_stopped > n_terms // 2,
           "most terms stop early: %d of %d (sanity)" % (n_stopped, n_terms))
    report(unstopped_equal, "terms that never saw %d exceedances keep the full-B p exactly "
           "(same rearrangements)" % H)
    report(stop_ok, "stopped terms: p = %d/L, exceed = %d, L within the run; the run "
           "stopped at a checkpoint; family-wise p over the rearrangements made" % (H, H))
    # L is the exact index of the h-th exceedance
    exact_ok = bool(exact_checks)
    for path, seed, r, term, L in exact_checks:
        for b, want in ((L, H), (L - 1, H - 1)):
            doc = json.loads(run(path, base + ["-B", str(b), "--seed", seed]))
            got = [t["exceed"] for rr, t in terms(doc) if rr == r and t["term"] == term]
            if got != [want]:
                exact_ok = False
                report(False, "%s %s: -B %d counts %s, want %d" % (r, term, b, got, want))
    report(exact_ok, "L is the exact index of the %dth exceedance: -B L counts %d, -B L-1 "
           "counts %d (%d terms; rearrangement b depends on (seed, b) only)"
           % (H, H, H - 1, len(exact_checks)))
    # the re-tests without the deciding rows use every rearrangement the run made
    data = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data", "input")
    cases = [(os.path.join(data, "retest_stops.csv"), ["-y", "yield", "-f", "dose,site"])]
    cases += [(os.path.join(tmp, "d%d.csv" % ds), ["-y", resp, "-f", "A,B,C"])
              for ds in range(3)]
    n_without = 0
    without_ok = True
    for path, model in cases:
        args = model + base[4:] + ["--seed", "7"]
        seq = json.loads(run(path, args + ["-B", str(B), "--stop-early"]))
        done = seq["settings"]["permutations"]
        plain = json.loads(run(path, args + ["-B", str(done)]))
        pp = {(r, t["term"]): t for r, t in terms(plain)}
        for r, t in terms(seq):
            sv, sp = t.get("sensitivity") or {}, pp[(r, t["term"])].get("sensitivity") or {}
            if sv.get("p_perm_without") is None and sp.get("p_perm_without") is None:
                continue
            n_without += 1
            if sv.get("p_perm_without") != sp.get("p_perm_without"):
                without_ok = False
                report(False, "%s %s %s: p_perm_without %s under --stop-early (%d "
                       "rearrangements made), %s in a plain run with -B %d"
                       % (os.path.basename(path), r, t["term"], sv.get("p_perm_without"),
                          done, sp.get("p_perm_without"), done))
    report(without_ok and n_without > 0,
           "p_perm_without under --stop-early equals a plain run's at -B (rearrangements "
           "made) for %d terms re-tested without their deciding rows (same rearrangements)"
           % n_without)
    # threads
    path = os.path.join(tmp, "d0.csv")
    outs = []
    for th in ("1", "2", "3"):
        args = base[:-1] + [th]
        outs.append(run(path, args + ["-B", str(B), "--seed", "100", "--stop-early"]))
    report(outs[0] == outs[1] == outs[2],
           "--stop-early JSON bit-identical with 1, 2 and 3 threads (DESIGN.md)")
    text1 = run(path, ["-y", "y0,y1", "-f", "A,B,C", "--bootstrap", "0", "--stop-early",
                       "--compare", "none", "--quiet", "--threads", "1"])
    text2 = run(path, ["-y", "y0,y1", "-f", "A,B,C", "--bootstrap", "0", "--stop-early",
                       "--compare", "none", "--quiet", "--threads", "2"])
    report(text1 == text2 and "stopped early" in text1 and "sequential stopping" in text1,
           "text report: identical over threads, says which terms stopped early")
    # shards
    out = subprocess.run([BIN, "check", path, "-y", "y0", "-f", "A,B,C", "--stop-early",
                          "--shard", "1/2", "-o", os.path.join(tmp, "part.json")],
                         capture_output=True, text=True)
    report(out.returncode == 2 and "--stop-early" in out.stderr and "--shard" in out.stderr,
           "--stop-early with --shard is refused (exit %d): %s" % (out.returncode,
                                                                  out.stderr.strip()[:120]))
    finish()


if __name__ == "__main__":
    main()
