"""The record a panel estimator returns."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..findings import Estimate, ShareVerdict, TestResult, _short
from ..labels import display
from .diagnostics import BracketCheck
from .methods import ASSUMES, TITLES


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
    economy_codes: np.ndarray | None = None  # grid positions of the economies with rows

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

    def test(self, *names: str) -> TestResult | None:
        """The first test whose name starts with one of ``names`` ('AR(2)'; 'Sargan',
        'Hansen'), or None."""
        return next((t for t in self.tests if t.name.startswith(names)), None)


@dataclass(frozen=True)
class EstimatorFindings:
    """One estimator on one panel equation and sample: both fits and what they imply.

    The coefficient on lagged income is reported as ``gamma``; the maps of the form
    table use the growth parameterisation (``gamma - 1`` on income at the start of
    the period), whose slopes ``unrestricted``/``restricted`` hold in ``coef``.
    """

    method: str
    unrestricted: PanelFit
    restricted: PanelFit
    wald_test: TestResult | None
    gamma: Estimate
    shares: tuple[ShareVerdict, ...]
    speed: tuple[Estimate, ...]
    problem: str | None
    bracket: BracketCheck | None = None

    def __repr__(self) -> str:
        parts = [self.restricted.title, _short(self.gamma)]
        parts += [_short(v.estimate) for v in self.shares]
        parts += [_short(e) for e in self.speed[:1]]
        return f"EstimatorFindings({'; '.join(parts)})"

    @property
    def title(self) -> str:
        return self.restricted.title

    @property
    def assumes(self) -> str:
        return ASSUMES[self.method]

    def share(self, name: str) -> ShareVerdict | None:
        return next((s for s in self.shares if s.name == name), None)

    def share_estimate(self, name: str) -> Estimate | None:
        found = self.share(name)
        return None if found is None else found.estimate

    def speed_estimate(self, name: str) -> Estimate | None:
        return next((e for e in self.speed if e.name == name), None)


@dataclass(frozen=True)
class PanelFindings:
    """A panel equation on one sample: every estimator the spec asked for."""

    equation: str
    sample: str
    form_key: str
    description: str
    restriction_text: str
    period_years: int
    shape: tuple[str, ...]  # the panel's shape in a few lines
    economies: tuple[str, ...]  # economies of the sample with at least one observation
    n_in_sample: int
    estimators: tuple[EstimatorFindings, ...]
    notes: tuple[str, ...] = ()
    equation_label: str | None = None
    sample_label: str | None = None
    # the period panel as estimated: economy, end year, log income, the regressors' columns
    data: pd.DataFrame | None = field(default=None, compare=False, repr=False)

    def __repr__(self) -> str:
        return (f"PanelFindings({self.column} [{self.form_key}], {len(self.economies)} "
                f"economies, {len(self.estimators)} estimators)")

    @property
    def column(self) -> str:
        return f"{self.equation} / {self.sample}"

    @property
    def heading(self) -> str:
        return (f"{self.equation_label or display(self.equation)} / "
                f"{self.sample_label or display(self.sample)}")

    def estimator(self, method: str) -> EstimatorFindings | None:
        return next((e for e in self.estimators if e.method == method), None)
