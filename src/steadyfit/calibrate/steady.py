"""Steady-state calibration of the model (DOMAIN.md sections 3 and 5): plain functions of the
structural parameters and of investment and workforce-growth rates; no data.

Rates are fractions (0.24, not 24).  ``beta`` is the human-capital share (0 for
the model with physical capital only); ``g_delta`` is g + delta.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError


def convergence_rate(alpha: float, beta: float, n_g_delta: float) -> float:
    """Speed of convergence near the steady state, ``(n + g + delta)(1 - alpha - beta)``."""
    return n_g_delta * (1 - alpha - beta)


def half_life(lam: float) -> float:
    """Years to close half the gap to the steady state: ``ln 2 / lambda``."""
    if lam <= 0:
        raise ValueError("a half-life needs a positive speed of convergence")
    return math.log(2) / lam


def _no_steady_state(alpha: float, beta: float) -> None:
    if not (math.isfinite(alpha) and math.isfinite(beta) and alpha >= 0 and beta >= 0
            and alpha + beta < 1):
        raise InputError(f"alpha + beta = {alpha + beta:.4g}: shares must be non-negative and "
                         "sum to less than 1 for a steady state to exist", "shares")


# Rates are fractions: an investment rate in (0, 1], workforce growth within +-20% a year
# (the bounds of the data checks; common practice, no source).
MAX_WORKFORCE_GROWTH = 0.2


def check_rates(where: str, s_k: float, n: float, s_h: float | None, g_delta: float) -> None:
    """Refuse rates that are not finite fractions in range (a rate in percent among them)."""
    for name, v in (("s_k", s_k), ("s_h", s_h)):
        if v is not None and not (math.isfinite(v) and 0 < v <= 1):
            raise InputError(f"{name} = {v:g} must be a fraction in (0, 1] (0.24, not 24)", where)
    if not (math.isfinite(n) and abs(n) <= MAX_WORKFORCE_GROWTH):
        raise InputError(f"n = {n:g} must be a fraction between -{MAX_WORKFORCE_GROWTH:g} and "
                         f"{MAX_WORKFORCE_GROWTH:g} (0.02, not 2)", where)
    if not (math.isfinite(g_delta) and 0 <= g_delta <= 1):
        raise InputError(f"g + delta = {g_delta:g} must be a fraction in [0, 1]", "g + delta")
    if not n + g_delta > 0:
        raise InputError(f"n + g + delta = {n + g_delta:g} must be positive", where)


def _exp(x: float) -> float:
    """exp, infinite beyond the float range (a ratio too large to write)."""
    return math.exp(x) if x < 709 else math.inf


def income_ratio(alpha: float, beta: float, saving_ratio: float,
                 schooling_ratio: float = 1.0, ngd_ratio: float = 1.0) -> float:
    """Steady-state income ratio of two economies with the same technology.

    ``saving_ratio`` = s_k of the richer over the poorer; ``ngd_ratio`` =
    (n + g + delta) of the poorer over the richer.
    """
    d = 1 - alpha - beta
    if d <= 0:
        raise ValueError("no steady state: alpha + beta must be below 1")
    return (saving_ratio ** (alpha / d) * schooling_ratio ** (beta / d)
            * ngd_ratio ** ((alpha + beta) / d))


def capital_output(s_k: float, n: float, g_delta: float) -> float:
    """Steady-state capital-output ratio ``K/Y = s_k / (n + g + delta)``."""
    return s_k / (n + g_delta)


@dataclass(frozen=True)
class Economy:
    """One economy's investment and workforce-growth rates (fractions)."""

    name: str
    s_k: float
    n: float
    s_h: float | None = None

    def check(self, human: bool, g_delta: float) -> None:
        check_rates(f"economy '{self.name}'", self.s_k, self.n, self.s_h if human else None,
                    g_delta)


@dataclass(frozen=True)
class RatioRow:
    """One economy against the reference: the predicted steady-state income ratio, the log
    contribution of each factor (summing to the log ratio), and its K/Y."""

    economy: str
    ratio: float
    log_ratio: float
    from_s_k: float
    from_s_h: float
    from_ngd: float
    capital_output: float


@dataclass(frozen=True)
class SteadyStateRatios:
    alpha: float
    beta: float
    g_delta: float
    reference: str
    rows: tuple[RatioRow, ...]


