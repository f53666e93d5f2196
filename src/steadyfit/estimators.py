"""Estimators.  Ordinary least squares goes through statsmodels.

Each estimator returns a frozen :class:`Fit`; choosing another covariance
means fitting again, never changing a record.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np
import pandas as pd
from scipy import stats

CovarianceName = Literal["classical", "HC0", "HC1", "HC2", "HC3", "cluster"]
COVARIANCES: tuple[str, ...] = get_args(CovarianceName)


@dataclass(frozen=True)
class Fit:
    """Coefficients, covariance and fit statistics of one regression.

    p-values and intervals use Student's t with ``df_resid`` degrees of freedom
    when ``use_t`` (classical covariance), the normal distribution otherwise
    (robust and cluster-robust covariance), as statsmodels does.
    """

    names: tuple[str, ...]
    labels: tuple[str, ...]
    coef: np.ndarray
    cov: np.ndarray
    nobs: int
    df_resid: float
    rsquared: float
    rsquared_adj: float
    ser: float
    ssr: float
    covariance: str
    use_t: bool
    fitted: np.ndarray
    resid: np.ndarray

    @property
    def se(self) -> np.ndarray:
        return np.sqrt(np.diag(self.cov))

    @property
    def tvalues(self) -> np.ndarray:
        return self.coef / self.se

    @property
    def pvalues(self) -> np.ndarray:
        dist = stats.t(self.df_resid) if self.use_t else stats.norm()
        return 2 * dist.sf(np.abs(self.tvalues))

    def conf_int(self, confidence: float) -> np.ndarray:
        dist = stats.t(self.df_resid) if self.use_t else stats.norm()
        q = dist.ppf(0.5 + confidence / 2)
        return np.column_stack([self.coef - q * self.se, self.coef + q * self.se])

    def params(self) -> pd.Series:
        return pd.Series(self.coef, index=list(self.names), name="coef")

    def cov_frame(self) -> pd.DataFrame:
        return pd.DataFrame(self.cov, index=list(self.names), columns=list(self.names))

    def slopes(self) -> tuple[np.ndarray, np.ndarray]:
        """Coefficients and covariance without the constant (first column)."""
        return self.coef[1:], self.cov[1:, 1:]


def fit_ols(y: np.ndarray, x: np.ndarray, names: tuple[str, ...], labels: tuple[str, ...],
            covariance: CovarianceName = "classical",
            clusters: np.ndarray | None = None) -> Fit:
    """Ordinary least squares with the chosen covariance (statsmodels)."""
    import statsmodels.api as sm

    model = sm.OLS(y, x)
    if covariance == "classical":
        res = model.fit()
    elif covariance == "cluster":
        if clusters is None:
            raise ValueError("cluster covariance needs cluster labels")
        groups = pd.factorize(pd.Series(clusters).astype(str))[0]
        res = model.fit(cov_type="cluster", cov_kwds={"groups": groups})
    elif covariance in ("HC0", "HC1", "HC2", "HC3"):
        res = model.fit(cov_type=covariance)
    else:
        raise ValueError(f"unknown covariance '{covariance}'; valid: {', '.join(COVARIANCES)}")
    return Fit(
        names=names,
        labels=labels,
        coef=np.asarray(res.params, dtype=float),
        cov=np.asarray(res.cov_params(), dtype=float),
        nobs=int(res.nobs),
        df_resid=float(res.df_resid),
        rsquared=float(res.rsquared),
        rsquared_adj=float(res.rsquared_adj),
        ser=float(np.sqrt(res.ssr / res.df_resid)),
        ssr=float(res.ssr),
        covariance=covariance,
        use_t=bool(res.use_t),
        fitted=np.asarray(res.fittedvalues, dtype=float),
        resid=np.asarray(res.resid, dtype=float),
    )
