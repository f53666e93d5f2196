"""The record a panel estimator returns."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..findings import TestResult
from .methods import TITLES


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
