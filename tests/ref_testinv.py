"""ref_testinv.py — independent numpy reference for the bootstrap test-inversion interval
of partial eta squared (issue 10), its calibration by a second bootstrap level, and the
intervals it is compared with (noncentral F, residual-bootstrap percentile and BCa).

Nothing here shares code with the C library; it is written from the formulas below so
that the C implementation can be checked against it, replicate by replicate, by feeding
the C code's residual draws (row indices, one row of the index array per replicate).

Notation (one response, one term)
---------------------------------
y        n responses
X_full   n x p full model matrix (any parametrisation; rank r, df2 = n - r)
Q        n x df1 orthonormal basis of the term, adjusted as its SS type says:
         Q spans (I - P_red) col(X_aug), X_red / X_aug the reduced / augmented models
         (Type III: X_aug = X_full, X_red = X_full without the term's columns; Type I:
         the terms before it / with it; Type II: the terms not containing it / with it).
         Q lies in col(X_full), so Q'y = Q'(fitted values).
v        = Q'y,  SS = |v|^2,  SSE = |(I - H)y|^2,  F_obs = (SS/df1) / (SSE/df2).

Residual bootstrap (Davison & Hinkley 1997, sec. 6.2.3; mirrors src/resampling/bootstrap.c)
    e    residuals of the FULL model, h leverages of the full model;
    pool rows with h < 1 - 1e-10 (a row alone in its cell has e = 0 and is left out);
    a_i  = e_i / sqrt(1 - h_i) for i in pool, then centred over the pool;
    e*   = a[idx], idx a row of n indices drawn with replacement from the pool.
    sigma2_w = mean over the pool of a_i^2 (after centring): the error variance of every
         bootstrap world (in a balanced design it equals MSE = SSE/df2 exactly).
    u*   = Q'e*,   SSE* = |(I - H)e*|^2.

Test inversion (the noncentral-F interval of Steiger 2004 with the normal-theory
distribution of F replaced by its residual-bootstrap distribution)
    World s (s >= 0): fitted values with the term's component Q v scaled by s, errors e*:
        y*(s) = f - (1 - s) Q v + e*,   so Q'y*(s) = s v + u*, SSE* unchanged, and
        F*(s) = (|s v + u*|^2 / df1) / (SSE* / df2).
    Its noncentrality (the parameter of the noncentral-F interval):
        lambda(s) = s^2 |v|^2 / sigma2_w,
    and partial eta^2 = lambda / (lambda + n), as src/classical/anova.c maps the
    noncentral-F interval (lambda = n f^2, Cohen's f = sqrt(lambda/n); the population
    partial omega^2 of Olejnik & Algina 2003 is the same population quantity as partial
    eta^2, sigma2_t / (sigma2_t + sigma2), so its interval is the same one).
    Per replicate b, F*_b(s) >= F_obs  <=>  q_b(s) = A s^2 + 2 beta_b s + gamma_b >= 0 with
        A = |v|^2, beta_b = v'u*_b, gamma_b = |u*_b|^2 - (SS/SSE) SSE*_b,
    an upward parabola: the replicate falls short of F_obs exactly on the open interval
    between its real roots (never, if the discriminant is <= 0). Hence the count
        N(s) = #{b : F*_b(s) >= F_obs},   G(s) = N(s)/B
    is known exactly for every s from one set of replicates: a step function whose steps
    lie at the roots. On [0, inf) it is cut into segments [t_i, t_{i+1}) of constant
    value V_i (t_0 = 0; the last segment has V = B); at a root itself N takes the larger
    of the two neighbouring values (the shortfall intervals are open).

    Endpoints (tail levels alpha_lo, alpha_hi; alpha_lo = alpha_hi = (1 - conf)/2 plain):
        s_lo = inf{s >= 0 : N(s) > alpha_lo B}      = t_i of the first segment with
               V_i > alpha_lo B (0 when already V_0 > alpha_lo B);
        s_hi = sup{s >= 0 : N(s) < (1 - alpha_hi) B} = t_{i+1} of the last segment with
               V_i < (1 - alpha_hi) B; 0 if there is none (then s_lo = 0 too: the
               interval [0, 0], Steiger's convention when F_obs is below the lower
               alpha/2 point of the central F).
    No interpolation: the endpoints are roots of replicate parabolas (for monotone
    replicate curves, s_lo is the (floor(alpha_lo B) + 1)-th smallest crossing point, the
    inverse-ECDF quantile). Where N is not monotone the interval is the hull of the
    accepted set; s_lo <= s_hi always holds. Counts are compared as integers, so the
    rule is exact and reproducible.

Calibration by a second bootstrap level (Hall 1986; Beran 1987; Lee & Young 1995)
    Outer worlds are built from the bias-corrected effect
        s_bc = sqrt(max(0, 1 - df1 sigma2_w / |v|^2))   (E|v|^2 = |theta|^2 + df1 sigma^2),
        y_j = f - (1 - s_bc) Q v + a[outer_idx_j],   true lambda_w = s_bc^2 |v|^2 / sigma2_w.
    In outer world j the whole procedure is repeated (its own fit, modified residuals,
    sigma2_w,j, v_j; inner draws idx from the pool) and its truth in its own s-scale is
        s_j = sqrt(lambda_w sigma2_w,j) / |v_j|.
    The interval at tail levels (a_lo, a_hi) misses s_j
        below (s_lo > s_j)  <=>  M_j = max{V_i/B : t_i <= s_j}            <= a_lo,
        above (s_hi < s_j)  <=>  H_j = 1 - min{V_i/B : t_{i+1} > s_j}     <= a_hi
    (H_j = 1 when s_j = 0: an upper end cannot fall below 0). So one inner count
    function per outer world gives its miss for every level at once. The calibrated
    level of each tail is the largest level whose outer miss rate is <= alpha/2:
        a_lo' = (M_(k) + M_(k+1)) / 2,  k = floor(J alpha/2), M sorted, M_(0) = 0,
    (likewise a_hi' from H), clipped to [0, alpha] (at most twice the nominal tail:
    J = 200 outer worlds put only 5 of them in a 2.5% tail, and a level estimated from
    so few must not halve the interval). When lambda_w = 0 (F below about 1) no outer
    world can have its upper end below the truth (H = 1 for all), so the upper tail
    keeps the nominal alpha/2: calibrating it there would shrink the upper end to a 50%
    bound (measured: the estimate then fell outside in 60% of null datasets). The
    calibrated interval is the test inversion of the data at (a_lo', a_hi') with the
    first-level replicates.

Honest edges: s >= 0, so partial eta^2 lies in [0, 1) and Cohen's f >= 0; the lower end
is exactly 0 whenever the null world is not rejected (G(0) > alpha_lo); contains_estimate
reports whether the sample partial eta^2 SS/(SS+SSE) lies inside (the interval targets
lambda/(lambda+n); the sample value estimates about lambda/(lambda + df2), so near zero
effects it can lie outside, as for the noncentral-F interval).

References: Steiger (2004) Psychological Methods 9:164; Davison & Hinkley (1997)
Bootstrap Methods and their Application, sec. 6.2.3 and 3.9; Efron (1987) JASA 82:171
(BCa); Hall (1986) Ann. Statist. 14:1431; Beran (1987) Biometrika 74:457; Lee & Young
(1995) JRSS B 57:589; Olejnik & Algina (2003) Psychological Methods 8:434.
"""
import math

