"""Implied shares from a printed regression table alone: coefficients and standard errors,
no data.

A referee has a manuscript's table: the slopes of the levels or growth form,
restricted or not, their standard errors and rarely their covariances.  The
shares (and, for the growth form, the speed of convergence) follow from the
form table's maps (:mod:`steadyfit.equations`) exactly as for an estimated
equation; their delta-method standard errors need the covariance of the
slopes.  Where a correlation is not printed, the variance ``g'Vg`` is linear in
it, so over every correlation in [-1, 1] the standard error runs between two
ends: the larger is the conservative one (wider intervals, fewer rejections).
With no correlation printed the ends are exact: the largest is
``sum |g_i s_i|`` (all coefficients moving together) and the smallest
``max(0, 2 max |g_i s_i| - sum |g_i s_i|)``; with some printed, the ends are
taken over the corners of the free correlations (an outer bound, as not every
corner is a valid covariance matrix).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
from scipy.special import ndtr

from ..equations import ModelForm, find_form
from ..errors import InputError, did_you_mean
from ..inference import band_status, normal_quantile
from .steady import capital_output, convergence_rate

# The steady-state capital-output ratio of rich economies is near 3 (common practice, no
# source); outside this range an implied ratio deserves a second look.
CAPITAL_OUTPUT_RANGE = (1.5, 4.5)


@dataclass(frozen=True)
class PrintedTable:
    """What a manuscript prints: the form, whether the restriction is imposed, each slope and
    its standard error by the form table's regressor names, any printed correlations
    between slopes, and the sample means the plausibility checks need."""

    form: str
    capital: tuple[str, ...]
    restricted: bool
    coefficients: Mapping[str, float]
    standard_errors: Mapping[str, float]
    correlations: Mapping[tuple[str, str], float] = field(default_factory=dict)
    span: float | None = None
    n_g_delta: float | None = None  # the sample's mean n + g + delta
    s_k: float | None = None  # the sample's mean investment rate
    confidence: float = 0.95
    bands: Mapping[str, tuple[float, float]] = field(
        default_factory=lambda: {"alpha": (0.25, 0.40), "beta": (0.20, 0.45)})
    level: float = 0.05
    title: str = ""  # the paper and table, as the referee names them
    points: Mapping[str, float] = field(
        default_factory=lambda: {"alpha": 1 / 3, "beta": 1 / 3})  # values each share is tested at


@dataclass(frozen=True)
class Spread:
    """A standard error known up to the unprinted correlations: ``low`` to ``high`` (equal
    when everything needed is printed)."""

    low: float
    high: float

    @property
    def known(self) -> bool:
        return self.low == self.high


@dataclass(frozen=True)
class ImpliedValue:
    """One implied quantity: value, standard-error spread, the interval at the conservative
    end (and at the other end), and its band verdict at either end."""

    name: str
    value: float
    se: Spread
    low: float
    high: float
    narrow_low: float
    narrow_high: float
    band: tuple[float, float] | None = None
    band_status: str | None = None  # at the conservative end
    band_status_narrow: str | None = None
    reason: str | None = None  # why the value is not available


@dataclass(frozen=True)
class PrintedRestriction:
    """The theory's restriction on unrestricted slopes: the sum, its spread, the z statistic
    and p-value at both ends, and a verdict only when both ends agree."""

    text: str
    total: float
    se: Spread
    p_low: float  # at the smallest standard error
    p_high: float  # at the largest (conservative)
    verdict: str


@dataclass(frozen=True)
class PrintedFindings:
    table: PrintedTable
    form_key: str
    form_description: str
    values: tuple[ImpliedValue, ...]
    restriction: PrintedRestriction | None
    problem: str | None  # no steady state, no convergence: shares are not ordinary
    checks: tuple[str, ...]  # plausibility sentences: lambda, K/Y, bands
    caveats: tuple[str, ...]


def _names(form: ModelForm, restricted: bool) -> tuple[str, ...]:
    return tuple(r.name for r in (form.restricted if restricted else form.unrestricted))


def _read(table: PrintedTable, form: ModelForm) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Slopes, standard errors and the correlation matrix (NaN where not printed)."""
    names = _names(form, table.restricted)
    for key, given in (("coefficients", table.coefficients),
                       ("standard_errors", table.standard_errors)):
        for name in given:
            if name not in names:
                raise InputError(f"'{name}' is not a slope of this form{did_you_mean(name, names)}"
                                 f"; its slopes are {', '.join(names)}", key)
        for name in names:
            if name not in given:
                raise InputError(f"the slope '{name}' is missing", key)
            if not math.isfinite(given[name]):
                raise InputError("must be a finite number", f"{key}.{name}")
    c = np.array([float(table.coefficients[n]) for n in names])
    s = np.array([float(table.standard_errors[n]) for n in names])
    for n, v in zip(names, s, strict=True):
        if not v > 0:
            raise InputError(f"must be positive, not {v:g}", f"standard_errors.{n}")
    r = np.full((len(names), len(names)), np.nan)
    np.fill_diagonal(r, 1.0)
    for (a, b), v in table.correlations.items():
        for n in (a, b):
            if n not in names:
                raise InputError(f"'{n}' is not a slope of this form{did_you_mean(n, names)}",
                                 "correlations")
        if a == b:
            raise InputError(f"'{a}' is paired with itself; a correlation pairs two slopes",
                             "correlations")
        if not -1 <= v <= 1:
            raise InputError(f"a correlation lies in [-1, 1], not {v:g}",
                             f"correlations.{a}.{b}")
        i, j = names.index(a), names.index(b)
        r[i, j] = r[j, i] = v
    # printed correlations that cannot hold together: a fully printed block is no correlation
    # matrix (smallest eigenvalue below zero, beyond rounding)
    for size in range(3, len(names) + 1):
        for block in itertools.combinations(range(len(names)), size):
            sub = r[np.ix_(block, block)]
            if not np.isnan(sub).any() and np.linalg.eigvalsh(sub)[0] < -1e-9:
                raise InputError("the printed correlations of "
                                 + ", ".join(names[k] for k in block)
                                 + " cannot hold together (no covariance matrix has them)",
                                 "correlations")
    return c, s, r


