"""Structural estimates of the parameters: nonlinear least squares and minimum distance.

Both are written once for every model form: the form's ``inverse`` map turns
parameters into restricted slopes, and ``unrestricted_from_restricted`` into
unrestricted ones, so no form detail lives here.

Nonlinear least squares fits the restricted equation with the parameters
themselves as unknowns (scipy's ``least_squares``); classical standard errors
are ``s^2 (G'G)^-1`` with ``G`` the Jacobian of the fitted values, robust ones
the sandwich ``(G'G)^-1 G' Omega G (G'G)^-1`` with the run's HC or cluster
weights.  Minimum distance fits the parameters to the unrestricted slopes
``b`` with weight ``V^-1`` (their covariance); its minimum is the
over-identification statistic, chi-square with (slopes - parameters) degrees
of freedom.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy import linalg, optimize
from scipy.special import chdtrc

from .design import Design
from .equations import ModelForm
from .errors import EstimationError
from .estimators import Fit, cluster_count, covariance_problem
from .findings import Estimate, MinimumDistanceFit, NonlinearFit, TestResult
from .inference import normal_estimate

_TOL = 1e-15  # tight: structural estimates are compared with the linear mapping to 1e-6


def numeric_jacobian(fn: Callable[[np.ndarray], np.ndarray], x: np.ndarray) -> np.ndarray:
    """Central differences, accurate to about 1e-10 for smooth maps of order one."""
    cols = []
    for j in range(len(x)):
        h = 1e-6 * max(1.0, abs(x[j]))
        up, down = x.copy(), x.copy()
        up[j] += h
        down[j] -= h
        cols.append((fn(up) - fn(down)) / (2 * h))
    return np.column_stack(cols)


def nonlinear_least_squares(design: Design, start: np.ndarray, const: float,
                            covariance: str, confidence: float,
                            max_evaluations: int = 2000) -> NonlinearFit:
    """Fit the restricted equation directly in the structural parameters.

    Parameters
    ----------
    start
        Starting parameters (from the linear restricted fit).
    const
        Starting intercept.
    covariance
        The run's covariance: ``classical`` also reports HC1 as the robust one.
    """
    form = design.form
    where = design.where
    x = design.x_restricted[:, 1:]
    y = design.y

    def fitted(theta: np.ndarray) -> np.ndarray:
        return theta[0] + x @ form.parameters.inverse(theta[1:])

    def resid(theta: np.ndarray) -> np.ndarray:
        return y - fitted(theta)

    x0 = np.concatenate([[const], start])
    if not np.all(np.isfinite(resid(x0))):
        raise EstimationError("cannot start nonlinear least squares: the starting values give "
                              "no finite fitted values", where)
    with np.errstate(all="ignore"):
        res = optimize.least_squares(resid, x0, jac=lambda t: -numeric_jacobian(fitted, t),
                                     method="trf", xtol=_TOL, ftol=_TOL, gtol=_TOL,
                                     max_nfev=max_evaluations)
    if res.status <= 0 or not np.all(np.isfinite(res.x)):
        raise EstimationError(
            f"nonlinear least squares did not converge after {res.nfev} evaluations "
            f"({res.message}); raise inference.max_evaluations or check the data", where)
    theta = res.x
    problem = form.parameters.problem(form.parameters.inverse(theta[1:]))
    if problem is not None:
        raise EstimationError(f"nonlinear least squares ended where the model implies {problem}",
                              where)
    g = numeric_jacobian(fitted, theta)
    e = resid(theta)
    n, k = g.shape
    bread = np.linalg.inv(g.T @ g)
    classical = bread * (e @ e) / (n - k)
    robust_name = "HC1" if covariance == "classical" else covariance
    robust = _sandwich(g, e, bread, robust_name, design.clusters)
    n_clusters = cluster_count(design.clusters) if robust_name == "cluster" else None
    names = form.parameters.names
    return NonlinearFit(
        estimates=_estimates(names, theta[1:], classical[1:, 1:], confidence,
                             covariance_problem(classical)),
        robust=_estimates(names, theta[1:], robust[1:, 1:], confidence,
                          covariance_problem(robust, n_clusters)),
        robust_covariance=robust_name,
        intercept=float(theta[0]),
        ssr=float(e @ e),
        evaluations=int(res.nfev),
    )


def _sandwich(g: np.ndarray, e: np.ndarray, bread: np.ndarray, kind: str,
              clusters: np.ndarray | None) -> np.ndarray:
    n, k = g.shape
    if kind == "cluster":
        if clusters is None:
            raise ValueError("cluster covariance needs cluster labels")
        labels = np.asarray(clusters).astype(str)
        groups = np.unique(labels)
        meat = np.zeros((k, k))
        for label in groups:
            s = g[labels == label].T @ e[labels == label]
            meat += np.outer(s, s)
        m = len(groups)
        meat *= m / (m - 1) * (n - 1) / (n - k)
        return bread @ meat @ bread
    lever = np.einsum("ij,jk,ik->i", g, bread, g)
    weight = {"HC0": e**2, "HC1": e**2 * n / (n - k), "HC2": e**2 / (1 - lever),
              "HC3": e**2 / (1 - lever) ** 2}[kind]
    return bread @ (g.T * weight) @ g @ bread


def _estimates(names: tuple[str, ...], values: np.ndarray, cov: np.ndarray,
               confidence: float, reason: str | None = None) -> tuple[Estimate, ...]:
    return tuple(normal_estimate(n, values[i], cov[i, i], confidence, reason=reason)
                 for i, n in enumerate(names))


def minimum_distance(form: ModelForm, unrestricted: Fit, start: np.ndarray,
                     confidence: float, where: str = "") -> MinimumDistanceFit | None:
    """Parameters closest to the unrestricted slopes in the metric of their covariance.

    None for a form without a restriction (nothing is over-identified).  When the
    covariance of the unrestricted slopes is singular it cannot serve as a weight:
    the fit is then returned with every estimate and the test not available.
    """
    if not form.restricts:
        return None
    b, v = unrestricted.slopes()
    names = form.parameters.names
    overid_name = "over-identification test (minimum distance)"
    null = "the unrestricted slopes satisfy the model's restriction"
    reason = unrestricted.cov_problem
    lower = None
    if reason is None:
        try:
            lower = linalg.cholesky(v, lower=True)
        except linalg.LinAlgError:
            reason = "the covariance of the unrestricted slopes is singular"
    if lower is None:
        why = f"minimum distance needs an invertible weight: {reason}"
        return MinimumDistanceFit(
            tuple(Estimate(n, math.nan, math.nan, math.nan, math.nan, confidence, reason=why)
                  for n in names),
            TestResult.not_available(overid_name, null, why, "chi2"), unrestricted.covariance,
            why)

    def whitened(theta: np.ndarray) -> np.ndarray:
        implied = form.unrestricted_from_restricted(form.parameters.inverse(theta))
        return linalg.solve_triangular(lower, b - implied, lower=True)

    with np.errstate(all="ignore"):
        res = optimize.least_squares(whitened, start,
                                     jac=lambda t: numeric_jacobian(whitened, t),
                                     method="trf", xtol=_TOL, ftol=_TOL, gtol=_TOL,
                                     max_nfev=2000)
    if res.status <= 0:
        raise EstimationError(f"minimum distance did not converge ({res.message})", where)
    jac = numeric_jacobian(whitened, res.x)
    cov = np.linalg.inv(jac.T @ jac)
    stat = float(whitened(res.x) @ whitened(res.x))
    df = len(b) - len(res.x)
    test = TestResult(overid_name, stat, float(chdtrc(df, stat)), (float(df),), "chi2", null)
    return MinimumDistanceFit(_estimates(names, res.x, cov, confidence), test,
                              unrestricted.covariance)