import numpy as np
from scipy import optimize, stats

LEVERAGE_ONE_TOL = 1e-10


# ----------------------------------------------------------------------------------------
# linear algebra pieces

def orth_basis(X, tol=1e-9):
    """Orthonormal basis (n x rank) of col(X) by SVD."""
    X = np.asarray(X, float)
    if X.shape[1] == 0:
        return np.zeros((X.shape[0], 0))
    U, sv, _ = np.linalg.svd(X, full_matrices=False)
    if sv.size == 0 or sv[0] == 0:
        return np.zeros((X.shape[0], 0))
    return U[:, sv > tol * sv[0]]


def term_basis(X_red, X_aug):
    """Q: orthonormal basis of (I - P_red) col(X_aug), the term adjusted for X_red."""
    Ured = orth_basis(X_red)
    Z = np.asarray(X_aug, float)
    Z = Z - Ured @ (Ured.T @ Z)
    return orth_basis(Z)


def world(y, X_full):
    """Full-model fit and the residual-bootstrap world (mirrors bootstrap.c's setup).

    Returns dict: Uf (n x r basis), fitted, resid, lev, pool (row indices with h < 1),
    a (modified residuals e/sqrt(1-h), centred over the pool, 0 outside it),
    sigma2_w (their mean square over the pool), sse, df2."""
    y = np.asarray(y, float)
    Uf = orth_basis(X_full)
    fitted = Uf @ (Uf.T @ y)
    resid = y - fitted
    lev = np.sum(Uf * Uf, axis=1)
    pool = np.flatnonzero(lev < 1 - LEVERAGE_ONE_TOL)
    if pool.size == 0:
        raise ValueError("no residual can be resampled: every row is alone in its cell")
    a = np.zeros_like(y)
    a[pool] = resid[pool] / np.sqrt(1 - lev[pool])
    a[pool] -= a[pool].mean()
    return {"Uf": Uf, "fitted": fitted, "resid": resid, "lev": lev, "pool": pool, "a": a,
            "sigma2_w": float(np.mean(a[pool] ** 2)), "sse": float(resid @ resid),
            "df2": y.size - Uf.shape[1], "n": y.size}


