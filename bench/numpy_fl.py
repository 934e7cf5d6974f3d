#!/usr/bin/python3
"""Baseline: Freedman–Lane (Freedman & Lane 1983) permutation p-values for every term of
the full factorial model, Type III sums of squares, sum-to-zero coding, written as a
competent analyst would in vectorised numpy.

Per term: reduced model R = all other terms. Precomputed once: the residuals e_R of R,
an orthonormal basis Q_t of the term's columns made orthogonal to R, and the full
model's basis Q_full (numpy QR of the n × p designs). Rearrangements come in batches:
E = e_R[perm] (n × batch), then
    F* = (‖Q_tᵀE‖² / df) / ((‖e_R‖² − ‖Q_fullᵀE‖²) / df_error)
column by column, all as matrix products. The same rearrangements serve every term.
Counts F* ≥ F_obs·(1 − 1e-10); p = (1 + count) / (1 + B) (Phipson & Smyth 2010).

usage: numpy_fl.py DATA.csv RESPONSE FACTOR,FACTOR,... B [SEED]
Prints one JSON object: {"tool", "n", "B", "batch", "seconds", "setup_seconds", "blas",
"terms": [{"term", "df", "f", "exceed", "p_perm"}]}; term labels join factor names with "×" in sturdy's order.
"""
import csv
import itertools
import json
import sys
import time

import numpy as np

TIE_RTOL = 1e-10          # the exceedance rule's relative tolerance, as in sturdy
BATCH_MAX = 256           # rearrangements per batch of matrix products
BATCH_ELEMS = 1 << 23     # cap on n × batch (64 MiB of doubles) for large n


def read(path, response, factors):
    with open(path, newline="") as f:
        rows = list(csv.DictReader(f))
    y = np.array([float(r[response]) for r in rows])
    codes = []
    for name in factors:
        col = [r[name] for r in rows]
        levels = sorted(set(col))
        index = {lv: k for k, lv in enumerate(levels)}
        codes.append((np.array([index[v] for v in col]), len(levels)))
    return y, codes


def sum_coded(code, nlev):
    """n × (nlev − 1) deviation coding: level k → e_k, last level → −1 everywhere."""
    X = np.zeros((len(code), nlev - 1))
    for k in range(nlev - 1):
        X[code == k, k] = 1.0
    X[code == nlev - 1, :] = -1.0
    return X


def terms_of(nfac):
    """Main effects, then 2-way interactions in lexicographic order, then 3-way, ..."""
    return [c for k in range(1, nfac + 1) for c in itertools.combinations(range(nfac), k)]


def term_columns(main, term):
    X = main[term[0]]
    for f in term[1:]:
        X = np.einsum("ij,ik->ijk", X, main[f]).reshape(len(X), -1)
    return X


def orth(X):
    return np.linalg.qr(X, mode="reduced")[0]


def blas_kernel():
    """Which BLAS and kernel numpy runs: threadpoolctl if installed, else ask a loaded
    OpenBLAS directly (openblas_get_corename), else "unknown"."""
    try:
        import threadpoolctl
        info = threadpoolctl.threadpool_info()
        return "; ".join("%s %s (%s, %s threads)" % (i.get("internal_api"), i.get("version"),
                                                    i.get("architecture"), i.get("num_threads"))
                         for i in info if i.get("user_api") == "blas")
    except ImportError:
        pass
    import ctypes
    with open("/proc/self/maps") as f:
        libs = sorted({ln.split()[-1] for ln in f if "openblas" in ln and ".so" in ln})
    for path in libs:
        try:
            lib = ctypes.CDLL(path)
            lib.openblas_get_corename.restype = ctypes.c_char_p
            lib.openblas_get_config.restype = ctypes.c_char_p
            return "%s, kernel %s, %d threads (threadpoolctl not installed; asked OpenBLAS)" % (
                lib.openblas_get_config().decode().split(" NO_")[0],
                lib.openblas_get_corename().decode(), lib.openblas_get_num_threads())
        except (OSError, AttributeError):
            continue
    return "unknown (threadpoolctl not installed, no OpenBLAS found)"


def main(argv):
    path, response, factors, B = argv[1], argv[2], argv[3].split(","), int(argv[4])
    seed = int(argv[5]) if len(argv) > 5 else 12345
    t0 = time.perf_counter()
    y, codes = read(path, response, factors)
    n = len(y)
    main_cols = [sum_coded(c, L) for c, L in codes]
    terms = terms_of(len(factors))
    blocks = [np.ones((n, 1))] + [term_columns(main_cols, t) for t in terms]
    X = np.hstack(blocks)
    Qf = orth(X)
    p = X.shape[1]
    dfe = n - p
    sse = y @ y - np.sum((Qf.T @ y) ** 2)
    setup = []
    for k, t in enumerate(terms):
        red = np.hstack([b for j, b in enumerate(blocks) if j != k + 1])
        Qr = orth(red)
        e = y - Qr @ (Qr.T @ y)
        Xt = blocks[k + 1]
        Qt = orth(Xt - Qr @ (Qr.T @ Xt))
        df = Qt.shape[1]
        f_obs = (np.sum((Qt.T @ y) ** 2) / df) / (sse / dfe)
        setup.append({"e": e, "Q": Qt, "df": df, "f": f_obs, "ee": e @ e, "count": 0})
    t_setup = time.perf_counter()
    rng = np.random.default_rng(seed)
    batch = int(max(1, min(BATCH_MAX, BATCH_ELEMS // n)))
    base = np.tile(np.arange(n), (batch, 1))
    done = 0
    while done < B:
        nb = min(batch, B - done)
        P = rng.permuted(base[:nb], axis=1).T           # n × nb source rows
        for s in setup:
            E = s["e"][P]
            num = np.sum((s["Q"].T @ E) ** 2, axis=0) / s["df"]
            den = (s["ee"] - np.sum((Qf.T @ E) ** 2, axis=0)) / dfe
            s["count"] += int(np.count_nonzero(num >= s["f"] * (1.0 - TIE_RTOL) * den))
        done += nb
    seconds = time.perf_counter() - t0
    out = {"tool": "numpy", "n": n, "B": B, "batch": batch, "seconds": seconds,
           "setup_seconds": t_setup - t0, "blas": blas_kernel(), "terms": [
        {"term": "×".join(factors[f] for f in t), "df": s["df"], "f": s["f"],
         "exceed": s["count"], "p_perm": (1 + s["count"]) / (1 + B)}
        for t, s in zip(terms, setup)]}
    print(json.dumps(out, ensure_ascii=False))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
