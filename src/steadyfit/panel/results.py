"""The record a panel estimator returns."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np
import pandas as pd

from ..findings import TestResult

Method = Literal["pooled_ols", "within", "first_difference_iv", "difference_gmm", "system_gmm"]
METHODS: tuple[str, ...] = get_args(Method)

# what each estimator assumes, and its known bias on the lagged dependent variable: said in the
# report beside its numbers
ASSUMES: dict[str, str] = {
    "pooled_ols": ("no economy effect correlated with the regressors; with one, the coefficient "
                   "on lagged income is biased up"),
    "within": ("regressors strictly exogenous given the economy effect; with few periods the "
               "coefficient on lagged income is biased down (Nickell 1981)"),
    "first_difference_iv": ("errors not serially correlated, so income two periods back is a "
                            "valid instrument for the differenced lag; inefficient, and weak "
                            "when income is persistent"),
    "difference_gmm": ("errors not serially correlated (AR(2) should not reject) and the "
                       "instruments valid (over-identification test); weak instruments and a "
                       "downward bias when income is persistent (Blundell and Bond 1998)"),
    "system_gmm": ("as difference GMM, and in addition that changes in income are uncorrelated "
                   "with the economy effect (mean stationarity), which the levels equation "
                   "needs"),
}

TITLES: dict[str, str] = {
    "pooled_ols": "pooled OLS",
    "within": "within (fixed effects)",
    "first_difference_iv": "first-difference 2SLS",
    "difference_gmm": "difference GMM",
    "system_gmm": "system GMM",
}


@dataclass(frozen=True)
class PanelFit:
    """Coefficients and clustered covariance of one panel estimator, with its diagnostics.

    ``names`` lists every coefficient; the first ``slopes`` are the regressors (the
    lagged dependent variable first), the rest period effects and the constant.
    Covariances are clustered by economy without a small-sample factor; two-step
    GMM carries the Windmeijer correction.  Tests use the normal distribution
    (chi-square for Wald tests).
    """

    method: str
    steps: int | None
    names: tuple[str, ...]
    coef: np.ndarray
    cov: np.ndarray
    slopes: int
    nobs: int
    n_economies: int
    n_periods: int
    n_instruments: int | None = None
    tests: tuple[TestResult, ...] = ()
    warnings: tuple[str, ...] = ()
    resid: np.ndarray | None = None

    def __repr__(self) -> str:
        z = f", {self.n_instruments} instruments" if self.n_instruments is not None else ""
        return (f"PanelFit({self.title}: {self.nobs} observations, {self.n_economies} "
                f"economies{z})")

    @property
    def title(self) -> str:
        steps = {1: ", one step", 2: ", two steps"}.get(self.steps or 0, "")
        return TITLES[self.method] + (steps if self.method.endswith("gmm") else "")

    @property
    def se(self) -> np.ndarray:
        return np.sqrt(np.diag(self.cov))

    def params(self) -> pd.Series:
        return pd.Series(self.coef, index=list(self.names), name="coef")

    def slope_coef(self) -> np.ndarray:
        return self.coef[: self.slopes]

    def slope_cov(self) -> np.ndarray:
        return self.cov[: self.slopes, : self.slopes]

    def test(self, name: str) -> TestResult | None:
        return next((t for t in self.tests if t.name.startswith(name)), None)