def draw_indices(rng, pool, B, n):
    """B x n row indices drawn with replacement from the pool (any source will do: the C
    code's draws can be passed in instead)."""
    pool = np.asarray(pool)
    return pool[rng.integers(0, pool.size, size=(B, n))]


def replicates(w, Q, idx):
    """u* (B x df1) and SSE* (B) of the residual draws idx (B x n row indices)."""
    E = w["a"][np.asarray(idx)]
    U = E @ Q
    P = E @ w["Uf"]
    sse = np.einsum("ij,ij->i", E, E) - np.einsum("ij,ij->i", P, P)
    return U, np.maximum(sse, 0.0)


# ----------------------------------------------------------------------------------------
# the count function N(s) and the inversion

def count_segments(v, U, sse_star, ratio):
    """Segments of N(s) = #{b : |s v + u_b|^2 >= ratio * SSE*_b} on s >= 0.

    ratio = SS/SSE of the data (= F_obs df1/df2). Returns (t, V): t[0] = 0 < t[1] <= ...
    are the segment starts, V[i] the count on [t[i], t[i+1]) (the last one to infinity)."""
    v = np.asarray(v, float)
    A = float(v @ v)
    B = U.shape[0]
    beta = U @ v
    gamma = np.einsum("ij,ij->i", U, U) - ratio * sse_star
    if A <= 0:  # no effect observed: F*(s) does not depend on s
        return np.array([0.0]), np.array([int(np.sum(gamma >= 0))])
    disc = beta * beta - A * gamma
    has = disc > 0
    sq = np.sqrt(np.where(has, disc, 0.0))
    r1 = np.where(has, (-beta - sq) / A, np.nan)
    r2 = np.where(has, (-beta + sq) / A, np.nan)
    short0 = has & (r1 <= 0) & (r2 > 0)          # short of F_obs just right of s = 0
    V0 = B - int(np.sum(short0))
    ev_loc = np.concatenate([r1[has & (r1 > 0)], r2[has & (r2 > 0)]])
    ev_d = np.concatenate([-np.ones(int(np.sum(has & (r1 > 0))), int),
                           np.ones(int(np.sum(has & (r2 > 0))), int)])
    order = np.argsort(ev_loc, kind="stable")
    ev_loc, ev_d = ev_loc[order], ev_d[order]
    # merge events at the same location so that no zero-width segment appears
    if ev_loc.size:
        uniq, start = np.unique(ev_loc, return_index=True)
        dsum = np.add.reduceat(ev_d, start)
    else:
        uniq, dsum = ev_loc, ev_d
    t = np.concatenate([[0.0], uniq])
    V = V0 + np.concatenate([[0], np.cumsum(dsum)])
    return t, V


def endpoints_from_segments(t, V, B, alpha_lo, alpha_hi):
    """(s_lo, s_hi) by the rule in the module docstring."""
    ok_lo = V > alpha_lo * B
    i = int(np.argmax(ok_lo)) if ok_lo.any() else len(V) - 1
    s_lo = float(t[i])
    ok_hi = np.flatnonzero(V < (1 - alpha_hi) * B)
    if ok_hi.size == 0:
        return 0.0, 0.0
    j = int(ok_hi[-1])
    s_hi = float(t[j + 1]) if j + 1 < len(t) else math.inf
    return min(s_lo, s_hi), s_hi


def miss_pvalues(t, V, B, s_true):
    """(M, H) of the calibration: lower end above s_true iff M <= level; upper end below
    s_true iff H <= level."""
    M = float(np.max(V[t <= s_true])) / B
    if s_true <= 0:
        return M, 1.0
    t_next = np.append(t[1:], math.inf)
    H = 1.0 - float(np.min(V[t_next > s_true])) / B
    return M, H


