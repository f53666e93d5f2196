"""Development accounting: how much of the income gap between economies measured capital and
schooling account for, and how much is left to productivity.

With ``y = A (K/Y)^(a/(1-a)) h`` per worker (DOMAIN.md section 5)::

    ln y = a/(1-a) ln(K/Y) + ln h + ln A

where ``h`` is a ready human-capital index or ``exp(phi(u))`` from years of schooling
``u``, ``phi`` piecewise linear with settable returns.  ``ln A`` is what is left.
The factor-only income ``y_KH = (K/Y)^(a/(1-a)) h`` gives the two success measures
of a year's cross-section: ``var(ln y_KH) / var(ln y)`` and the ratio of the 90/10
percentile ratios of ``y_KH`` and ``y`` (percentiles by linear interpolation).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError, did_you_mean

# Returns to a year of schooling by segment, 0-4, 4-8 and above 8 years (from memory; the
# usual choice in development accounting, see DOMAIN.md section 5).  Settable.
SCHOOLING_BREAKS = (4.0, 8.0)
SCHOOLING_RETURNS = (0.134, 0.101, 0.068)


def human_capital(years: np.ndarray, breaks: Sequence[float] = SCHOOLING_BREAKS,
                  returns: Sequence[float] = SCHOOLING_RETURNS) -> np.ndarray:
    """``h = exp(phi(u))`` with ``phi`` piecewise linear: slope ``returns[i]`` between
    ``breaks[i-1]`` and ``breaks[i]`` (from 0; the last slope beyond the last break)."""
    if len(returns) != len(breaks) + 1 or list(breaks) != sorted(breaks):
        raise InputError("give one return more than breaks, breaks in increasing order",
                         "schooling returns")
    if any(not (math.isfinite(r) and 0 <= r < 1) for r in returns):
        raise InputError("returns to a year of schooling are fractions in [0, 1)",
                         "schooling returns")
    u = np.asarray(years, dtype=float)
    phi = np.zeros_like(u)
    lower = 0.0
    for b, r in zip([*breaks, math.inf], returns, strict=True):
        phi += r * np.clip(u - lower, 0.0, b - lower)
        lower = b
    return np.exp(phi)


@dataclass(frozen=True)
class YearAccounts:
    """One year's cross-section: the split of every economy's log income per worker and the
    success measures (NaN, with ``reason``, when fewer than two economies remain)."""

    year: int
    economies: tuple[str, ...]
    ln_y: np.ndarray
    capital_term: np.ndarray  # a/(1-a) ln(K/Y)
    ln_h: np.ndarray
    ln_a: np.ndarray  # productivity: what is left
    variance_share: float  # var(ln y_KH) / var(ln y)
    percentile_share: float  # (y_KH 90/10) / (y 90/10)
    capital_share_measured: float  # mean of 1 - labour share, NaN without that column
    dropped: tuple[tuple[str, str], ...]  # (economy, reason)
    reason: str | None = None


@dataclass(frozen=True)
class DevelopmentAccounts:
    alpha: float
    human: str  # "index" or "schooling"
    years: tuple[YearAccounts, ...]


def _success(ln_y: np.ndarray, ln_kh: np.ndarray) -> tuple[float, float]:
    var = float(np.var(ln_kh, ddof=1) / np.var(ln_y, ddof=1))
    q = np.quantile  # linear interpolation, as pandas' quantile

    def spread(x: np.ndarray) -> float:
        return float(np.exp(q(x, 0.9) - q(x, 0.1)))

    return var, spread(ln_kh) / spread(ln_y)


def development_accounts(frame: pd.DataFrame, *, id_column: str, year: str, output: str,
                         capital: str, workers: str | None = None,
                         human_index: str | None = None, schooling_years: str | None = None,
                         labour_share: str | None = None, alpha: float = 1 / 3,
                         years: Sequence[int] | None = None,
                         breaks: Sequence[float] = SCHOOLING_BREAKS,
                         returns: Sequence[float] = SCHOOLING_RETURNS) -> DevelopmentAccounts:
    """The accounts of each year in ``years`` (default: the last year in the table).

    ``output`` and ``capital`` are totals divided by ``workers`` when it is given (else
    already per worker: only their ratio K/Y and income per worker enter).  Exactly one of
    ``human_index`` and ``schooling_years`` gives h.  Economies lacking a value (or with a
    non-positive one) in a year are left out of that year, each with its reason."""
    if not 0 < alpha < 1:
        raise InputError(f"must lie strictly between 0 and 1, not {alpha:g}", "alpha")
    if (human_index is None) == (schooling_years is None):
        raise InputError("give exactly one of a human-capital index and years of schooling",
                         "columns")
    wanted = {"id": id_column, "year": year, "output": output, "capital": capital,
              "workers": workers, "human_index": human_index,
              "schooling_years": schooling_years, "labour_share": labour_share}
    for key, col in wanted.items():
        if col is not None and col not in frame.columns:
            raise InputError(f"the data have no column '{col}'"
                             f"{did_you_mean(col, map(str, frame.columns))}", f"columns.{key}")
    if frame.duplicated([id_column, year]).any():
        e, y = frame.loc[frame.duplicated([id_column, year]), [id_column, year]].iloc[0]
        raise InputError(f"economy '{e}' has two rows for year {y}", f"column '{year}'")
    stamps = pd.to_numeric(frame[year], errors="coerce").dropna()
    if stamps.empty:
        raise InputError("holds no year (whole numbers)", f"column '{year}'")
    if (stamps != stamps.round()).any():
        raise InputError(f"holds {stamps[stamps != stamps.round()].iloc[0]:g}, not a whole year",
                         f"column '{year}'")
    available = sorted(stamps.astype(int).unique())
    chosen = list(dict.fromkeys(years)) if years else available[-1:]
    out = []
    for y in chosen:
        if y not in available:
            raise InputError(f"{y} is not a year of the data ({available[0]}-{available[-1]})",
                             "years")
        out.append(_one_year(frame[pd.to_numeric(frame[year], errors="coerce") == y], int(y),
                             wanted, alpha, breaks, returns))
    return DevelopmentAccounts(alpha, "index" if human_index else "schooling", tuple(out))


def _one_year(rows: pd.DataFrame, year: int, cols: dict[str, str | None], alpha: float,
              breaks: Sequence[float], returns: Sequence[float]) -> YearAccounts:
    def values(key: str) -> np.ndarray:
        name = cols[key]
        return pd.to_numeric(rows[name], errors="coerce").to_numpy(dtype=float) if name else (
            np.ones(len(rows)))

    names = rows[cols["id"]].astype(str).to_numpy()
    output, capital, workers = values("output"), values("capital"), values("workers")
    human = values("human_index") if cols["human_index"] else values("schooling_years")
    keep = np.ones(len(rows), dtype=bool)
    dropped = []
    checks = [("output", output, True), ("capital", capital, True), ("workers", workers, True),
              ("human_index" if cols["human_index"] else "schooling_years", human,
               bool(cols["human_index"]))]
    for i, name in enumerate(names):
        for key, v, positive in checks:
            if not np.isfinite(v[i]) or (v[i] <= 0 if positive else v[i] < 0):
                dropped.append((str(name), f"{cols[key]} is missing or not "
                                + ("positive" if positive else "non-negative")))
                keep[i] = False
                break
    names = names[keep]
    y = output[keep] / workers[keep]
    ln_y = np.log(y)
    capital_term = alpha / (1 - alpha) * np.log(capital[keep] / output[keep])
    ln_h = np.log(human[keep]) if cols["human_index"] else np.log(
        human_capital(human[keep], breaks, returns))
    ln_a = ln_y - capital_term - ln_h
    share = math.nan
    if cols["labour_share"]:
        ls = values("labour_share")[keep]
        bad = np.isfinite(ls) & ((ls <= 0) | (ls >= 1))
        if bad.any():
            raise InputError(f"economy '{names[np.flatnonzero(bad)[0]]}' has the labour share "
                             f"{ls[bad][0]:g} in {year}: give it as a fraction between 0 and 1",
                             f"column '{cols['labour_share']}'")
        ls = ls[np.isfinite(ls)]
        share = float(np.mean(1 - ls)) if len(ls) else math.nan
    reason = None
    var = pct = math.nan
    if len(names) < 2:
        reason = f"{len(names)} economy with every value in {year}: no dispersion to account for"
    elif np.ptp(ln_y) < 1e-9:  # equal up to rounding
        reason = f"income per worker is the same in every economy in {year}"
    else:
        var, pct = _success(ln_y, capital_term + ln_h)
    return YearAccounts(year, tuple(map(str, names)), ln_y, capital_term, ln_h, ln_a, var, pct,
                        share, tuple(dropped), reason)
