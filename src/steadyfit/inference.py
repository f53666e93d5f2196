"""Restriction tests, the delta method and plausibility verdicts.

Distributions: the F test of the restriction uses F(q, N-k) from the
restricted and unrestricted sums of squares (classical); the Wald test uses
chi-square(q) with the run's covariance; intervals and z-tests for derived
quantities use the normal distribution.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from .design import Design
from .equations import ModelForm, VectorMap
from .estimators import Fit
from .findings import BandStatus, CrossCheckResult, Estimate, ShareVerdict, TestResult


def delta_method(vmap: VectorMap, coef: np.ndarray, cov: np.ndarray) -> tuple[np.ndarray,
                                                                             np.ndarray]:
    """Values of ``vmap`` at ``coef`` and their covariance ``J V J'``.

    Notes
    -----
    First-order approximation: ``Var g(c) ~ J(c) Var(c) J(c)'`` with the
    analytic Jacobian ``J`` of the map.
    """
    value = np.asarray(vmap.value(coef), dtype=float)
    jac = np.atleast_2d(vmap.jacobian(coef))
    return value, jac @ cov @ jac.T


def normal_estimate(name: str, value: float, se: float, confidence: float,
                    exact: tuple[float, float] | None = None) -> Estimate:
    """An estimate with a normal-approximation interval at ``confidence``."""
    q = float(stats.norm.ppf(0.5 + confidence / 2))
    return Estimate(name, float(value), float(se), float(value - q * se), float(value + q * se),
                    confidence, *(exact if exact else (None, None)))


def restriction_tests(design: Design, unrestricted: Fit, restricted: Fit
                      ) -> tuple[TestResult | None, TestResult | None]:
    """F test (classical, from sums of squares) and Wald test (run's covariance) of R b = 0.

    Both are None for a form that imposes no restriction.
    """
    if not design.form.restricts:
        return None, None
    r = design.restriction
    q = r.shape[0]
    null = design.form.restriction_text
    df_resid = unrestricted.df_resid
    f_stat = ((restricted.ssr - unrestricted.ssr) / q) / (unrestricted.ssr / df_resid)
    f_test = TestResult("F test of the restriction", float(f_stat),
                        float(stats.f.sf(f_stat, q, df_resid)), (float(q), df_resid), "F", null)
    diff = r @ unrestricted.coef
    middle = r @ unrestricted.cov @ r.T
    w_stat = float(diff @ np.linalg.solve(middle, diff))
    wald = TestResult(f"Wald test of the restriction ({unrestricted.covariance} covariance)",
                      w_stat, float(stats.chi2.sf(w_stat, q)), (float(q),), "chi2", null)
    return f_test, wald


def band_status(low: float, high: float, band: tuple[float, float]) -> BandStatus:
    """Where an interval lies relative to a band: inside it, overlapping it, or outside it."""
    if low >= band[0] and high <= band[1]:
        return "inside"
    if high < band[0] or low > band[1]:
        return "outside"
    return "overlaps"


def z_test(name: str, z: float, null: str) -> TestResult:
    """A two-sided test of a statistic that is standard normal under ``null``."""
    return TestResult(name, float(z), float(2 * stats.norm.sf(abs(z))), (), "normal", null)


def point_test(est: Estimate, point: float) -> TestResult:
    """Two-sided z-test of ``est.name = point``."""
    z = (est.value - point) / est.se if est.se > 0 else np.inf
    return z_test(f"z test of {est.name} = {point:.4g}", z, f"{est.name} = {point:.4g}")


def implied_parameters(form: ModelForm, restricted: Fit, confidence: float,
                       bands: dict[str, tuple[float, float]], points: dict[str, float]
                       ) -> tuple[tuple[ShareVerdict, ...], tuple[Estimate, ...], str | None]:
    """Parameters implied by the restricted slopes.

    Returns the judged shares (with their sum where there are two), the speed
    of convergence and half-life (growth forms), and the reason the estimates
    imply no ordinary parameters (None when they do).
    """
    c, v = restricted.slopes()
    pmap = form.parameters
    values, cov = delta_method(pmap.forward, c, v)
    estimates: list[Estimate] = []
    coef_ci = restricted.conf_int(confidence)[1:]
    for i, name in enumerate(pmap.names):
        exact = None
        if name in pmap.single:
            j = pmap.single[name]
            ends = []
            for bound in coef_ci[j]:
                at = c.copy()
                at[j] = bound
                if pmap.domain(at) <= 0:
                    break
                ends.append(float(pmap.forward.value(at)[i]))
            if len(ends) == 2:
                exact = (min(ends), max(ends))
        estimates.append(normal_estimate(name, values[i], np.sqrt(cov[i, i]), confidence, exact))
    share_idx = [pmap.names.index(s) for s in pmap.shares]
    if len(share_idx) > 1:
        ones = np.zeros(len(values))
        ones[share_idx] = 1.0
        estimates.append(normal_estimate("+".join(pmap.shares), values[share_idx].sum(),
                                         np.sqrt(ones @ cov @ ones), confidence))
    speed = tuple(e for e in estimates if e.name == "lam")
    if speed:
        lam = speed[0]
        # half-life ln 2 / lam; its exact interval maps the ends of lam's (decreasing map)
        exact = None
        if lam.exact_low is not None and lam.exact_high is not None and lam.exact_low > 0:
            exact = (math.log(2) / lam.exact_high, math.log(2) / lam.exact_low)
        ok = lam.value > 0  # nan or a non-positive speed has no half-life
        speed += (normal_estimate("half_life", math.log(2) / lam.value if ok else math.nan,
                                  math.log(2) / lam.value**2 * lam.se if ok else math.nan,
                                  confidence, exact),)
    problem = pmap.problem(c)
    verdicts = []
    for est in (e for e in estimates if e.name != "lam"):
        band = bands.get(est.name)
        point = points.get(est.name)
        verdicts.append(ShareVerdict(
            estimate=est,
            band=band,
            band_status=band_status(est.low, est.high, band) if band else None,
            point=point,
            point_test=point_test(est, point) if point is not None else None,
            interval_reaches_one=bool(est.high >= 1) and (est.name == "alpha" or "+" in est.name),
        ))
    return tuple(verdicts), speed, problem


def unrestricted_shares(form: ModelForm, unrestricted: Fit, confidence: float
                        ) -> tuple[tuple[Estimate, ...], CrossCheckResult | None]:
    """Shares from the unrestricted investment slopes, and the cross-check with n + g + delta."""
    c, v = unrestricted.slopes()
    check = form.crosscheck
    if check is None:
        return (), None
    values, cov = delta_method(check.shares, c, v)
    shares = tuple(normal_estimate(n, values[i], np.sqrt(cov[i, i]), confidence)
                   for i, n in enumerate(check.shares.names))
    gap_map = VectorMap(
        (f"{check.quantity} gap",),
        lambda b: check.from_rates.value(b) - check.from_growth.value(b),
        lambda b: np.atleast_2d(check.from_rates.jacobian(b)) - np.atleast_2d(
            check.from_growth.jacobian(b)),
    )
    found = []
    for vmap in (check.from_rates, check.from_growth, gap_map):
        val, var = delta_method(vmap, c, v)
        found.append(normal_estimate(vmap.names[0], val[0], np.sqrt(var[0, 0]), confidence))
    gap = found[2]
    z = gap.value / gap.se if gap.se > 0 else np.inf
    test = z_test(f"z test that both ways give the same {check.quantity}", z,
                  f"{check.quantity} from investment slopes = {check.quantity} from the "
                  "n+g+d slope")
    return shares, CrossCheckResult(check.quantity, found[0], found[1], gap, test)