def lam_to_peta2(lam, n):
    return lam / (lam + n) if np.isfinite(lam) else 1.0


def _pack(s_lo, s_hi, A, sigma2_w, n, sse, extra):
    lam_lo, lam_hi = s_lo ** 2 * A / sigma2_w, s_hi ** 2 * A / sigma2_w
    est = A / (A + sse) if A + sse > 0 else math.nan
    out = {"s": (s_lo, s_hi), "lambda": (lam_lo, lam_hi),
           "partial_eta2": (lam_to_peta2(lam_lo, n), lam_to_peta2(lam_hi, n)),
           "cohens_f": (math.sqrt(lam_lo / n), math.sqrt(lam_hi / n)),
           "estimate": est}
    lo, hi = out["partial_eta2"]
    out["contains_estimate"] = bool(lo <= est <= hi)
    out["lower_is_zero"] = s_lo == 0.0
    out.update(extra)
    return out


def testinv_core(v, U, sse_star, ss, sse, sigma2_w, n, conf=0.95, alpha_lo=None,
                 alpha_hi=None):
    """Test-inversion interval from the replicate pieces (v, u*, SSE*); any generator of
    (u*, SSE*) can be fed (e.g. normal draws, to check against the noncentral F)."""
    a2 = (1 - conf) / 2
    alpha_lo = a2 if alpha_lo is None else alpha_lo
    alpha_hi = a2 if alpha_hi is None else alpha_hi
    B = U.shape[0]
    t, V = count_segments(v, U, sse_star, ss / sse)
    s_lo, s_hi = endpoints_from_segments(t, V, B, alpha_lo, alpha_hi)
    return _pack(s_lo, s_hi, float(np.dot(v, v)), sigma2_w, n, sse,
                 {"alpha_tails": (alpha_lo, alpha_hi), "G0": V[0] / B})


def testinv_interval(y, X_full, Q, idx, conf=0.95, alpha_lo=None, alpha_hi=None):
    """Bootstrap test-inversion interval of the term with basis Q.

    y (n), X_full (n x p), Q (n x df1, orthonormal, from term_basis), idx (B x n row
    indices of the residual draws, rows of the pool). Returns a dict with the endpoints
    of s, lambda, partial eta^2 (= population partial omega^2) and Cohen's f, the sample
    estimate and whether it lies inside, whether the lower end is exactly 0."""
    w = world(y, X_full)
    v = Q.T @ np.asarray(y, float)
    U, sse_star = replicates(w, Q, idx)
    out = testinv_core(v, U, sse_star, float(v @ v), w["sse"], w["sigma2_w"], w["n"],
                       conf, alpha_lo, alpha_hi)
    out["sigma2_w"] = w["sigma2_w"]
    return out


