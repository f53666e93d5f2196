"""Linear GMM on stacked panel rows: one step, two steps, and the Windmeijer correction.

For rows ``y = X b + u`` with instruments ``Z`` and a weight ``W``::

    b(W) = (X'Z W Z'X)^-1 X'Z W Z'y

Inference is clustered by economy throughout: with ``g_i = Z_i'u_i`` the
economy's moment, ``S = sum_i g_i g_i'``.  One step uses the weight the caller
gives (first-difference 2SLS: ``(Z'Z)^-1``; difference GMM: ``(Z'HZ)^-1`` with
``H`` the first-difference band of 2 on the diagonal and -1 beside it; system
GMM the same band for the differenced rows and the identity for rows in
levels); its covariance is the sandwich ``M S M'`` with
``M = (X'ZWZ'X)^-1 X'ZW``.  Two steps use ``W2 = S(b1)^-1``; the usual
covariance ``(X'Z W2 Z'X)^-1`` understates the variance in finite samples, so
two-step standard errors carry the Windmeijer (2005, Journal of Econometrics
126) correction ``V2 + D V2 + V2 D' + D V1 D'``, where ``D`` is the derivative
of the two-step estimate with respect to the one-step estimate that ``W2``
was built from.

No ``1/N`` scaling appears anywhere: every formula is invariant to it.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.special import chdtrc

from .design import StackedDesign


@dataclass(frozen=True)
class GmmSolution:
    """Coefficients, their covariance, residuals and what the tests need."""

    coef: np.ndarray
    cov: np.ndarray
    resid: np.ndarray
    weight: np.ndarray  # the weight matrix the estimate used
    moments: np.ndarray  # sum of Z_i'u_i over economies (at coef)
    steps: int
    one_step_coef: np.ndarray
    one_step_cov: np.ndarray  # clustered sandwich of the one-step estimate
    uncorrected_cov: np.ndarray | None = None  # two-step: (X'Z W2 Z'X)^-1
    by_economy: np.ndarray | None = None  # Z_i'u_i of each economy (at coef)
    influence: np.ndarray | None = None  # (X'Z W Z'X)^-1 X'Z W: moments to coefficients

    def __repr__(self) -> str:
        return f"GmmSolution({self.steps}-step, {len(self.coef)} coefficients)"


def band_weight(d: StackedDesign) -> np.ndarray:
    """``(Z'HZ)^-1``: ``H`` has 2 on the diagonal and -1 between consecutive differenced
    periods of an economy for rows in differences, 1 on the diagonal for rows in levels.
    ``HZ`` is formed row by row (the band touches neighbours only), then one product."""
    assert d.Z is not None
    Z = d.Z
    scale = np.where(d.block == 0, 2.0, 1.0)[:, None]
    pairs = d.adjacent if d.adjacent is not None else np.empty((0, 2), dtype=int)
    r = d.uniform
    if r is not None:  # every economy alike: the band of the first applies to each block
        stack = Z.reshape(-1, r, Z.shape[1])
        hz = stack * scale[:r]
        for a, b in pairs[pairs[:, 1] < r]:
            hz[:, a] -= stack[:, b]
            hz[:, b] -= stack[:, a]
        return _inverse(Z.T @ hz.reshape(Z.shape))
    hz = Z * scale
    if len(pairs):
        a, b = pairs[:, 0], pairs[:, 1]
        hz[a] -= Z[b]
        hz[b] -= Z[a]
    return _inverse(Z.T @ hz)


def two_sls_weight(d: StackedDesign) -> np.ndarray:
    assert d.Z is not None
    return _inverse(d.Z.T @ d.Z)


def _inverse(m: np.ndarray) -> np.ndarray:
    """Inverse of a symmetric positive semi-definite matrix through its Cholesky factor; the
    Moore-Penrose inverse when it is singular or nearly so (redundant instruments), as is
    usual for GMM weights."""
    inv = _cholesky_inverse(m, 1e-7)
    if inv is not None:
        return inv
    p = np.linalg.pinv(m, hermitian=True)
    return (p + p.T) / 2


def symmetric_inverse(m: np.ndarray) -> np.ndarray:
    """Inverse of a symmetric positive definite matrix (a cross-product of regressors): its
    Cholesky factor's, or, where that fails, the general inverse (which raises on an exactly
    singular matrix).  The factor reads one triangle, so ``m`` is first made exactly
    symmetric: a product like ``A W A'`` carries rounding that differs between them."""
    inv = _cholesky_inverse((m + m.T) / 2, 0.0)
    return np.linalg.inv(m) if inv is None else inv


