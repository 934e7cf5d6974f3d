"""ref_sti.py — an independent numpy version of the studentized bootstrap test inversion
(src/resampling/testinv.c, sturdy_sti_endpoints) and of the residual kurtosis it uses
(src/resampling/bootstrap.c), for tests/xcheck_sti.py and tests/xcheck_coverage.py.

Definitions (docs/interval_study.md, "Studentized test inversion"):
  kurtosis of residuals r with error SS `sse` on df2 degrees of freedom:
      kappa = max(-2, (sum r^4 - 3 MSE^2 C2) / (C1 MSE^2)),  MSE = sse/df2,
      C1 = sum_ij M_ij^4, C2 = sum_i M_ii^2, M = I - H (the full model's hat matrix H);
  statistic at noncentrality lam:
      T(lam; SS, MSE, k) = [ln(SS/MSE) - ln(lam + df1)] / sqrt(V),
      V = (4 lam + 2 df1)/(lam + df1)^2 + (2 df2 + k C2)/df2^2;
  replicate b at lam: SS*_b = s^2 A + 2 s beta_b + w_b with s = sqrt(lam sigma2_w / A);
  lam accepted iff T*_(floor(a_hi B)+1) <= T_obs(lam) <= T*_(B - floor(a_lo B)) (1-based
  order statistics); the interval is the hull of the accepted lam.
This version finds the hull on a dense grid (sorted replicates, no selection algorithm),
widening the grid until its last point is rejected, and bisects each end to 1e-13
relative: a different search from the C code's, the same definition."""
import math

import numpy as np


def design_constants(Uf):
    """C1, C2 of the full model with orthonormal basis Uf (n x r)."""
    H = Uf @ Uf.T
    M = np.eye(H.shape[0]) - H
    return float(np.sum(M ** 4)), float(np.sum(np.diag(M) ** 2))


def kurtosis(r, sse, df2, c1, c2):
    mse = sse / df2
    k = (float(np.sum(np.asarray(r) ** 4)) - 3 * mse * mse * c2) / (c1 * mse * mse)
    return max(-2.0, k)


class Problem:
    def __init__(self, rows, A, mse, kappa, sigma2_w, df1, df2, c2, alpha_lo, alpha_hi):
        rows = np.asarray(rows, float)
        ok = np.all(np.isfinite(rows[:, :4]), axis=1) & (rows[:, 2] > 0)
        rows = rows[ok]
        self.B = rows.shape[0]
        self.beta, self.w = rows[:, 0], rows[:, 1]
        self.lmse = np.log(rows[:, 2] / df2)
        self.dv = (2 * df2 + rows[:, 3] * c2) / df2 ** 2
        self.A, self.s2w, self.df1 = A, sigma2_w, df1
        self.lss = math.log(A / mse)
        self.dv_obs = (2 * df2 + kappa * c2) / df2 ** 2
        self.k_lo = int(math.floor(alpha_lo * self.B + 1e-9))
        self.k_hi = int(math.floor(alpha_hi * self.B + 1e-9))

    def accepts(self, lam):
        s = math.sqrt(lam * self.s2w / self.A)
        ss = s * s * self.A + 2 * s * self.beta + self.w
        with np.errstate(divide="ignore"):
            l = np.where(ss > 0, np.log(np.where(ss > 0, ss, 1.0)), -np.inf)
        L = math.log(lam + self.df1)
        v1 = (4 * lam + 2 * self.df1) / (lam + self.df1) ** 2
        t = np.sort((l - self.lmse - L) / np.sqrt(v1 + self.dv))
        t_obs = (self.lss - L) / math.sqrt(v1 + self.dv_obs)
        q_lo = t[self.k_hi]                   # (floor(a_hi B) + 1)-th smallest
        q_hi = t[self.B - self.k_lo - 1]      # (B - floor(a_lo B))-th smallest
        return bool(q_lo <= t_obs <= q_hi)

    def boundary(self, rejected, accepted):
        for _ in range(200):
            if abs(accepted - rejected) <= 1e-13 * max(1.0, abs(accepted)):
                break
            mid = 0.5 * (rejected + accepted)
            if self.accepts(mid):
                accepted = mid
            else:
                rejected = mid
        return 0.5 * (rejected + accepted)


def sti_interval(rows, A, mse, kappa, sigma2_w, df1, df2, c2, alpha_lo, alpha_hi,
                 ngrid=400):
    """(lam_lo, lam_hi) or (nan, nan) when not computable."""
    if not (A > 0):
        return math.nan, math.nan
    p = Problem(rows, A, mse, kappa, sigma2_w, df1, df2, c2, alpha_lo, alpha_hi)
    if p.B < 2 or p.k_lo + p.k_hi >= p.B:
        return math.nan, math.nan
    lam_max = 50.0
    for _ in range(60):
        grid = lam_max * (np.arange(ngrid) / (ngrid - 1)) ** 2
        acc = np.array([p.accepts(x) for x in grid])
        if not acc.any():
            # nothing accepted on this grid: accepted only beyond it, or nowhere
            if p.accepts(lam_max * 4):
                lam_max *= 4
                continue
            return 0.0, 0.0
        if acc[-1]:
            lam_max *= 4
            continue
        first = int(np.argmax(acc))
        last = ngrid - 1 - int(np.argmax(acc[::-1]))
        lo = 0.0 if first == 0 else p.boundary(grid[first - 1], grid[first])
        hi = p.boundary(grid[last + 1], grid[last])
        return lo, hi
    return math.nan, math.inf