def spread(gradient: np.ndarray, se: np.ndarray, corr: np.ndarray) -> Spread:
    """The standard error of ``gradient . c`` over every value of the unprinted (NaN)
    correlations in [-1, 1]."""
    v = gradient * se
    free = [(i, j) for i, j in itertools.combinations(range(len(v)), 2)
            if math.isnan(corr[i, j]) and v[i] != 0 and v[j] != 0]
    if not free:
        r = np.nan_to_num(corr, nan=0.0)
        sd = math.sqrt(max(float(v @ r @ v), 0.0))
        return Spread(sd, sd)
    relevant = [(i, j) for i, j in itertools.combinations(range(len(v)), 2)
                if v[i] != 0 and v[j] != 0]
    if all(math.isnan(corr[i, j]) for i, j in relevant):  # slopes with no weight do not count
        a = np.abs(v)
        return Spread(max(0.0, 2 * float(a.max()) - float(a.sum())), float(a.sum()))
    ends = []
    for signs in itertools.product((-1.0, 1.0), repeat=len(free)):
        r = np.nan_to_num(corr, nan=0.0)
        for (i, j), sign in zip(free, signs, strict=True):
            r[i, j] = r[j, i] = sign
        ends.append(float(v @ r @ v))
    return Spread(math.sqrt(max(min(ends), 0.0)), math.sqrt(max(max(ends), 0.0)))


def _value(name: str, value: float, gradient: np.ndarray, s: np.ndarray, r: np.ndarray,
           table: PrintedTable) -> ImpliedValue:
    sd = spread(gradient, s, r)
    q = normal_quantile(table.confidence)
    band = table.bands.get(name)
    wide = (value - q * sd.high, value + q * sd.high)
    narrow = (value - q * sd.low, value + q * sd.low)
    return ImpliedValue(name, value, sd, *wide, *narrow, band,
                        band_status(*wide, band) if band else None,
                        band_status(*narrow, band) if band else None)


