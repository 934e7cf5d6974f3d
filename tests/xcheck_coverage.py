"""xcheck_coverage.py — coverage of sturdy's 95% intervals for partial eta squared, a
property test on simulated 3×3×2 designs with a known population effect.

Model: y = μ + α_a + β_b + γ_c + σ·ε, balanced, n rows per cell (5 and 10), ε standard
normal or a centred exponential (Exp(1) − 1, same variance 1, skewness 2). Factor A has
α = c·(−1, 0, 1); B and C carry effects too (they do not change A's Type III SS in a
balanced design).

Population partial η² of A (the target), with the cells weighted equally:
    σ²_A = (1/#cells) Σ_cells α_a² = (1/3) Σ_a α_a²,   pη²_A = σ²_A / (σ²_A + σ²),
set to 0.15 by the choice of c (Olejnik & Algina 2003 define the population value so).
The noncentral-F interval (Steiger 2004) is an interval for the noncentrality
λ = N σ²_A/σ², mapped to λ/(λ + N) = pη²_A, so its coverage of pη²_A is exactly 95% under
normal errors; that is checked too (column "ncf-λ", the same target through λ).

Runs `sturdy check --format json -B 0 --bootstrap 1000` (residual scheme, the default;
at 5 rows per cell also the cells scheme, on the first 200 datasets) on each dataset,
two processes at a time (a few minutes in all; the quick tier about half a minute).

Assertions (the thresholds come from the issue, measured with an independent
implementation at 5 rows per cell, normal errors): residual BCa coverage ≥ 0.87 and
noncentral-F coverage ≥ 0.92; and ncf-λ coverage within 3.5 binomial standard errors
of the exact 0.95. The asserted configuration uses more datasets (binomial SE about
0.01) so that a correct program does not fail by chance. STURDY_QUICK=1 runs a short
tier with the bounds lowered by two binomial standard errors at its size.
Other configurations are printed as information (lines starting "info"), with a
summary table at the end. Prints "N passed, N failed"; exits 1 on any failure.
"""
import atexit
import concurrent.futures
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import QUICK, abort, finish, need_binary, report  # noqa: E402


try:
    import numpy as np
except ImportError as exc:  # a missing oracle is a failure, never a skip
    abort("numpy missing: %s (install python3-numpy)" % exc)

BIN = need_binary()

NBOOT = 1000
CONF = 0.95
POP_PETA2 = 0.15          # population partial η² of A (definition in the docstring)
SIGMA = 1.0
LEVELS = (3, 3, 2)
# datasets: the asserted configuration, the others
N_ASSERTED, N_OTHER = (100, 60) if QUICK else (1000, 200)
BCA_MIN, NCF_MIN = 0.87, 0.92          # from the issue (full tier)
LAMBDA_SE_BOUND = 3.5                   # ncf-λ: allowed distance from 0.95 in binomial SEs
WORK = tempfile.mkdtemp(prefix="xcheck_cov_")
atexit.register(shutil.rmtree, WORK, ignore_errors=True)

# A's effect: σ²_A = (2/3)c² with α = c(−1, 0, 1)
SIGMA2_A = POP_PETA2 / (1 - POP_PETA2) * SIGMA ** 2
C_A = math.sqrt(1.5 * SIGMA2_A)
ALPHA = np.array([-C_A, 0.0, C_A])
BETA = np.array([0.4, -0.4, 0.0])
GAMMA = np.array([0.3, -0.3])


def make_dataset(rows, errors, idx, cfg_id):
    rng = np.random.default_rng([cfg_id, idx, 7919])
    grid = [(i, j, k) for i in range(LEVELS[0]) for j in range(LEVELS[1])
            for k in range(LEVELS[2]) for _ in range(rows)]
    a, b, c = (np.array(x) for x in zip(*grid))
    n = len(a)
    eps = rng.standard_normal(n) if errors == "normal" else rng.exponential(1.0, n) - 1.0
    y = 20.0 + ALPHA[a] + BETA[b] + GAMMA[c] + SIGMA * eps
    path = os.path.join(WORK, "d_%d_%d.csv" % (cfg_id, idx))
    with open(path, "w") as fh:
        fh.write("A,B,C,y\n")
        for i in range(n):
            fh.write("a%d,b%d,c%d,%.17g\n" % (a[i] + 1, b[i] + 1, c[i] + 1, y[i]))
    return path, n


def run_one(path, scheme, seed):
    cmd = [BIN, "check", path, "-y", "y", "-f", "A,B,C", "-B", "0",
           "--bootstrap", str(NBOOT), "--bootstrap-scheme", scheme, "--seed", str(seed),
           "--format", "json", "--threads", "1"]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    if proc.returncode != 0:
        return None, "exit %d: %s (%s)" % (proc.returncode, proc.stderr.strip()[:200],
                                           " ".join(cmd))
    try:
        doc = json.loads(proc.stdout)
        term = [t for t in doc["responses"][0]["terms"] if t["term"] == "A"][0]
        ci = term["ci"]["partial_eta2"]
        return {"pct": ci["percentile"], "bca": ci["bca"], "ncf": ci["noncentral_f"],
                "est": term["partial_eta2"], "df": term["df"],
                "dfe": doc["responses"][0]["error"]["df"]}, None
    except (ValueError, KeyError, IndexError, TypeError) as exc:
        return None, "unreadable JSON (%s): %s" % (exc, " ".join(cmd))


