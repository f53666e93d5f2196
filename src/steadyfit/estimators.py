"""Estimators.  Ordinary least squares with statsmodels' formulas, in numpy.

Each estimator returns a frozen :class:`Fit`; choosing another covariance
means fitting again, never changing a record.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np
import pandas as pd
from scipy.special import ndtr, ndtri, stdtr, stdtrit

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
    resid: np.ndarray
    n_clusters: int | None = None
    cov_problem: str | None = None  # why the covariance cannot support tests (singular ...)

    def fitted(self, x: np.ndarray) -> np.ndarray:
        """The fitted values on the design ``x`` the fit was made on (kept as the design's
        recipe, not as one more array per fit)."""
        return x @ self.coef

    def __repr__(self) -> str:
        clusters = f", {self.n_clusters} clusters" if self.n_clusters is not None else ""
        return (f"Fit(OLS, {self.covariance} covariance{clusters}, {self.nobs} observations, "
                f"{len(self.names)} coefficients, R\u00b2 {self.rsquared:.3f})")

    @property
    def se(self) -> np.ndarray:
        return np.sqrt(np.diag(self.cov))

    @property
    def tvalues(self) -> np.ndarray:
        return self.coef / self.se

    @property
    def pvalues(self) -> np.ndarray:
        """Two-sided p-values (the distribution tails of scipy.special, without loading
        scipy.stats)."""
        t = -np.abs(self.tvalues)
        return 2 * (stdtr(self.df_resid, t) if self.use_t else ndtr(t))

    def conf_int(self, confidence: float) -> np.ndarray:
        level = 0.5 + confidence / 2
        q = stdtrit(self.df_resid, level) if self.use_t else ndtri(level)
        return np.column_stack([self.coef - q * self.se, self.coef + q * self.se])

    def params(self) -> pd.Series:
        return pd.Series(self.coef, index=list(self.names), name="coef")

    def cov_frame(self) -> pd.DataFrame:
        return pd.DataFrame(self.cov, index=list(self.names), columns=list(self.names))

    def slopes(self) -> tuple[np.ndarray, np.ndarray]:
        """Coefficients and covariance without the constant (first column)."""
        return self.coef[1:], self.cov[1:, 1:]


def cluster_codes(clusters: np.ndarray | None) -> np.ndarray | None:
    """Cluster labels (compared as text) as integer codes 0..G-1, in order of appearance."""
    if clusters is None:
        return None
    return np.asarray(pd.factorize(pd.Series(clusters).astype(str))[0])


def cluster_count(clusters: np.ndarray | None) -> int | None:
    """How many distinct clusters the labels hold (labels compared as text); None without."""
    return None if clusters is None else len(np.unique(np.asarray(clusters).astype(str)))


def covariance_problem(cov: np.ndarray, n_clusters: int | None = None) -> str | None:
    """Why ``cov`` cannot serve for tests and derived standard errors, or None.

    A cluster-robust covariance from G clusters has rank at most G - 1 (the
    scores sum to zero within the sample), so with G no larger than the number
    of coefficients it is singular by construction; otherwise the correlation
    matrix is checked for non-finite entries and a (numerically) zero eigenvalue.
    """
    k = cov.shape[0]
    if n_clusters is not None and n_clusters <= k:
        return (f"the cluster-robust covariance from {n_clusters} clusters has rank at most "
                f"{n_clusters - 1}, below the {k} coefficients it must cover (singular)")
    if not np.all(np.isfinite(cov)):
        return "the covariance of the coefficients is not finite"
    var = np.diag(cov)
    if np.any(var <= 0):
        return "a coefficient has a variance of zero or less"
    scale = np.sqrt(var)
    eig = np.linalg.eigvalsh(cov / np.outer(scale, scale))
    if eig.min() <= 1e-10 * max(eig.max(), 1.0):
        return "the covariance of the coefficients is singular"
    return None


# Singular values below this share of the largest count as zero in the pseudo-inverse
# (statsmodels' default for its OLS).
_RCOND = 1e-15


def fit_ols(y: np.ndarray, x: np.ndarray, names: tuple[str, ...], labels: tuple[str, ...],
            covariance: CovarianceName = "classical",
            clusters: np.ndarray | None = None) -> Fit:
    """Ordinary least squares with the chosen covariance.

    The computation is statsmodels' own for its OLS (a pseudo-inverse from the singular
    value decomposition; the classical, HC0-HC3 and cluster sandwich with its small-sample
    correction), written with numpy so that a run needs no import of statsmodels' model
    classes; the tests hold every number against statsmodels."""
    if covariance not in COVARIANCES:
        raise ValueError(f"unknown covariance '{covariance}'; valid: {', '.join(COVARIANCES)}")
    if covariance == "cluster" and clusters is None:
        raise ValueError("cluster covariance needs cluster labels")
    y = np.asarray(y, dtype=float)
    x = np.asarray(x, dtype=float)
    u, s, vt = np.linalg.svd(x, full_matrices=False)
    inverse = np.where(s > _RCOND * s.max(), 1.0 / np.where(s > 0, s, 1.0), 0.0)
    pinv = np.dot(vt.T, inverse[:, None] * u.T)
    coef = np.dot(pinv, y)
    resid = y - np.dot(x, coef)
    nobs, k = x.shape
    rank = int(np.count_nonzero(inverse))
    df_resid = float(nobs - rank)
    ssr = float(np.dot(resid, resid))
    bread = np.dot(pinv, pinv.T)
    constant = bool(np.any((np.ptp(x, axis=0) == 0) & np.any(x != 0, axis=0)))
    centred = y - y.mean() if constant else y
    rsquared = 1.0 - ssr / float(np.dot(centred, centred))
    n_clusters = None
    if covariance == "classical":
        cov = bread * (ssr / df_resid)
    elif covariance == "cluster":
        n_clusters = cluster_count(clusters)
        codes = cluster_codes(clusters)
        assert codes is not None
        groups = int(codes.max()) + 1
        scores = x * resid[:, None]
        sums = np.column_stack([np.bincount(codes, scores[:, j], groups) for j in range(k)])
        cov = bread @ (sums.T @ sums) @ bread
        cov *= (groups / (groups - 1.0)) * ((nobs - 1.0) / (nobs - k))
    else:
        scale = resid ** 2
        if covariance == "HC1":
            scale = scale * (nobs / df_resid)
        elif covariance in ("HC2", "HC3"):
            leverage = np.einsum("ij,ik,kj->i", x, x, bread)
            scale = (scale / (1 - leverage) if covariance == "HC2"
                     else (resid / (1 - leverage)) ** 2)
        cov = np.dot(pinv, scale[:, None] * pinv.T)
    return Fit(
        names=names,
        labels=labels,
        coef=coef,
        cov=cov,
        nobs=nobs,
        df_resid=df_resid,
        rsquared=rsquared,
        rsquared_adj=1.0 - (nobs - int(constant)) / df_resid * (1.0 - rsquared),
        ser=float(np.sqrt(ssr / df_resid)),
        ssr=ssr,
        covariance=covariance,
        use_t=covariance == "classical",
        resid=resid,
        n_clusters=n_clusters,
        cov_problem=covariance_problem(cov, n_clusters),
    )
