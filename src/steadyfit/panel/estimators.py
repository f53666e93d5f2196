"""Panel estimators of a dynamic panel: pooled OLS, within, first-difference 2SLS, difference
and system GMM, each returning a :class:`~steadyfit.panel.results.PanelFit`.

Every path is numpy on the stacked design (linearmodels' ``PanelOLS``, ``IV2SLS``
and ``IVGMM`` reproduce the estimates in the tests); covariances are clustered by
economy.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..findings import TestResult
from .design import (
    DynamicPanel,
    StackedDesign,
    Treatment,
    difference_design,
    gmm_design,
    levels_design,
)
from .diagnostics import first_stage, instrument_count, serial_correlation
from .gmm import band_weight, gmm, overidentification, symmetric_inverse, two_sls_weight
from .methods import METHODS
from .results import PanelFit


def demean(d: StackedDesign, values: np.ndarray) -> np.ndarray:
    """Columns of ``values`` (one row per row of ``d``) minus their mean within each economy:
    one pass of sums over the economy-sorted rows."""
    counts = np.diff(np.append(d.starts, d.nobs))
    means = d.sums(values) / counts[:, None]
    return values - means[d.row_group]


def _ols(d: StackedDesign, y: np.ndarray, X: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                                     np.ndarray]:
    """OLS with the clustered (by economy) sandwich covariance."""
    xx = X.T @ X
    bread = symmetric_inverse(xx)
    coef = bread @ (X.T @ y)
    u = y - X @ coef
    g = d.sums(X, u)
    return coef, bread @ (g.T @ g) @ bread, u


def _fit(method: str, d: StackedDesign, coef: np.ndarray, cov: np.ndarray, resid: np.ndarray,
         steps: int | None = None, tests: tuple[TestResult, ...] = (),
         warnings: tuple[str, ...] = ()) -> PanelFit:
    return PanelFit(method, steps, d.names, coef, cov, d.slopes, d.nobs, d.n_economies,
                    d.n_periods, None if d.Z is None else d.Z.shape[1], tests, warnings,
                    resid, d.economies_present)


def pooled_ols(panel: DynamicPanel, time_effects: bool = True) -> PanelFit:
    """OLS of the levels equation on every complete economy-period, with period effects."""
    d = levels_design(panel, time_effects=time_effects, constant=True)
    coef, cov, u = _ols(d, d.y, d.X)
    return _fit("pooled_ols", d, coef, cov, u)


def within(panel: DynamicPanel, time_effects: bool = True) -> PanelFit:
    """The levels equation with an effect per economy (removed by subtracting each economy's
    means), and optionally period effects (dummies, demeaned with the rest)."""
    d = levels_design(panel, time_effects=time_effects, constant=False)
    both = demean(d, np.column_stack([d.y, d.X]))
    coef, cov, u = _ols(d, both[:, 0], both[:, 1:])
    return _fit("within", d, coef, cov, u)


def first_difference_iv(panel: DynamicPanel, time_effects: bool = True) -> PanelFit:
    """2SLS of the differenced equation, the differenced lag instrumented by the level two
    periods back (Anderson and Hsiao 1981), with the first-stage strength."""
    d = difference_design(panel, time_effects=time_effects)
    weight = two_sls_weight(d)
    sol = gmm(d, weight, 1)
    return _fit("first_difference_iv", d, sol.coef, sol.cov, sol.resid, None,
                (first_stage(d, 0, [0], weight),))  # y(t-2), the first instrument, is excluded


def panel_gmm(panel: DynamicPanel, system: bool = False, steps: int = 2,
              max_lag: int | None = None, collapse: bool = False,
              treatment: Mapping[str, Treatment] | None = None,
              time_effects: bool = True) -> PanelFit:
    """Difference GMM (Arellano and Bond 1991) or system GMM (Blundell and Bond 1998), one or
    two steps, with the over-identification test, AR(1) and AR(2) in differences, and a
    warning when the instruments outnumber the economies."""
    d = gmm_design(panel, system=system, max_lag=max_lag, collapse=collapse,
                   treatment=treatment, time_effects=time_effects)
    sol = gmm(d, band_weight(d), steps)
    name, stat, p, df = overidentification(d, sol)
    null = "the instruments are valid (the over-identifying restrictions hold)"
    if system and steps == 1:
        over = TestResult.not_available(
            "Sargan", null, "the one-step weight of system GMM is not efficient even with "
            "homoskedastic errors, so Sargan's statistic has no chi-square distribution; "
            "use two steps for Hansen's J", "chi2", (df,))
    elif df <= 0:
        over = TestResult.not_available(name, null, "exactly identified: nothing to test",
                                        "chi2", (df,))
    else:
        over = TestResult(name, stat, p, (df,), "chi2", null)
    tests = (over, serial_correlation(d, sol, 1), serial_correlation(d, sol, 2))
    assert d.Z is not None
    warn = instrument_count(d.Z.shape[1], d.n_economies)
    return _fit("system_gmm" if system else "difference_gmm", d, sol.coef, sol.cov, sol.resid,
                steps, tests, (warn,) if warn else ())


def estimate(panel: DynamicPanel, method: str, *, steps: int = 2, time_effects: bool = True,
             within_time_effects: bool = True, max_lag: int | None = None,
             collapse: bool = False, treatment: Mapping[str, Treatment] | None = None
             ) -> PanelFit:
    """One estimator of ``METHODS`` by name."""
    if method == "pooled_ols":
        return pooled_ols(panel, time_effects)
    if method == "within":
        return within(panel, within_time_effects)
    if method == "first_difference_iv":
        return first_difference_iv(panel, time_effects)
    if method in ("difference_gmm", "system_gmm"):
        return panel_gmm(panel, method == "system_gmm", steps, max_lag, collapse, treatment,
                         time_effects)
    raise ValueError(f"unknown panel estimator '{method}'; valid: {', '.join(METHODS)}")
