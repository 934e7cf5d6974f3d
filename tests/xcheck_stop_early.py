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
  * a term stopped at its h-th exceedance: L is that exceedance's exact index, a plain
    run with -B L counts exactly h exceedances for it and -B L−1 counts h − 1
    (reference: the rearrangement b depends on (seed, b) alone, so -B L repeats the
    first L); its p is h/L;
  * a term stopped by the decision rule (stop_rule "decision"): L is a checkpoint before
    B, a plain run with -B L counts its e exceedances, p = (1 + e)/(1 + L) ≤ alpha, and
    the rule's condition holds there and not at the checkpoint before (a plain run at
    that -B): the one-sided Clopper–Pearson bound, scipy.stats.beta.ppf(1 − ε/K, e + 1,
    L − e) with ε = 1e-3 and K the checkpoints before B, is below alpha;
  * with --tail-fit the decision rule is off (on retest_stops.csv a term it stops without
    the option runs on with it);
  * the decision rule's risk: for a term whose true p is alpha, the probability that the
    rule stops it at some checkpoint, computed exactly by propagating the binomial law of
    the count between checkpoints (scipy.stats.binom), is at most ε = 1e-3 for
    B = 999, 4999 and 9999;
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
    from scipy.stats import beta as beta_dist, binom
except ImportError as exc:
    missing_library(exc, "python3-numpy python3-scipy")

BIN = need_binary()
H = 20
ALPHA = 0.05
B = 4999
NRESP = 12
RISK = 1e-3            # STURDY_STOP_EARLY_RISK


