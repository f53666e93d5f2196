"""Restriction tests, the delta method and plausibility verdicts.

Distributions: the F test of the restriction uses F(q, N-k) from the
restricted and unrestricted sums of squares (classical); the Wald test uses
chi-square(q) with the run's covariance; intervals and z-tests for derived
quantities use the normal distribution.

A statistic is only ever computed from numbers that exist: a variance that is
negative or not finite, or a covariance that is singular (see
:func:`steadyfit.estimators.covariance_problem`), gives an estimate without a
standard error and a test that is "not available", each with its reason.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace

import numpy as np
from scipy.special import ndtr, ndtri

from .design import Design
from .equations import ModelForm, VectorMap
from .estimators import Fit
from .findings import BandStatus, CrossCheckResult, Estimate, ShareVerdict, TestResult

# A computed variance this far below zero (relative to the squared value) is rounding, not a
# negative variance: common practice, no source.
_ROUNDING = 1e-12


def delta_method(vmap: VectorMap, coef: np.ndarray, cov: np.ndarray) -> tuple[np.ndarray,
                                                                             np.ndarray]:
    """Values of ``vmap`` at ``coef`` and their covariance ``J V J'``.

    Notes
    -----
    First-order approximation: ``Var g(c) ~ J(c) Var(c) J(c)'`` with the
    analytic Jacobian ``J`` of the map.
    """
    with np.errstate(all="ignore"):
        value = np.asarray(vmap.value(coef), dtype=float)
        jac = np.atleast_2d(vmap.jacobian(coef))
        return value, jac @ cov @ jac.T


def standard_error(var: float, value: float = 1.0) -> tuple[float, str | None]:
    """The square root of a variance, or NaN and the reason it has none."""
    if not math.isfinite(var):
        return math.nan, "its variance is not finite"
    if var < 0:
        if var >= -_ROUNDING * max(1.0, value * value):
            return 0.0, None
        return math.nan, f"its estimated variance is negative ({var:.3g})"
    return math.sqrt(var), None


def normal_quantile(confidence: float) -> float:
    """The two-sided standard normal critical value at ``confidence``."""
    return float(ndtri(0.5 + confidence / 2))


def normal_estimate(name: str, value: float, var: float, confidence: float,
                    exact: tuple[float, float] | None = None,
                    reason: str | None = None) -> Estimate:
    """An estimate with a normal-approximation interval at ``confidence``.

    ``var`` is the (delta-method) variance; when it is negative or not finite,
    or ``reason`` is given (the covariance it comes from is singular), the
    estimate keeps its value but has no standard error or interval.
    """
    value = float(value)
    if not math.isfinite(value):
        return Estimate(name, math.nan, math.nan, math.nan, math.nan, confidence,
                        reason=reason or "the value is not finite")
    se, why = (math.nan, reason) if reason else standard_error(float(var), value)
    if why is not None:
        return Estimate(name, value, math.nan, math.nan, math.nan, confidence,
                        reason=f"no standard error: {why}")
    q = normal_quantile(confidence)
    return Estimate(name, value, se, value - q * se, value + q * se, confidence,
                    *(exact if exact else (None, None)))


def not_ordinary(name: str, confidence: float, reason: str, label: str) -> Estimate:
    """A parameter the estimates do not define as an ordinary number (shown as ``label``)."""
    return Estimate(name, math.nan, math.nan, math.nan, math.nan, confidence, reason=reason,
                    missing=label)


def z_test(name: str, z: float, null: str) -> TestResult:
    """A two-sided test of a statistic that is standard normal under ``null``."""
    if not math.isfinite(z):
        return TestResult.not_available(name, null, "the statistic is not finite")
    return TestResult(name, float(z), float(2 * ndtr(-abs(z))), (), "normal", null)


def z_test_of(est: Estimate, point: float, name: str, null: str) -> TestResult:
    """z-test of ``est = point``; not available when the estimate has no standard error."""
    if not est.has_value:
        return TestResult.not_available(name, null, est.reason or "the estimate is not available")
    if not est.has_se:
        return TestResult.not_available(name, null, est.reason or "no standard error")
    if est.se <= 0:
        return TestResult.not_available(name, null, "the standard error is zero")
    return z_test(name, (est.value - point) / est.se, null)


def restriction_tests(design: Design, unrestricted: Fit, restricted: Fit
                      ) -> tuple[TestResult | None, TestResult | None]:
    """F test (classical, from sums of squares) and Wald test (run's covariance) of R b = 0.

    Both are None for a form that imposes no restriction.
    """
    from scipy.special import fdtrc

    if not design.form.restricts:
        return None, None
    r = design.restriction
    q = r.shape[0]
    null = design.restriction_text
    df_resid = unrestricted.df_resid
    f_name = "F test of the restriction"
    with np.errstate(all="ignore"):
        f_stat = ((restricted.ssr - unrestricted.ssr) / q) / (unrestricted.ssr / df_resid)
    if not math.isfinite(f_stat) or unrestricted.ssr <= 0:
        f_test = TestResult.not_available(f_name, null, "the unrestricted fit leaves no residual "
                                          "variance", "F", (float(q), df_resid))
    else:
        f_stat = max(float(f_stat), 0.0)
        f_test = TestResult(f_name, f_stat, float(fdtrc(q, df_resid, f_stat)),
                            (float(q), df_resid), "F", null)
    wald = wald_test(f"Wald test of the restriction ({unrestricted.covariance} covariance)",
                     null, r, unrestricted.coef, unrestricted.cov, unrestricted.cov_problem)
    return f_test, wald


def wald_test(name: str, null: str, r: np.ndarray, coef: np.ndarray, cov: np.ndarray,
              cov_problem: str | None) -> TestResult:
    """Wald chi-square test of ``r @ coef = 0``; not available when the covariance cannot be
    used or the restriction's variance is not positive."""
    from scipy.special import chdtrc

    r = np.atleast_2d(r)
    q = r.shape[0]
    diff = r @ coef
    middle = r @ cov @ r.T
    if cov_problem is not None:
        return TestResult.not_available(name, null, cov_problem, "chi2", (float(q),))
    if not np.all(np.isfinite(middle)) or np.linalg.eigvalsh(middle).min() <= 0:
        return TestResult.not_available(name, null, "the variance of the restriction is not "
                                        "positive", "chi2", (float(q),))
    stat = float(diff @ np.linalg.solve(middle, diff))
    return TestResult(name, stat, float(chdtrc(q, stat)), (float(q),), "chi2", null)


def band_status(low: float, high: float, band: tuple[float, float]) -> BandStatus | None:
    """Where an interval lies relative to a band: inside, overlapping or outside it (None when
    there is no interval)."""
    if math.isnan(low) or math.isnan(high):
        return None
    if low >= band[0] and high <= band[1]:
        return "inside"
    if high < band[0] or low > band[1]:
        return "outside"
    return "overlaps"


def point_test(est: Estimate, point: float) -> TestResult:
    """Two-sided z-test of ``est.name = point``."""
    return z_test_of(est, point, f"z test of {est.name} = {point:.4g}",
                     f"{est.name} = {point:.4g}")


def _endpoint_interval(vmap: VectorMap, i: int, c: np.ndarray, j: int, ends: np.ndarray,
                       domain: Callable[[np.ndarray], np.ndarray]
                       ) -> tuple[float, float] | None:
    """Map the ends of coefficient j's interval through parameter i (monotone in it)."""
    out = []
    for bound in ends:
        at = c.copy()
        at[j] = bound
        if domain(at) <= 0:
            return None
        with np.errstate(all="ignore"):
            out.append(float(vmap.value(at)[i]))
    return (min(out), max(out)) if all(math.isfinite(x) for x in out) else None


def speed_estimates(b0: float, se_b0: float, ends: np.ndarray, span: float, confidence: float,
                    reason: str | None) -> tuple[Estimate, Estimate]:
    """Speed of convergence ``lam = -ln(1 + b0)/T`` and half-life ``ln 2 / lam``.

    Notes
    -----
    ``lam`` is reported as the number it is; negative means divergence. Its
    delta-method interval is normal; its endpoint interval maps the ends of
    ``b0``'s interval (an end at or below -1 makes it unbounded above). The
    half-life exists only for ``lam > 0``; both of its intervals map the ends
    of the corresponding ``lam`` interval through the decreasing ``ln 2 / lam``,
    so a ``lam`` interval reaching zero leaves the half-life unbounded above.
    """
    ln2 = math.log(2)
    if not b0 > -1:
        why = "the coefficient on initial income is \u22121 or below, so \u03bb is not defined"
        return (not_ordinary("lam", confidence, why, "not defined"),
                not_ordinary("half_life", confidence, why, "none"))

    def lam_of(b: float) -> float:
        return -math.log1p(b) / span if b > -1 else math.inf

    lam = lam_of(b0)
    var = (se_b0 / ((1 + b0) * span)) ** 2 if reason is None else math.nan
    lo_b, hi_b = sorted(float(e) for e in ends)
    exact = (lam_of(hi_b), lam_of(lo_b)) if reason is None else None
    est = normal_estimate("lam", lam, var, confidence, exact, reason)
    if lam < 0:
        est = replace(est, remark="divergence")
    if not lam > 0:
        half = not_ordinary("half_life", confidence, "no convergence (\u03bb is not positive)",
                            "none")
        return est, half

    def half_of(x: float) -> float:
        return ln2 / x if x > 0 else math.inf

    value = ln2 / lam
    if not est.has_se:
        return est, Estimate("half_life", value, math.nan, math.nan, math.nan, confidence,
                             reason=est.reason)
    ex = None
    if est.exact_low is not None and est.exact_high is not None:
        ex = (half_of(est.exact_high), half_of(est.exact_low))
    return est, Estimate("half_life", value, ln2 / lam**2 * est.se, half_of(est.high),
                         half_of(est.low), confidence, *(ex if ex else (None, None)))


def implied_parameters(form: ModelForm, restricted: Fit, confidence: float,
                       bands: dict[str, tuple[float, float]], points: dict[str, float]
                       ) -> tuple[tuple[ShareVerdict, ...], tuple[Estimate, ...], str | None]:
    """Parameters implied by the restricted slopes.

    Returns the judged shares (with their sum where there are two), the speed
    of convergence and half-life (growth forms), and the reason the estimates
    imply no ordinary shares (None when they do).
    """
    c, v = restricted.slopes()
    return implied_from_slopes(form, c, v, restricted.conf_int(confidence)[1:],
                               restricted.cov_problem, confidence, bands, points)


def implied_from_slopes(form: ModelForm, c: np.ndarray, v: np.ndarray, coef_ci: np.ndarray,
                        reason: str | None, confidence: float,
                        bands: dict[str, tuple[float, float]], points: dict[str, float]
                        ) -> tuple[tuple[ShareVerdict, ...], tuple[Estimate, ...], str | None]:
    """:func:`implied_parameters` from restricted slopes ``c``, their covariance ``v`` and
    intervals ``coef_ci`` (one row per slope), whatever estimator gave them; ``reason`` says
    why the covariance cannot be used (None when it can)."""
    pmap = form.parameters
    problem = pmap.problem(c)
    label = problem.split(":")[0] if problem else ""
    values, cov = delta_method(pmap.forward, c, v)
    estimates: list[Estimate] = []
    for i, name in enumerate(pmap.names):
        if name == "lam":
            continue
        if problem is not None:
            estimates.append(not_ordinary(name, confidence, problem, label))
            continue
        exact = None
        if name in pmap.single and reason is None:
            j = pmap.single[name]
            exact = _endpoint_interval(pmap.forward, i, c, j, coef_ci[j], pmap.domain)
        estimates.append(normal_estimate(name, values[i], cov[i, i], confidence, exact, reason))
    share_idx = [pmap.names.index(s) for s in pmap.shares]
    if len(share_idx) > 1:
        total = "+".join(pmap.shares)
        if problem is not None:
            estimates.append(not_ordinary(total, confidence, problem, label))
        else:
            ones = np.zeros(len(values))
            ones[share_idx] = 1.0
            estimates.append(normal_estimate(total, values[share_idx].sum(), ones @ cov @ ones,
                                             confidence, reason=reason))
    speed: tuple[Estimate, ...] = ()
    if "lam" in pmap.names:
        j = pmap.single["lam"]
        speed = speed_estimates(float(c[j]), float(np.sqrt(max(v[j, j], 0.0))), coef_ci[j],
                                float(form.span or math.nan), confidence, reason)
    verdicts = []
    for est in estimates:
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
    reason = unrestricted.cov_problem
    values, cov = delta_method(check.shares, c, v)
    shares = tuple(normal_estimate(n, values[i], cov[i, i], confidence, reason=reason)
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
        found.append(normal_estimate(vmap.names[0], val[0], var[0, 0], confidence,
                                     reason=reason))
    test = z_test_of(found[2], 0.0, f"z test that both ways give the same {check.quantity}",
                     f"{check.quantity} from investment slopes = {check.quantity} from the "
                     "n + g + \u03b4 slope")
    return shares, CrossCheckResult(check.quantity, found[0], found[1], found[2], test)
