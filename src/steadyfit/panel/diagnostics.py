"""Diagnostics of panel estimates: serial correlation of differenced residuals, instrument
count, first-stage strength, and the bracket check on the lagged dependent variable."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import fdtrc, ndtr

from ..findings import TestResult
from .design import StackedDesign
from .gmm import GmmSolution


def serial_correlation(d: StackedDesign, sol: GmmSolution, order: int) -> TestResult:
    """Arellano and Bond's (1991) test of no serial correlation of ``order`` in the
    differenced residuals, standard normal under the null.

    With ``w`` the differenced residuals lagged ``order`` periods (within an economy,
    zero where missing) and ``v`` the current ones, the statistic is ``w'v`` over its
    standard error, which accounts for the estimation of the coefficients: with
    ``b = sum_i X_i'w_i`` over differenced rows and ``M`` the estimator's map from
    moments to coefficients, ``var = sum_i (w_i'v_i)^2 - 2 b'M sum_i Z_i'u_i v_i'w_i
    + b' V b``, ``V`` the estimate's (clustered, for two steps corrected) covariance.
    First-order correlation is expected of differenced errors; second-order
    correlation means the levels errors are correlated and the lags used as
    instruments are not valid.
    """
    name = f"AR({order}) in differences"
    null = f"no serial correlation of order {order} in the differenced residuals"
    assert d.Z is not None
    diff = d.block == 0
    u = sol.resid
    # the residual of the same economy `order` periods earlier, among differenced rows
    earlier = d.earlier(order)
    w = np.where(diff & (earlier >= 0), u[earlier], 0.0)
    v = np.where(diff & (w != 0), u, 0.0)
    if not np.any(v):
        return TestResult.not_available(name, null, f"no economy has differenced residuals "
                                        f"{order} periods apart")
    wv = d.sums(w * v)
    b = d.X.T @ w
    assert sol.influence is not None and sol.by_economy is not None
    M = sol.influence
    zu = sol.by_economy
    var = float(wv @ wv - 2.0 * b @ M @ (zu.T @ wv) + b @ sol.cov @ b)
    if not (var > 0 and math.isfinite(var)):
        return TestResult.not_available(name, null, "the variance of the statistic is not "
                                        "positive")
    z = float(wv.sum()) / math.sqrt(var)
    return TestResult(name, z, float(2 * ndtr(-abs(z))), (), "normal", null)


def instrument_count(n_instruments: int, n_economies: int) -> str | None:
    """A warning when the instruments outnumber the economies: the estimated optimal weight
    is then singular, Hansen's J is weakened towards never rejecting, and two-step standard
    errors are unreliable (Roodman 2009, Oxford Bulletin of Economics and Statistics 71;
    from memory)."""
    if n_instruments > n_economies:
        return (f"{n_instruments} instruments exceed the {n_economies} economies: the "
                "two-step weight matrix is singular, so two-step estimates can move with small "
                "changes in the data, their standard errors are unreliable and the "
                "over-identification test is weak; limit the lag depth (panel.max_lag) or "
                "collapse the instruments (panel.collapse)")
    return None


def first_stage(d: StackedDesign, column: int, excluded: list[int], zz: np.ndarray
                ) -> TestResult:
    """Strength of the excluded instruments (columns ``excluded`` of ``Z``) for regressor
    ``column`` of a 2SLS design: the Wald statistic (clustered by economy) that their
    coefficients in the first-stage regression are zero, as an F with (q, economies - 1)
    degrees of freedom.  ``zz`` is ``(Z'Z)^-1``, the 2SLS weight."""
    assert d.Z is not None
    name = "first-stage F"
    null = "the excluded instruments do not explain the instrumented regressor"
    X, Z = d.X, d.Z
    target = X[:, column]
    coef = zz @ (Z.T @ target)
    e = target - Z @ coef
    g = d.sums(Z, e)
    n_e = g.shape[0]
    V = zz @ (g.T @ g) @ zz * n_e / (n_e - 1)
    c = coef[excluded]
    Vc = V[np.ix_(excluded, excluded)]
    q = len(excluded)
    if q == 0 or n_e < 2:
        return TestResult.not_available(name, null, "no excluded instrument", "F")
    try:
        f = float(c @ np.linalg.solve(Vc, c)) / q
    except np.linalg.LinAlgError:
        return TestResult.not_available(name, null, "the first-stage covariance is singular",
                                        "F")
    return TestResult(name, f, float(fdtrc(q, n_e - 1, f)), (q, n_e - 1), "F", null)


@dataclass(frozen=True)
class BracketCheck:
    """Whether a GMM estimate of the lagged dependent variable's coefficient lies between the
    within and the pooled OLS estimates, and why that matters."""

    estimate: float
    within: float
    pooled: float

    @property
    def inside(self) -> bool:
        lo, hi = sorted((self.within, self.pooled))
        return lo <= self.estimate <= hi

    @property
    def sentence(self) -> str:
        where = (f"{self.estimate:.3f} lies between the within estimate {self.within:.3f} and "
                 f"the pooled OLS estimate {self.pooled:.3f}")
        if self.inside:
            return where
        side = "below the within" if self.estimate < min(self.within, self.pooled) else (
            "above the pooled OLS")
        return (f"{self.estimate:.3f} lies {side} estimate (within {self.within:.3f}, pooled "
                f"OLS {self.pooled:.3f}): the within estimate is biased down in short panels "
                "and pooled OLS up, so a consistent estimate should lie between them; outside, "
                "the instruments are likely weak or invalid")


def bracket(estimate: float, within: float, pooled: float) -> BracketCheck:
    """The bracket check of Bond, Hoeffler and Temple (2001, CEPR discussion paper 3048; from
    memory): a consistent estimate of the coefficient on the lagged dependent variable should
    lie between the within estimate (biased down in short panels: Nickell 1981,
    Econometrica 49) and the pooled OLS estimate (biased up: the economy effect sits in the
    error and is correlated with the lag)."""
    return BracketCheck(float(estimate), float(within), float(pooled))