def covers(iv, target):
    """1 if the interval holds the target, 0 if not; None if the interval is absent."""
    if iv is None or iv[0] is None or iv[1] is None:
        return None
    return 1 if iv[0] <= target <= iv[1] else 0


def run_config(cfg_id, rows, errors, ndata, with_cells, pool):
    jobs, cjobs = [], []
    for idx in range(ndata):
        path, n = make_dataset(rows, errors, idx, cfg_id)
        jobs.append(pool.submit(run_one, path, "residual", 1 + idx))
        if with_cells and idx < N_OTHER:  # informational only: the smaller count will do
            cjobs.append(pool.submit(run_one, path, "cells", 1 + idx))
    outs = [j.result() for j in jobs + cjobs]
    errs = [e for _, e in outs if e]
    if errs:
        abort("sturdy failed on %d of %d runs (%s errors), first: %s"
              % (len(errs), len(outs), errors, errs[0]))
    res = [o for o, _ in outs]
    resid, cells = res[:len(jobs)], res[len(jobs):]
    n = rows * LEVELS[0] * LEVELS[1] * LEVELS[2]
    # the noncentral-F interval's own target: λ/(λ + N), λ = N σ²_A/σ² (= pη²_A)
    lam = n * SIGMA2_A / SIGMA ** 2
    tgt_lam = lam / (lam + n)
    cov = {}
    kinds = [("resid pct", resid, "pct", POP_PETA2), ("resid BCa", resid, "bca", POP_PETA2),
             ("ncf", resid, "ncf", POP_PETA2), ("ncf-λ", resid, "ncf", tgt_lam)]
    if with_cells:
        kinds.append(("cells pct", cells, "pct", POP_PETA2))
    for name, runs, key, target in kinds:
        hits = [covers(r[key], target) for r in runs]
        absent = sum(h is None for h in hits)
        cov[name] = (sum(h for h in hits if h), len(hits), absent)
    mean_est = float(np.mean([r["est"] for r in resid]))
    return cov, mean_est, tgt_lam


def binom_se(p, n):
    return math.sqrt(p * (1 - p) / n)


def main():
    configs = [(5, "normal", N_ASSERTED, True), (5, "skewed", N_OTHER, True),
               (10, "normal", N_OTHER, False), (10, "skewed", N_OTHER, False)]
    table = []
    with concurrent.futures.ThreadPoolExecutor(max_workers=2) as pool:
        for cfg_id, (rows, errors, ndata, with_cells) in enumerate(configs):
            cov, mean_est, tgt_lam = run_config(cfg_id, rows, errors, ndata, with_cells, pool)
            table.append((rows, errors, ndata, cov))
            for name, (hit, tot, absent) in cov.items():
                print("info %d rows/cell, %s errors: %s coverage %.3f (%d/%d datasets, "
                      "%d absent) target %.4f" % (rows, errors, name, hit / tot, hit, tot,
                                                  absent, tgt_lam if name == "ncf-λ"
                                                  else POP_PETA2))
            print("info %d rows/cell, %s errors: mean partial_eta2 estimate %.4f (population "
                  "%.4f)" % (rows, errors, mean_est, POP_PETA2))
            if rows == 5 and errors == "normal":
                shift = 0.0
                if QUICK:
                    shift = 2 * binom_se(0.9, ndata)
                hit, tot, _ = cov["resid BCa"]
                bound = BCA_MIN - shift
                report(hit / tot >= bound,
                       "residual BCa coverage, 5 rows/cell, normal errors: observed %.3f "
                       "expected >= %.3f (%d datasets, binomial SE %.3f) [issue's independent "
                       "measurement; Efron 1987 BCa]" % (hit / tot, bound, tot,
                                                         binom_se(hit / tot, tot)))
                hit, tot, _ = cov["ncf"]
                bound = NCF_MIN - (2 * binom_se(0.94, ndata) if QUICK else 0.0)
                report(hit / tot >= bound,
                       "noncentral-F coverage of pη²=%.2f, 5 rows/cell, normal errors: observed "
                       "%.3f expected >= %.3f (%d datasets, binomial SE %.3f) [issue's "
                       "independent measurement; Steiger 2004]"
                       % (POP_PETA2, hit / tot, bound, tot, binom_se(hit / tot, tot)))
                hit, tot, _ = cov["ncf-λ"]
                tol = LAMBDA_SE_BOUND * binom_se(CONF, tot)
                report(abs(hit / tot - CONF) <= tol,
                       "noncentral-F coverage of its own target λ/(λ+N)=%.4f, 5 rows/"
                       "cell, normal errors: observed %.3f expected %.3f tol %.3f (3.5 binomial "
                       "SE) [exact under normal errors: noncentral F distribution, Steiger 2004]"
                       % (tgt_lam, hit / tot, CONF, tol))
    names = ["resid pct", "resid BCa", "ncf", "ncf-λ", "cells pct"]
    print("coverage of nominal 95%% intervals for partial η² of A (3×3×2, population "
          "pη² = %.2f, B = %d bootstrap replicates)" % (POP_PETA2, NBOOT))
    print("%-10s %-8s %8s" % ("rows/cell", "errors", "datasets")
          + "".join(" %10s" % k for k in names) + "  (cells pct: first %d datasets)" % N_OTHER)
    for rows, errors, ndata, cov in table:
        cells = []
        for k in names:
            if k in cov:
                hit, tot, _ = cov[k]
                cells.append(" %10.3f" % (hit / tot))
            else:
                cells.append(" %10s" % "-")
        print("%-10d %-8s %8d" % (rows, errors, ndata) + "".join(cells))
    finish()


main()