def checkpoints(b_total):
    """The run's checkpoints (sturdy_seq_next_checkpoint): 128, 256, ..., then steps of
    the largest power of two <= c/8, ending at B."""
    cps, c = [], 0
    while c < b_total:
        step = 128
        while c >= 1024 and step * 2 <= c // 8:
            step *= 2
        c = min((c // step + 1) * step, b_total)
        cps.append(c)
    return cps


def rule_fires(e, n, b_total, alpha=ALPHA):
    """The decision rule at a checkpoint n < B: the one-sided Clopper-Pearson upper bound
    of the exceedance probability at level 1 - RISK/K is below alpha."""
    k = len(checkpoints(b_total)) - 1
    if e >= n:
        return False
    return beta_dist.ppf(1.0 - RISK / k, e + 1, n - e) < alpha


def rule_risk(b_total, p=ALPHA):
    """P(the decision rule stops a term whose true exceedance probability is p), exactly:
    the count's law between checkpoints, less the paths already stopped."""
    cps = [c for c in checkpoints(b_total) if c < b_total]
    dist = np.array([1.0])          # P(count = x, not stopped), x = 0..
    prev, fired = 0, 0.0
    for c in cps:
        step = binom.pmf(np.arange(c - prev + 1), c - prev, p)
        dist = np.convolve(dist, step)
        # the largest count at which the rule fires at c
        x = 0
        while x < len(dist) and rule_fires(x, c, b_total):
            x += 1
        fired += dist[:x].sum()
        dist[:x] = 0.0
        prev = c
    return fired


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
    n_terms = n_stopped = n_decided = n_agree = n_band = 0
    decision_ok = True
    decision_checks = []
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
            if t["stopped_early"] and t["stop_rule"] == "decision":
                n_decided += 1
                L, e = t["perm_used"], t["exceed"]
                if not (abs(t["p_perm"] - (1 + e) / (1 + L)) < 1e-15 and t["p_perm"] <= ALPHA
                        and L in checkpoints(B) and L < B and L <= done):
                    decision_ok = False
                if len(decision_checks) < 6:
                    decision_checks.append((path, seed, r, t["term"], L, e))
            elif t["stopped_early"]:
                n_stopped += 1
                L = t["perm_used"]
                if not (abs(t["p_perm"] - H / L) < 1e-15 and t["exceed"] == H and L <= done
                        and t["stop_rule"] == "exceedances"):
                    stop_ok = False
                if len(exact_checks) < 6 and ds < 3:
                    exact_checks.append((path, seed, r, t["term"], L))
            else:
                if (t["p_perm"] != f["p_perm"] or t["perm_used"] != B or done != B or
                        t["stop_rule"] != "none"):
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
        if done not in checkpoints(B):
            stop_ok = False
    report(not bad and n_terms > 0,
           "decisions at alpha 0.05 equal the full-B run's for %d of %d terms; %d differ "
           "within their Monte Carlo error band, %d outside it%s (binomial law of the "
           "exceedance count)" % (n_agree, n_terms, n_band, len(bad),
                                  (": " + "; ".join(bad)) if bad else ""))
    report(n_stopped + n_decided > n_terms // 2 and n_decided > 0,
           "most terms stop early: %d of %d at their %dth exceedance, %d by the decision "
           "rule (sanity)" % (n_stopped, n_terms, H, n_decided))
    # at B = 4999 nearly every term stops by one rule or the other; at B = 400 the terms
    # with p between about 0.02 and 0.05 see fewer than h and are not yet decided
    n_unstopped = 0
    for ds in range(6):
        path = os.path.join(tmp, "d%d.csv" % ds)
        args = base + ["-B", "400", "--seed", str(100 + ds)]
        full = json.loads(run(path, args))
        seq = json.loads(run(path, args + ["--stop-early"]))
        fp = {(r, t["term"]): t for r, t in terms(full)}
        for r, t in terms(seq):
            if not t["stopped_early"]:
                n_unstopped += 1
                if (t["p_perm"] != fp[(r, t["term"])]["p_perm"] or t["perm_used"] != 400 or
                        seq["settings"]["permutations"] != 400 or t["stop_rule"] != "none"):
                    unstopped_equal = False
    report(unstopped_equal and n_unstopped > 0,
           "terms that never saw %d exceedances and were not decided keep the full-B p "
           "exactly (same rearrangements; %d terms at B = 400)" % (H, n_unstopped))
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
    # the decision rule: where it stopped, what a plain run of the first L counts, and
    # that its condition (scipy) holds at L and not at the checkpoint before
    report(decision_ok, "terms stopped by the decision rule: p = (1 + e)/(1 + L) <= %g, L a "
           "checkpoint before B" % ALPHA)
    rule_ok = bool(decision_checks)
    for path, seed, r, term, L, e in decision_checks:
        cps = checkpoints(B)
        before = cps[cps.index(L) - 1] if cps.index(L) > 0 else 0
        for b, want_fire in ((L, True), (before, False)):
            if b == 0:
                continue
            doc = json.loads(run(path, base + ["-B", str(b), "--seed", seed]))
            got = [t["exceed"] for rr, t in terms(doc) if rr == r and t["term"] == term]
            if b == L and got != [e]:
                rule_ok = False
                report(False, "%s %s: -B %d counts %s, the stopped run %d" % (r, term, b, got, e))
            # at the checkpoint before, the h-rule had not fired either (fewer than H)
            if not got or rule_fires(got[0], b, B) != want_fire or (b == before and got[0] >= H):
                rule_ok = False
                report(False, "%s %s: at %d rearrangements %s exceedances, the rule %s"
                       % (r, term, b, got, "should fire" if want_fire else "fired too early"))
    report(rule_ok, "decision rule: the count of a plain run of the first L rearrangements "
           "equals the stopped term's, and the Clopper-Pearson condition (scipy.stats.beta) "
           "holds at L and not at the checkpoint before (%d terms)" % len(decision_checks))
    # with --tail-fit the decision rule is off (the tail's p below 1/B needs the run)
    rs = os.path.join(data, "retest_stops.csv")
    rules = []
    for extra in ([], ["--tail-fit"]):
        doc = json.loads(run(rs, ["-y", "yield", "-f", "dose,site"] + base[4:] +
                             ["-B", "9999", "--stop-early"] + extra))
        rules.append(sorted(t["stop_rule"] for r, t in terms(doc)))
    report("decision" in rules[0] and "decision" not in rules[1],
           "with --tail-fit no term stops by the decision rule (without it: %s; with it: %s)"
           % (rules[0], rules[1]))
    risks = {b: rule_risk(b) for b in (999, 4999, 9999)}
    report(all(v <= RISK for v in risks.values()) and all(v > 0 for v in risks.values()),
           "decision rule's risk for a term whose true p is %g, exact (binomial law between "
           "checkpoints): %s, each at most %g" % (ALPHA, ", ".join(
               "B = %d: %.2e" % kv for kv in sorted(risks.items())), RISK))
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