def _p_values(distance: float, sd: Spread) -> list[float]:
    """Two-sided normal p-values of ``distance`` at the small and the large standard error
    (a zero standard error: 1 when the distance is 0, else 0)."""
    return [float(2 * ndtr(-abs(distance) / e)) if e > 0 else (1.0 if distance == 0 else 0.0)
            for e in (sd.low, sd.high)]


def _restriction(form: ModelForm, c: np.ndarray, s: np.ndarray, r: np.ndarray, level: float
                 ) -> PrintedRestriction:
    w = np.array(form.restriction)
    total = float(w @ c)
    sd = spread(w, s, r)
    ps = _p_values(total, sd)
    if sd.low == 0 and sd.high == 0:
        verdict = "not available: the standard error of the sum is zero"
    elif ps[0] < level and ps[1] < level:
        verdict = f"rejected at {level:g} whatever the unprinted correlations"
    elif ps[0] >= level and ps[1] >= level:
        verdict = f"not rejected at {level:g} whatever the unprinted correlations"
    else:
        verdict = (f"depends on the unprinted correlations: rejected at {level:g} when the "
                   "standard error is at its small end, not at its large end")
    return PrintedRestriction(form.restriction_text(), total, sd, ps[0], ps[1], verdict)


def implied_from_table(table: PrintedTable) -> PrintedFindings:
    """Implied shares (and speed of convergence), their standard-error spreads, the
    restriction, band verdicts and plausibility checks from a printed table."""
    try:
        form = find_form(table.form, table.capital, table.span)
    except ValueError as exc:
        raise InputError(str(exc).split(": ", 1)[1], str(exc).split(":", 1)[0]) from None
    if form.needs_span and not (table.span and table.span > 0):
        raise InputError("the growth form needs the span in years the growth is measured over",
                         "span")
    if not 0 < table.confidence < 1:
        raise InputError(f"must lie between 0 and 1, not {table.confidence:g}", "confidence")
    c, s, r = _read(table, form)
    values: list[ImpliedValue] = []
    restriction = None
    caveats = [
        "standard errors are delta-method approximations from the printed slopes; printed "
        "values are rounded, so the implied values carry that rounding",
    ]
    if table.restricted:
        vmap = form.parameters.forward
        problem = form.parameters.problem(c)
    else:
        if form.crosscheck is None:
            raise InputError("this form has no unrestricted shares", "restricted")
        vmap = form.crosscheck.shares
        restriction = _restriction(form, c, s, r, table.level)
        rates = form.crosscheck.shares.value(c)[: len(form.parameters.shares)]
        total = float(np.sum(rates))
        problem = None if all(math.isfinite(x) for x in rates) and total < 1 else (
            f"no steady state: the investment slopes imply shares summing to {total:.3g}"
            if math.isfinite(total) else "no steady state: the investment slopes imply no "
            "finite shares")
        caveats.append("the restriction is not imposed: the shares come from the investment "
                       "slopes alone; the slope on n + g + delta implies them a second time")
    pairs = r[np.triu_indices(len(c), 1)]
    if np.isnan(pairs).any():
        caveats.append("covariances between slopes are not printed: each standard error is "
                       "given as the range over every unprinted correlation in [-1, 1]; the "
                       "larger end is the conservative one and sets the verdicts")
        if not np.isnan(pairs).all() and len(c) > 2:
            caveats.append("some correlations are printed and others not: a range that needs "
                           "two or more unprinted correlations at once is an outer bound (not "
                           "every combination makes a valid covariance matrix), so its ends "
                           "can be wider than any valid matrix gives")
    vals = vmap.value(c)
    jac = np.atleast_2d(vmap.jacobian(c))
    for i, name in enumerate(vmap.names):
        if problem is not None and name != "lam":
            values.append(ImpliedValue(name, math.nan, Spread(math.nan, math.nan), math.nan,
                                       math.nan, math.nan, math.nan, reason=problem))
            continue
        values.append(_value(name, float(vals[i]), jac[i], s, r, table))
    shares = [v for v in values if v.name in ("alpha", "beta") and math.isfinite(v.value)]
    if len(shares) == 2:
        values.append(_value("alpha+beta", shares[0].value + shares[1].value,
                             jac[0] + jac[1], s, r, table))
    checks = _plausibility(table, values, problem)
    return PrintedFindings(table, form.key, form.description, tuple(values), restriction,
                           problem, checks, tuple(caveats))