def calibrated_interval(y, X_full, Q, idx, outer_idx, inner_idx, conf=0.95,
                        max_level=None, boundary_upper_nominal=True):
    """Test inversion with each tail's level calibrated by a second bootstrap level.

    idx: B x n first-level draws (for the final interval); outer_idx: J x n draws of the
    outer worlds; inner_idx: J x B_in x n draws inside them (or a callable j -> B_in x n).
    max_level caps each calibrated tail level (default alpha = 1 - conf);
    boundary_upper_nominal keeps the upper tail at alpha/2 when lambda_w = 0 (see the
    module docstring; False and max_level=0.5 give the unguarded variant).
    Returns testinv_interval's dict plus the calibrated tail levels and the outer
    worlds' M and H."""
    y = np.asarray(y, float)
    w = world(y, X_full)
    v = Q.T @ y
    A = float(v @ v)
    df1 = Q.shape[1]
    alpha = 1 - conf
    s_bc = math.sqrt(max(0.0, 1.0 - df1 * w["sigma2_w"] / A)) if A > 0 else 0.0
    lam_w = s_bc ** 2 * A / w["sigma2_w"]
    f_bc = w["fitted"] - (1 - s_bc) * (Q @ v)
    J = outer_idx.shape[0]
    Ms, Hs = np.empty(J), np.empty(J)
    Y = f_bc[None, :] + w["a"][np.asarray(outer_idx)]          # J x n outer data
    Uf = w["Uf"]
    FIT = (Y @ Uf) @ Uf.T
    R = Y - FIT
    lev, pool = w["lev"], w["pool"]
    Aj = np.zeros_like(R)
    Aj[:, pool] = R[:, pool] / np.sqrt(1 - lev[pool])
    Aj[:, pool] -= Aj[:, pool].mean(axis=1, keepdims=True)
    s2w = np.mean(Aj[:, pool] ** 2, axis=1)
    SSEj = np.einsum("ij,ij->i", R, R)
    Vj = Y @ Q
    for j in range(J):
        ii = inner_idx(j) if callable(inner_idx) else inner_idx[j]
        E = Aj[j][np.asarray(ii)]
        U = E @ Q
        P = E @ Uf
        sse_star = np.maximum(np.einsum("ij,ij->i", E, E) - np.einsum("ij,ij->i", P, P),
                              0.0)
        vj = Vj[j]
        Avj = float(vj @ vj)
        t, V = count_segments(vj, U, sse_star, Avj / SSEj[j])
        s_true = math.sqrt(lam_w * s2w[j] / Avj) if Avj > 0 else 0.0
        Ms[j], Hs[j] = miss_pvalues(t, V, U.shape[0], s_true)

    def level(p):
        p = np.sort(p)
        k = int(math.floor(J * alpha / 2 + 1e-12))
        lo = p[k - 1] if k >= 1 else 0.0
        hi = p[k] if k < J else 1.0
        return float(min(max((lo + hi) / 2, 0.0), cap))

    cap = alpha if max_level is None else max_level
    a_lo, a_hi = level(Ms), level(Hs)
    if boundary_upper_nominal and lam_w == 0:
        a_hi = alpha / 2
    out = testinv_interval(y, X_full, Q, idx, conf, a_lo, a_hi)
    out.update({"calibrated_tails": (a_lo, a_hi), "s_bc": s_bc, "lambda_outer": lam_w,
                "outer_M": Ms, "outer_H": Hs})
    return out


# ----------------------------------------------------------------------------------------
# the intervals it is compared with

def ncf_interval(F, df1, df2, n, conf=0.95):
    """Steiger (2004) noncentral-F interval for lambda, mapped lambda/(lambda + n) as in
    src/classical/anova.c; lambda = 0 where even lambda = 0 is beyond the tail level."""
    a2 = (1 - conf) / 2

    def solve(target):
        c0 = stats.f.cdf(F, df1, df2)
        if c0 <= target:
            return 0.0
        g = lambda lam: stats.ncf.cdf(F, df1, df2, lam) - target  # noqa: E731
        hi = max(1.0, df1 * F)
        while g(hi) > 0:
            hi *= 2
            if hi > 1e7:
                return math.nan
        return optimize.brentq(g, 0.0, hi, xtol=1e-10, rtol=1e-10)

    lo, hi = solve(1 - a2), solve(a2)
    return (lo, hi), (lam_to_peta2(lo, n), lam_to_peta2(hi, n))


def peta2_replicates(v, U, sse_star):
    """Sample partial eta^2 of each replicate at s = 1 (bootstrap.c's replicate value)."""
    W = U + v[None, :]
    ss = np.einsum("ij,ij->i", W, W)
    return ss / (ss + sse_star)


def peta2_jackknife(y, X_full, X_red, Q):
    """Leave-one-row-out partial eta^2 by the deletion formula RSS(-i) = RSS -
    e_i^2/(1 - h_i) for the reduced, augmented (reduced + Q) and full models (NaN for rows
    with a leverage of 1), as bootstrap.c's acceleration does."""
    y = np.asarray(y, float)
    Ur = orth_basis(X_red)
    Ua = np.hstack([Ur, Q])
    Uf = orth_basis(X_full)
    out = np.full(y.size, np.nan)
    parts = []
    for Ub in (Ur, Ua, Uf):
        e = y - Ub @ (Ub.T @ y)
        h = np.sum(Ub * Ub, axis=1)
        parts.append((e, h, float(e @ e)))
    ok = np.all([p[1] < 1 - LEVERAGE_ONE_TOL for p in parts], axis=0)
    rss = [p[2] - np.where(ok, p[0] ** 2 / np.where(ok, 1 - p[1], 1), 0) for p in parts]
    ss = rss[0] - rss[1]
    out[ok] = (ss / (ss + rss[2]))[ok]
    return out