def _cholesky_inverse(m: np.ndarray, tolerance: float) -> np.ndarray | None:
    """The inverse from the Cholesky factor, None when ``m`` is not positive definite or a
    pivot is below ``tolerance`` times the largest."""
    c, info = _lapack().dpotrf(m, lower=True)
    if info != 0:
        return None
    pivots = np.abs(c.diagonal()).tolist()
    if not pivots or min(pivots) <= tolerance * max(pivots):
        return None
    inv, info = _lapack().dpotri(c, lower=True)  # fills the lower triangle
    if info != 0:
        return None
    upper = _upper(len(m))
    inv[upper] = inv.T[upper]
    return inv


@functools.cache
def _upper(k: int) -> tuple[np.ndarray, np.ndarray]:
    """Positions above the diagonal of a k x k matrix."""
    return np.triu_indices(k, 1)


@functools.cache
def _lapack():
    """scipy's LAPACK wrappers, imported on first use (the import is slow)."""
    from scipy.linalg import lapack

    return lapack


def _solve(A: np.ndarray, W: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(coef, bread) for coef = (A W A')^-1 A W b, bread = (A W A')^-1."""
    AW = A @ W
    bread = symmetric_inverse(AW @ A.T)
    return bread @ (AW @ b), bread


def gmm(d: StackedDesign, weight: np.ndarray, steps: int = 1) -> GmmSolution:
    """One- or two-step GMM of ``d`` starting from ``weight`` (clustered by economy)."""
    if steps not in (1, 2):
        raise ValueError("steps must be 1 or 2")
    assert d.Z is not None
    Z, X, y = d.Z, d.X, d.y
    A, b = X.T @ Z, Z.T @ y
    b1, bread1 = _solve(A, weight, b)
    u1 = y - X @ b1
    g1 = d.sums(Z, u1)
    S1 = g1.T @ g1
    M1 = bread1 @ A @ weight
    V1 = M1 @ S1 @ M1.T
    if steps == 1:
        return GmmSolution(b1, V1, u1, weight, g1.sum(axis=0), 1, b1, V1, by_economy=g1,
                           influence=M1)
    W2 = _inverse(S1)
    b2, V2 = _solve(A, W2, b)
    u2 = y - X @ b2
    M2 = V2 @ A @ W2
    D = windmeijer_derivative(d, W2, M2, g1, u2)
    Vc = V2 + D @ V2 + V2 @ D.T + D @ V1 @ D.T
    g2 = d.sums(Z, u2)
    return GmmSolution(b2, Vc, u2, W2, g2.sum(axis=0), 2, b1, V1, V2, by_economy=g2,
                       influence=M2)


def windmeijer_derivative(d: StackedDesign, W2: np.ndarray, M2: np.ndarray, g1: np.ndarray,
                          u2: np.ndarray) -> np.ndarray:
    """d b2 / d b1: column j is ``M2 [sum_i (h_ij g_i' + g_i h_ij')] W2 Z'u2`` with
    ``M2 = V2 X'Z W2``,
    ``g_i = Z_i'u1_i`` and ``h_ij = Z_i'x_ij`` (the derivative of ``S`` is minus the bracket).

    With ``q = W2 Z'u2`` the bracket times ``q`` is ``sum_i h_ij (g_i'q) + g_i (h_ij'q)``:
    the first sum is ``Z' (x_j * (g'q) of the row's economy)`` and the second
    ``g' (economy sums of x_j * Zq)``, so no economy-by-instrument-by-regressor array is
    needed."""
    assert d.Z is not None
    Z, X = d.Z, d.X
    q = W2 @ (Z.T @ u2)
    gq = g1 @ q
    bracket = Z.T @ (X * gq[d.row_group][:, None]) + g1.T @ d.sums(X, Z @ q)
    return M2 @ bracket


def overidentification(d: StackedDesign, sol: GmmSolution) -> tuple[str, float, float, int]:
    """(name, statistic, p-value, df) of the test of the over-identifying restrictions.

    Two steps: Hansen's J, the minimised criterion ``g' S(b1)^-1 g`` (robust to
    heteroskedasticity within economies).  One step: Sargan's statistic
    ``u'Z (Z'HZ)^-1 Z'u / s2`` with ``s2 = u'u / (2 n)`` for differenced rows (the
    variance of a differenced error is twice the error variance), valid only
    under homoskedastic, serially uncorrelated errors.
    """
    assert d.Z is not None
    df = d.Z.shape[1] - d.X.shape[1]
    g = sol.moments
    if sol.steps == 2:
        stat, name = float(g @ sol.weight @ g), "Hansen J"
    else:
        u = sol.resid
        s2 = float(u @ u) / (2.0 * len(u))
        stat, name = float(g @ sol.weight @ g) / s2, "Sargan"
    p = float(chdtrc(df, stat)) if df > 0 else math.nan
    return name, stat, p, df
