# tail_threshold.py — how far p_tail (--tail-fit) lands from the true p for small B, by
# where the tail's threshold may lie: the first N_exc = min(250, B − 1) as sturdy does
# ("cur"), or at most B/4 or B/10 of the F* (threshold at or above the 75th or 90th
# percentile). Reports per case the share of runs with p_tail more than 10 times too
# small (anti-conservative) or too large, and the median log10(p_tail / p).
# F* are iid draws from F(d1, d2), standing in for a permutation distribution (heavy:
# F(1, 8); middling: F(2, 40); light: F(6, 200)); the true p is scipy's F tail at the
# observed F. p_tail comes from sturdy's own code (tests/probe_tail, "estimate", given the
# largest N values). Run alone: `make test-bins && /usr/bin/python3 bench/tail_threshold.py
# [REPS]` (REPS = 100: about 30 minutes of one core). Results: bench/README.md, "Where the
# tail's threshold lies".
import os, sys, subprocess, numpy as np
from scipy import stats
probe = os.environ.get("PROBE_TAIL", "build/tests/probe_tail")
def est(top, f, B, ex):
    inp = "\n".join("%.17g" % v for v in top)
    r = subprocess.run([probe, "estimate", "%.17g" % f, str(B), str(ex)], input=inp,
                       capture_output=True, text=True)
    w = r.stdout.split()
    return w[0], float(w[1])
reps = int(sys.argv[1]) if len(sys.argv) > 1 else 100
rng = np.random.default_rng(20261203)
for d1, d2 in ((1, 8), (2, 40), (6, 200)):
    for B in (300, 500, 999, 1999):
        for ptrue in (1e-3, 1e-4, 1e-5):
            f = stats.f.isf(ptrue, d1, d2)
            res = {"cur": [], "b4": [], "b10": []}
            for r in range(reps):
                fs = np.sort(rng.f(d1, d2, size=B))[::-1]
                ex = int((fs >= f).sum())
                for name, keep in (("cur", 251), ("b4", B // 4 + 1), ("b10", B // 10 + 1)):
                    res[name].append(est(fs[:keep], f, B, ex))
            for name, v in res.items():
                fitted = [p for s, p in v if s == "fitted"]
                lr = np.log10(np.array(fitted) / ptrue) if fitted else np.array([])
                print(f"F({d1},{d2}) B={B} p={ptrue:g} {name}: fitted {len(fitted)}/{reps} "
                      f"P(<p/10) {np.sum(lr < -1)/reps:.3f} P(>10p) {np.sum(lr > 1)/reps:.3f} "
                      f"median {np.median(lr) if len(lr) else float('nan'):+.2f}", flush=True)