def percentile_bca(reps, theta, jack, conf=0.95):
    """Percentile and BCa (Efron 1987) endpoints, numpy quantiles (type 7) as in
    bootstrap.c; BCa is None when every replicate is on one side of theta."""
    a2 = (1 - conf) / 2
    reps = np.sort(reps[np.isfinite(reps)])
    pct = (float(np.quantile(reps, a2)), float(np.quantile(reps, 1 - a2)))
    frac = np.mean(reps < theta)
    jk = jack[np.isfinite(jack)]
    u = (jk.size - 1) * (jk.mean() - jk)
    den = np.sum(u * u)
    if frac <= 0 or frac >= 1 or den <= 0:
        return pct, None
    acc = np.sum(u ** 3) / (6 * den ** 1.5)
    z0 = stats.norm.ppf(frac)
    zl, zh = z0 + stats.norm.ppf(a2), z0 + stats.norm.ppf(1 - a2)
    pl = stats.norm.cdf(z0 + zl / (1 - acc * zl))
    ph = stats.norm.cdf(z0 + zh / (1 - acc * zh))
    return pct, (float(np.quantile(reps, pl)), float(np.quantile(reps, ph)))


# ----------------------------------------------------------------------------------------
# designs for tests and studies

def sum_coded_factorial(codes, nlev):
    """Full-factorial sum-coded model matrix of factors given as integer codes (n x k).

    Returns (X_full, blocks) with blocks[mask] = column indices of the term whose factors
    are the bits of mask (0 = intercept)."""
    codes = np.asarray(codes)
    n, k = codes.shape
    mains = []
    for f in range(k):
        L = nlev[f]
        C = np.zeros((n, L - 1))
        for lev in range(L - 1):
            C[:, lev] = (codes[:, f] == lev).astype(float) - (codes[:, f] == L - 1)
        mains.append(C)
    cols, blocks = [np.ones((n, 1))], {0: [0]}
    pos = 1
    for mask in sorted(range(1, 1 << k), key=lambda m: (bin(m).count("1"), m)):
        M = np.ones((n, 1))
        for f in range(k):
            if mask >> f & 1:
                M = np.einsum("ni,nj->nij", M, mains[f]).reshape(n, -1)
        cols.append(M)
        blocks[mask] = list(range(pos, pos + M.shape[1]))
        pos += M.shape[1]
    return np.hstack(cols), blocks


def demo_fit(path):
    """The demo table (examples/demo.csv): its used rows' response build_min, the
    full-factorial sum-coded model of runner × cache × tests, and world() on them.
    Returns (y, X_full, world)."""
    import csv
    with open(path) as fh:
        recs = [r for r in csv.DictReader(fh) if r["build_min"].strip() not in ("", "NA")]
    facs = ["runner", "cache", "tests"]
    levels = [sorted({r[f] for r in recs}) for f in facs]
    codes = np.array([[levels[j].index(r[f]) for j, f in enumerate(facs)] for r in recs])
    y = np.array([float(r["build_min"]) for r in recs])
    X, _ = sum_coded_factorial(codes, [len(lv) for lv in levels])
    return y, X, world(y, X)


def json_rows(rows):
    """A JSON array of replicate rows (null for NaN) as a float array."""
    return np.array([[math.nan if x is None else x for x in row] for row in rows])


def type3_pieces(X_full, blocks, mask):
    """(X_red, Q) of a term under Type III (adjusted for every other term)."""
    keep = [c for m, cs in blocks.items() if m != mask for c in cs]
    X_red = X_full[:, keep]
    return X_red, term_basis(X_red, X_full)


if __name__ == "__main__":
    # smoke run: one 3x3x2 dataset, 5 rows per cell, factor A; test inversion against the
    # noncentral F with residual draws and with normal draws of (u*, SSE*)
    rng = np.random.default_rng(1)
    grid = np.array([(i, j, k) for i in range(3) for j in range(3) for k in range(2)
                     for _ in range(5)])
    X, blocks = sum_coded_factorial(grid, (3, 3, 2))
    y = 0.5 * (grid[:, 0] - 1) + rng.standard_normal(len(grid))
    X_red, Q = type3_pieces(X, blocks, 1)
    w = world(y, X)
    idx = draw_indices(rng, w["pool"], 20000, len(y))
    ti = testinv_interval(y, X, Q, idx)
    v = Q.T @ y
    F = (v @ v / Q.shape[1]) / (w["sse"] / w["df2"])
    print("test inversion", ti["lambda"], ti["partial_eta2"])
    print("noncentral F  ", *ncf_interval(F, Q.shape[1], w["df2"], len(y)))