def steady_state_ratios(alpha: float, beta: float, economies: Sequence[Economy],
                        g_delta: float = 0.05, reference: str | None = None
                        ) -> SteadyStateRatios:
    """Each economy's predicted steady-state income per worker relative to ``reference``
    (default: the first), split into the contributions of s_k, s_h and n + g + delta:

    ``ln(y_i/y_0) = a/(1-a-b) ln(s_ki/s_k0) + b/(1-a-b) ln(s_hi/s_h0)
    - (a+b)/(1-a-b) ln((n_i+g+d)/(n_0+g+d))``.
    """
    _no_steady_state(alpha, beta)
    if len(economies) < 2:
        raise InputError("give two economies or more", "economies")
    names = [e.name for e in economies]
    if len(set(names)) < len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise InputError(f"economy '{dup}' is given twice", "economies")
    human = beta > 0
    for e in economies:
        e.check(human, g_delta)
    base = economies[0] if reference is None else next(
        (e for e in economies if e.name == reference), None)
    if base is None:
        raise InputError(f"'{reference}' is not one of the economies", "reference")
    d = 1 - alpha - beta
    rows = []
    for e in economies:
        k = alpha / d * math.log(e.s_k / base.s_k)
        h = beta / d * math.log(e.s_h / base.s_h) if human else 0.0  # type: ignore[operator]
        n = -(alpha + beta) / d * math.log((e.n + g_delta) / (base.n + g_delta))
        total = k + h + n
        rows.append(RatioRow(e.name, _exp(total), total, k, h, n,
                             capital_output(e.s_k, e.n, g_delta)))
    return SteadyStateRatios(alpha, beta, g_delta, base.name, tuple(rows))


@dataclass(frozen=True)
class RequiredShare:
    """The share that makes an investment ratio produce an income ratio, or the reason none
    in (0, 1) does."""

    income_ratio: float
    saving_ratio: float
    ngd_ratio: float
    share: float
    reason: str | None = None


def required_share(income_ratio_: float, saving_ratio: float, ngd_ratio: float = 1.0
                   ) -> RequiredShare:
    """The capital share ``a`` (physical capital only) or the broad share ``a + b`` (human
    capital investment differing by the same ratio as physical) that makes an investment
    ratio ``saving_ratio`` (and a ratio of n + g + delta, poorer over richer) produce
    ``income_ratio_``: ``a/(1-a) = ln R / ln(S N)``."""
    for value, key in ((income_ratio_, "income ratio"), (saving_ratio, "saving ratio"),
                       (ngd_ratio, "n + g + delta ratio")):
        if not (math.isfinite(value) and value > 0):
            raise InputError(f"must be a positive number, not {value:g}", key)
    drive = math.log(saving_ratio * ngd_ratio)
    gap = math.log(income_ratio_)
    if drive == 0:
        return RequiredShare(income_ratio_, saving_ratio, ngd_ratio, math.nan,
                             "the investment ratio times the n + g + delta ratio is 1, so the "
                             "model predicts equal incomes whatever the share")
    x = gap / drive
    if x == 0:
        return RequiredShare(income_ratio_, saving_ratio, ngd_ratio, 0.0)
    if x < 0:
        return RequiredShare(income_ratio_, saving_ratio, ngd_ratio, math.nan,
                             "the income gap runs the other way from the investment gap: "
                             "no positive share explains it")
    return RequiredShare(income_ratio_, saving_ratio, ngd_ratio, x / (1 + x))


def required_share_grid(income_ratios: Sequence[float], saving_ratios: Sequence[float],
                        ngd_ratio: float = 1.0) -> Any:
    """Required shares over a grid: one row per income ratio, one column per saving ratio;
    NaN where no share in (0, 1) explains the pair (a numpy array)."""
    import numpy as np

    return np.array([[required_share(r, s, ngd_ratio).share for s in saving_ratios]
                     for r in income_ratios])


def shares_from_run(path: str | Path, equation: str, sample: str) -> tuple[float, float, float]:
    """(alpha, beta, g + delta) an estimation run implied for one equation on one sample, read
    from its run folder's results.json; beta is 0 for physical capital only."""
    from ..compare import load_record

    record, name = load_record(path)
    cells = {(r["equation"], r["sample"]): r for r in record["results"]}
    cell = cells.get((equation, sample))
    if cell is None:
        have = ", ".join(f"{e}/{s}" for e, s in cells)
        raise InputError(f"run {name} has no equation '{equation}' on sample '{sample}'; it "
                         f"has {have}", "--from-run")
    q = cell["quantities"]
    alpha = q.get("alpha")
    if alpha is None:
        raise InputError(f"{equation}/{sample} of run {name} implies no ordinary alpha"
                         + (f": {cell['problem']}" if cell.get("problem") else ""), "--from-run")
    return float(alpha), float(q.get("beta") or 0.0), float(record["settings"]["g_plus_delta"])