def _plausibility(table: PrintedTable, values: list[ImpliedValue], problem: str | None
                  ) -> tuple[str, ...]:
    out = []
    if problem is not None:
        out.append(f"{problem}: the printed slopes imply non-diminishing returns to the "
                   "accumulable factors (the AK limit); no ordinary shares follow"
                   if problem.startswith("no steady state") else
                   f"{problem}; no ordinary shares follow")
    got = {v.name: v for v in values}
    for name in ("alpha", "beta"):
        v = got.get(name)
        if v is not None and v.value < 0:
            out.append(f"{name} = {v.value:.3f} is negative, which no share of income can be: "
                       "the printed slope of that factor has the sign the model rules out, so "
                       "the table contradicts the model rather than calibrating it")
        if v is None or v.band is None or v.band_status is None:
            continue
        lo, hi = v.band
        out.append(f"{name} = {v.value:.3f}: its interval at the conservative end "
                   f"[{v.low:.3f}, {v.high:.3f}] is {_where(v.band_status)} the band "
                   f"[{lo:g}, {hi:g}]" + ("" if v.band_status == v.band_status_narrow else
                                           f" (at the small end: {_where(v.band_status_narrow)})"))
    for name, point in table.points.items():
        v = got.get(name)
        if v is None or not math.isfinite(v.value):
            continue
        ps = _p_values(v.value - point, v.se)
        rejected = [p < table.level for p in ps]
        whatever = "" if v.se.known else " whatever the unprinted correlations"
        verdict = (f"rejected{whatever}" if all(rejected) else
                   f"not rejected{whatever}" if not any(rejected) else
                   "rejected only when the standard error is at its small end")
        ends = f"p = {ps[1]:.3g}" if v.se.known else f"p from {ps[0]:.3g} to {ps[1]:.3g}"
        out.append(f"z test of {name} = {point:.4g}: {verdict} at the {table.level:g} level "
                   f"({ends})")
    a, b = got.get("alpha"), got.get("beta")
    ngd = table.n_g_delta
    if ngd is not None and a is not None and math.isfinite(a.value):
        share = a.value + (b.value if b is not None and math.isfinite(b.value) else 0.0)
        lam = convergence_rate(share, 0.0, ngd)
        out.append(f"with the sample's mean n + g + delta {ngd:g}, the shares imply a speed "
                   f"of convergence of {lam:.4f} a year (half-life "
                   f"{math.log(2) / lam:.0f} years)" if lam > 0 else
                   "the shares leave no convergence at the sample's mean n + g + delta")
        lam_est = got.get("lam")
        if lam_est is not None and math.isfinite(lam_est.value):
            out.append(f"the slope on initial income gives {lam_est.value:.4f} a year; the "
                       "speed the shares imply lies "
                       + ("inside" if lam_est.low <= lam <= lam_est.high else "outside")
                       + " its conservative interval (the implied speed's own uncertainty "
                       "is not counted)")
    if ngd is not None and table.s_k is not None:
        ky = capital_output(table.s_k, ngd, 0.0)
        lo, hi = CAPITAL_OUTPUT_RANGE
        out.append(f"steady-state K/Y at the sample's mean investment rate: {ky:.2f}"
                   + ("" if lo <= ky <= hi else f", outside the usual {lo:g} to {hi:g} "
                      "(common practice, no source)"))
    return tuple(out)


def _where(status: str | None) -> str:
    return {"inside": "inside", "overlaps": "overlapping", "outside": "outside"}.get(
        status or "", "not comparable with")
