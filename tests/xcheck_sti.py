"""xcheck_sti.py — the studentized bootstrap test inversion (src/resampling/testinv.c,
through build/tests/probe_sti, and the whole program) and the residual kurtosis behind it
(src/resampling/bootstrap.c) against the independent numpy reference tests/ref_sti.py.

Checks and tolerances:
  * Endpoints on replicate rows (vᵀu*, ‖u*‖², SSE*, κ*) simulated from real residual
    bootstraps of cell-means designs (normal, exponential and t errors; df1 1-4,
    B 200-3000, tail splits 0.5/4.5, 2.5/2.5 and 1/4 %, F far below and far above its
    null distribution, rows left out as NaN/inf): the probe's (λ_lo, λ_hi) against
    ref_sti.sti_interval on the same rows, relative 1e-8 (absolute 1e-10 near 0); the
    number of usable rows exactly.
  * The program's own replicates (a whole-run part, --shard 1/1, of the demo): the first
    200 replicates rebuilt in numpy from the C draws (build/tests/probe_draws, the public
    PCG interface; PCG itself is checked against the C++ reference by xcheck_pcg.sh): the
    modified residuals e/√(1−h) centred over the pool (ref_testinv.world), e* drawn from
    them, r* = M e*, SSE* = ‖r*‖² and κ* = ref_sti.kurtosis(r*) with C1, C2 from the hat
    matrix: each row's SSE* and κ* relative 1e-9.
  * The program's JSON studentized_inversion of partial η², partial ω² and Cohen's f for
    every demo term: ref_sti.sti_interval on the part's rows with the data's κ̂, MSE,
    σ²_w and C2 from the reference's own fit, mapped with λ/(λ+N) and √(λ/N), relative
    1e-8 (floor 1e-10).
  * Bit-identical studentized intervals for threads 1 and 3 and for a 3-way sharded run
    merged (the run's contract).
Prints one line per check and "N passed, N failed"; exits 1 on any failure.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
from harness import (abort, close, finish, missing_library, need_binary,  # noqa: E402
                     need_problem_probe, probe_path, report)

try:
    import numpy as np
    import ref_sti
    import ref_testinv as ref
except ImportError as exc:  # a missing oracle is a failure, never a skip
    missing_library(exc, "python3-numpy python3-scipy")

RUN_STI = need_problem_probe("probe_sti")
DRAWS = probe_path("probe_draws")


def probe(problems):
    """problems: list of (params dict, rows B x 4); returns (lam_lo, lam_hi, used)."""
    parts = []
    for pr, rows in problems:
        parts.append(" ".join(repr(float(pr[k])) for k in
                              ("A", "mse", "kappa", "s2w", "df1", "df2", "c2", "alo", "ahi",
                               "ti_lo", "ti_hi")) + " %d" % len(rows))
        parts.extend(" ".join(repr(float(x)) for x in row) for row in rows)
    out = RUN_STI(parts, len(problems))
    return [(float(a), float(b), int(u)) for a, b, u in (line.split() for line in out)]


def reference(pr, rows):
    return ref_sti.sti_interval(rows, pr["A"], pr["mse"], pr["kappa"], pr["s2w"], pr["df1"],
                                pr["df2"], pr["c2"], pr["alo"], pr["ahi"])


# ---------------- (a) rows from simulated residual bootstraps ----------------
rng = np.random.default_rng(20261202)
cases = []
for i in range(36):
    df1 = int(rng.integers(1, 5))
    cells, per = (df1 + 1) * 2, int(rng.choice([2, 3, 5]))
    n = cells * per
    g = np.repeat(np.arange(cells), per)
    X = (g[:, None] == np.arange(cells)[None, :]).astype(float)
    Uf = ref.orth_basis(X)
    c1, c2 = ref_sti.design_constants(Uf)
    # the term: the first factor (2 levels) x ... simply contrasts among cells 0..df1
    Xt = np.zeros((n, df1))
    for j in range(df1):
        Xt[:, j] = (g == j + 1).astype(float) - (g == 0).astype(float)
    Q = ref.term_basis(np.ones((n, 1)), Xt)
    kind = ("normal", "exp", "t3")[i % 3]
    err = (rng.standard_normal(n) if kind == "normal" else
           rng.exponential(1.0, n) - 1 if kind == "exp" else rng.standard_t(3, n))
    effect = float(rng.choice([0.0, 0.5, 2.0, 6.0])) * (i % 11 != 4)
    y = Q @ (np.ones(df1) * effect) * math.sqrt(n) / 3 + err
    w = ref.world(y, X)
    df2 = w["df2"]
    v = Q.T @ y
    A = float(v @ v)
    B = int(rng.choice([200, 999, 2000, 3000]))
    idx = ref.draw_indices(rng, w["pool"], B, n)
    E = w["a"][idx]
    U = E @ Q
    R = E - (E @ Uf) @ Uf.T
    sse = np.einsum("ij,ij->i", R, R)
    kap = np.array([ref_sti.kurtosis(R[b], sse[b], df2, c1, c2) for b in range(B)])
    rows = np.column_stack([U @ v, np.einsum("ij,ij->i", U, U), sse, kap])
    if i % 7 == 2:             # rows left out
        rows[1, 0] = np.nan
        rows[3, 2] = np.inf
    if i % 13 == 5:            # F far below its null distribution
        A *= 1e-4
    alo, ahi = ((0.005, 0.045), (0.025, 0.025), (0.01, 0.04))[i % 3]
    pr = {"A": A, "mse": w["sse"] / df2, "s2w": w["sigma2_w"], "df1": df1, "df2": df2,
          "c2": c2, "alo": alo, "ahi": ahi, "ti_lo": math.nan, "ti_hi": math.nan,
          "kappa": ref_sti.kurtosis(w["resid"], w["sse"], df2, c1, c2)}
    if i % 2 == 1:             # grid hints as the program passes them (any values will do)
        pr["ti_lo"], pr["ti_hi"] = 0.5 * A / pr["s2w"], 2.0 * A / pr["s2w"]
    cases.append(("%s %d (df1 %d, df2 %d, B %d, tails %g/%g)" % (kind, i, df1, df2, B, alo,
                                                                 ahi), pr, rows))
got = probe([(pr, rows) for _, pr, rows in cases])
for (name, pr, rows), g in zip(cases, got):
    exp = reference(pr, rows)
    close("%s lam_lo" % name, g[0], exp[0], 1e-8, True, "ref_sti.sti_interval", floor=1e-10)
    close("%s lam_hi" % name, g[1], exp[1], 1e-8, True, "ref_sti.sti_interval", floor=1e-10)
    usable = int(np.sum(np.all(np.isfinite(rows), axis=1) & (rows[:, 2] > 0)))
    report(g[2] == usable, "%s: %d usable rows (expected %d)" % (name, g[2], usable))

# ---------------- (b) the program's own replicates of the demo ----------------
binary = need_binary()
B_DEMO, CONF, SEED = 2000, 0.95, 4242
common = ["demo", "-B", "0", "--bootstrap", str(B_DEMO), "--conf", str(CONF), "--seed",
          str(SEED), "--format", "json"]


def run(args):
    proc = subprocess.run([binary] + common + args, capture_output=True, text=True,
                          timeout=600)
    if proc.returncode != 0:
        abort("sturdy %s failed: %s" % (" ".join(args), proc.stderr.strip()))
    return proc.stdout


pj = json.loads(run(["--shard", "1/1", "--threads", "2"]))
wtext = run(["--threads", "1"])
wj = json.loads(wtext)
presp, wresp = pj["responses"][0], wj["responses"][0]
N_ROWS = pj["input"]["rows_used"]

y, X, world = ref.demo_fit(os.path.join(HERE, "..", "examples", "demo.csv"))
report(len(y) == N_ROWS, "demo rows used: %d (reference %d)" % (N_ROWS, len(y)))
df2 = world["df2"]
c1, c2 = ref_sti.design_constants(world["Uf"])
kappa_obs = ref_sti.kurtosis(world["resid"], world["sse"], df2, c1, c2)
M = np.eye(len(y)) - world["Uf"] @ world["Uf"].T

NCHECK = 200
pool = world["pool"]
proc = subprocess.run([DRAWS, str(SEED), str(pool.size), str(len(y)), "0", str(NCHECK)],
                      capture_output=True, text=True, timeout=600)
if proc.returncode != 0:
    abort("probe_draws failed: %s" % proc.stderr.strip())
pos = np.array([[int(x) for x in line.split()] for line in proc.stdout.splitlines()])
E = world["a"][pool[pos]]
R = E @ M.T
sse_ref = np.einsum("ij,ij->i", R, R)
kap_ref = np.array([ref_sti.kurtosis(R[b], sse_ref[b], df2, c1, c2) for b in range(NCHECK)])
for t in presp["terms"]:
    rows = ref.json_rows(t["raw"]["boot"])
    report(rows.shape == (B_DEMO, 9), "demo %s: %d replicate rows of 9 values [contract]"
           % (t["term"], rows.shape[0]))
    dev_s = float(np.max(np.abs(rows[:NCHECK, 7] - sse_ref) / sse_ref))
    dev_k = float(np.max(np.abs(rows[:NCHECK, 8] - kap_ref) / np.maximum(np.abs(kap_ref), 1)))
    report(dev_s <= 1e-9, "demo %s: SSE* of replicates 0-%d rebuilt from the draws, max rel "
           "deviation %.2g <= 1e-9 [ref_testinv.world + probe_draws]"
           % (t["term"], NCHECK - 1, dev_s))
    report(dev_k <= 1e-9, "demo %s: kappa* of replicates 0-%d rebuilt from the draws, max "
           "deviation %.2g <= 1e-9 [ref_sti.kurtosis + probe_draws]"
           % (t["term"], NCHECK - 1, dev_k))

alo, ahi = 0.1 * (1 - CONF), 0.9 * (1 - CONF)
for pt, wt in zip(presp["terms"], wresp["terms"]):
    rows = ref.json_rows(pt["raw"]["boot"])
    pr = {"A": pt["ss"], "mse": world["sse"] / df2, "kappa": kappa_obs,
          "s2w": world["sigma2_w"], "df1": pt["df"], "df2": df2, "c2": c2, "alo": alo,
          "ahi": ahi}
    lam = reference(pr, rows[:, 5:9])
    pe = [x / (x + N_ROWS) for x in lam]
    fe = [math.sqrt(x / N_ROWS) for x in lam]
    for key, want in (("partial_eta2", pe), ("partial_omega2", pe), ("cohens_f", fe)):
        got_ci = wt["ci"][key].get("studentized_inversion")
        if got_ci is None or None in got_ci:
            report(False, "demo %s %s: no studentized_inversion in the JSON" % (pt["term"], key))
            continue
        for j in range(2):
            close("demo %s %s studentized_inversion[%d]" % (pt["term"], key, j), got_ci[j],
                  want[j], 1e-8, True, "ref_sti on the part's rows, kappa, sigma2_w from the "
                  "reference's fit", floor=1e-10)
    rec = wt["ci"]["partial_eta2"]["recommended"]
    report(rec["method"] == "studentized-inversion",
           "demo %s: the recommended interval of partial eta^2 is the studentized inversion "
           "(df 57, B 2000, residual scheme) [rule, README]: %s" % (pt["term"], rec["method"]))

# ---------------- (c) threads and shards give the same bits ----------------
t3 = json.loads(run(["--threads", "3"]))
work = tempfile.mkdtemp(prefix="xcheck_sti_")
parts = []
for k in (1, 2, 3):
    path = os.path.join(work, "part%d.json" % k)
    with open(path, "w") as fh:
        fh.write(run(["--shard", "%d/3" % k]))
    parts.append(path)
merged = subprocess.run([binary, "merge", "--format", "json"] + parts, capture_output=True,
                        text=True, timeout=600)
if merged.returncode != 0:
    abort("sturdy merge failed: %s" % merged.stderr.strip())
mj = json.loads(merged.stdout)


def sti_all(doc):
    return [[t["ci"][k].get("studentized_inversion") for k in
             ("partial_eta2", "partial_omega2", "cohens_f")] + [t["ci"]["partial_eta2"]
                                                                  ["recommended"]]
            for t in doc["responses"][0]["terms"]]


report(sti_all(t3) == sti_all(wj), "studentized intervals identical for threads 3 and 1")
report(sti_all(mj) == sti_all(wj), "studentized intervals identical for 3 shards merged and "
       "one run")
finish()
