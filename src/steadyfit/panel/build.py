"""Annual long tables to a cross-section over one span and to a panel of period averages.

The input is one row per economy and year in natural units, with the canonical
columns ``economy``, ``year``, ``income``, ``workforce``, ``invest`` and optionally
``schooling`` and ``human_stock``.  :func:`check_annual` validates and sorts it once;
:func:`cross_section` and :func:`period_panel` build from the checked table.  Gaps are
never filled: a value that needs a missing year is missing, and the reason says which
years.
"""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass
from numbers import Integral
from typing import Literal, get_args

import numpy as np
import pandas as pd

from steadyfit.errors import InputError, one_of, quote

RATE_COLUMNS = ("invest", "schooling")
VARIABLES = ("income", "workforce", "invest", "schooling", "human_stock")
REQUIRED = ("income", "workforce", "invest")
# Averaged over the years of a span or period, in this order in the built tables.
AVERAGED = ("invest", "schooling", "human_stock")

OnProblem = Literal["error", "drop"]
ON_PROBLEM: tuple[str, ...] = get_args(OnProblem)


@dataclass(frozen=True)
class AnnualProblem:
    """One economy-year (or, with ``year`` None, one economy) refused or left out, and why."""

    economy: str
    year: int | None
    column: str | None
    reason: str


@dataclass(frozen=True, eq=False)
class AnnualData:
    """A checked annual table (treat ``frame`` as read-only).

    ``frame`` has the columns ``economy``, ``year`` and the ``variables`` present (in the
    order of :data:`VARIABLES`), sorted by economy then year, index 0..n-1; ``problems``
    are the cells :func:`check_annual` set to missing with ``on_problem="drop"``.
    """

    frame: pd.DataFrame
    variables: tuple[str, ...]
    problems: tuple[AnnualProblem, ...]

    def __repr__(self) -> str:
        years = self.frame["year"]
        span = f"{years.min()}-{years.max()}" if len(years) else "no years"
        return (f"AnnualData({len(self.frame)} rows, {self.frame['economy'].nunique()} "
                f"economies, {span}; {', '.join(self.variables)}; "
                f"{len(self.problems)} problems)")


@dataclass(frozen=True, eq=False)
class SpanCrossSection:
    """One row per complete economy over ``first``..``last`` (treat ``frame`` as read-only).

    ``frame`` is indexed by ``economy`` with the columns ``income_start``, ``income``,
    ``invest``, [``schooling``], [``human_stock``], ``workforce_growth``; ``dropped`` holds
    the economies left out (``year`` None), naming the variables and years missing.
    """

    frame: pd.DataFrame
    first: int
    last: int
    dropped: tuple[AnnualProblem, ...]

    def __repr__(self) -> str:
        return (f"SpanCrossSection({self.first}-{self.last}: {len(self.frame)} economies, "
                f"{len(self.dropped)} dropped)")


@dataclass(frozen=True)
class PanelShape:
    """How complete a period panel is.

    ``economies`` counts economies with at least one complete period (every built column
    finite), ``observations`` the complete economy-periods, ``per_period`` them by end
    year.  ``gaps`` lists, per economy, the end years of incomplete periods lying between
    complete ones (leading and trailing ones are not gaps).  ``balanced``: every counted
    economy is complete in every period.
    """

    economies: int
    periods: int
    observations: int
    per_period: tuple[tuple[int, int], ...]
    gaps: tuple[tuple[str, tuple[int, ...]], ...]
    balanced: bool

    def lines(self, limit: int = 5) -> list[str]:
        """A few readable lines, listing at most ``limit`` economies with gaps."""
        ends = [end for end, _ in self.per_period]
        kind = "balanced" if self.balanced else "unbalanced"
        out = [f"{self.periods} periods ending {ends[0]} to {ends[-1]}" if ends else "no periods",
               f"{self.economies} economies, {self.observations} complete observations "
               f"({kind})",
               "complete per period: " + ", ".join(f"{e}: {n}" for e, n in self.per_period)]
        if self.gaps:
            shown = "; ".join(f"'{quote(econ, 30)}' ({', '.join(map(str, years))})"
                              for econ, years in self.gaps[:limit])
            more = len(self.gaps) - limit
            who = "economy has" if len(self.gaps) == 1 else "economies have"
            out.append(f"{len(self.gaps)} {who} missing periods between complete ones: "
                       f"{shown}" + (f" and {more} more" if more > 0 else ""))
        return out


@dataclass(frozen=True, eq=False)
class PeriodPanel:
    """Non-overlapping periods of ``length`` years from ``first_year``, on the full grid.

    ``frame`` has one row per economy and period, sorted by economy then period, kept where
    values are missing so that lags by period index stay right; columns ``economy``,
    ``period`` (from 0), ``end_year``, ``start_year``, ``income`` (at the end year),
    ``income_lag`` (at the start year), ``invest``, [``schooling``], [``human_stock``]
    (means over start..end-1) and ``workforce_growth``.  ``missing`` has one entry per
    economy-period that could not be built: ``year`` its end year, ``column`` the variable
    when only one is missing, else None.
    """

    frame: pd.DataFrame
    length: int
    first_year: int
    shape: PanelShape
    missing: tuple[AnnualProblem, ...]

    def shape_of(self, economies: Collection[str]) -> PanelShape:
        """The shape of the panel restricted to ``economies`` (a sample)."""
        columns = [c for c in self.frame.columns
                   if c not in ("economy", "period", "end_year", "start_year")]
        sub = self.frame[self.frame["economy"].isin(list(economies))]
        periods = int(self.frame["period"].max()) + 1 if len(self.frame) else 0
        return _shape(sub, columns, periods)

    def __repr__(self) -> str:
        s = self.shape
        return (f"PeriodPanel({s.periods} periods of {self.length} years from "
                f"{self.first_year}, {s.economies} economies, {s.observations} complete "
                f"observations)")


def check_annual(frame: pd.DataFrame, on_problem: OnProblem = "error") -> AnnualData:
    """Check and sort an annual long table.

    Parameters
    ----------
    frame
        One row per economy and year with the canonical columns; other columns are
        ignored.  Not modified.
    on_problem
        ``"error"`` raises on a zero or negative value; ``"drop"`` sets that cell to
        missing and records an :class:`AnnualProblem`.

    Returns
    -------
    AnnualData

    Raises
    ------
    InputError
        For a missing column, a missing economy id, a missing or fractional year, a
        duplicate economy-year, a non-numeric or infinite value, and (with ``"error"``)
        a zero or negative value.
    """
    if on_problem not in ON_PROBLEM:
        raise ValueError(f"on_problem: {one_of(on_problem, ON_PROBLEM)}")
    absent = [c for c in ("economy", "year", *REQUIRED) if c not in frame.columns]
    if absent:
        raise InputError(f"the annual data have no column {', '.join(map(repr, absent))}",
                         "annual data")
    if len(frame) == 0:
        raise InputError("the annual data have no rows", "annual data")
    variables = tuple(v for v in VARIABLES if v in frame.columns)
    out = pd.DataFrame({"economy": _economy_ids(frame["economy"])})
    out["year"] = _years(frame["year"], out["economy"])
    dup = out.duplicated(["economy", "year"])
    if dup.any():
        econ, year = out.loc[dup, ["economy", "year"]].iloc[0]
        raise InputError(f"economy '{quote(econ)}' has two rows for the year {year}; keep "
                         "one row per economy and year", "annual data")
    for var in variables:
        out[var] = _values(frame[var], var, out)
    out = out.sort_values(["economy", "year"], kind="mergesort", ignore_index=True)
    problems: list[AnnualProblem] = []
    for var in variables:
        bad = (out[var] <= 0).to_numpy()
        if not bad.any():
            continue
        if on_problem == "error":
            econ, year, value = out.loc[bad, ["economy", "year", var]].iloc[0]
            more = int(bad.sum()) - 1
            others = f" (and {more} more zero or negative values)" if more else ""
            raise InputError(f"economy '{quote(econ)}' has the value {value:g} in {year}"
                             f"{others}, but {var} must be positive; fix it or drop such "
                             "values as missing", f"column '{var}'")
        rows = out.loc[bad, ["economy", "year", var]]
        problems += [AnnualProblem(e, int(y), var, f"zero or negative {var} ({v:g})")
                     for e, y, v in rows.itertuples(index=False)]
        out.loc[bad, var] = np.nan
    problems.sort(key=lambda p: (p.economy, p.year, VARIABLES.index(p.column or "income")))
    return AnnualData(out, variables, tuple(problems))


def _economy_ids(ids: pd.Series) -> np.ndarray:
    missing = ids.isna().to_numpy()
    text = ids.astype(str).str.strip()
    empty = missing | (text == "").to_numpy()
    if empty.any():
        row = int(np.flatnonzero(empty)[0]) + 1
        raise InputError(f"the economy id is missing in row {row}", "column 'economy'")
    return ids.astype(str).to_numpy()


def _years(years: pd.Series, economy: pd.Series) -> np.ndarray:
    where = "column 'year'"
    if pd.api.types.is_bool_dtype(years):
        raise InputError("holds true/false values, not years", where)
    numbers = pd.to_numeric(years, errors="coerce").astype(float).to_numpy()
    bad = ~np.isfinite(numbers) | (numbers != np.round(numbers))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"economy '{quote(economy.iloc[i])}' has the year "
                         f"{quote(_plain(years.iloc[i]))}, which is not a whole number", where)
    return numbers.astype(np.int64)


def _values(values: pd.Series, var: str, rows: pd.DataFrame) -> np.ndarray:
    where = f"column '{var}'"
    if pd.api.types.is_bool_dtype(values):
        raise InputError("holds true/false values, not numbers", where)
    numbers = pd.to_numeric(values, errors="coerce").astype(float).to_numpy()
    for bad, what in ((np.isnan(numbers) & values.notna().to_numpy(), "the non-numeric value"),
                      (np.isinf(numbers), "the infinite value")):
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"economy '{quote(rows['economy'].iloc[i])}' has {what} "
                             f"{quote(repr(values.iloc[i]))} in {rows['year'].iloc[i]}", where)
    return numbers


def cross_section(data: AnnualData, first: int, last: int) -> SpanCrossSection:
    """One row per economy over the span ``first``..``last``.

    Parameters
    ----------
    data
        A checked annual table.
    first, last
        First and last year of the span, inside the data's years, ``first < last``.

    Returns
    -------
    SpanCrossSection

    Notes
    -----
    ``income_start`` is income in ``first``, ``income`` income in ``last``; ``invest``,
    ``schooling`` and ``human_stock`` are arithmetic means over every year
    ``first``..``last`` inclusive; ``workforce_growth = (ln L_last - ln L_first) /
    (last - first)``, a fraction per year.  An economy missing any of these years is
    dropped, with the variable and years named.
    """
    lo, hi = _year_range(data)
    first = _whole(first, "the first year of the span", "cross-section span")
    last = _whole(last, "the last year of the span", "cross-section span")
    if first >= last:
        raise InputError(f"the span {first}-{last} must start before it ends",
                         "cross-section span")
    if first < lo or last > hi:
        raise InputError(f"the span {first}-{last} reaches outside the data's years "
                         f"{lo}-{hi}", "cross-section span")
    wides = _wides(data, first, last)
    built, gaps = _window(wides, first, last, last)
    built = built.rename_axis("economy")
    complete = np.isfinite(built.to_numpy()).all(axis=1)
    dropped = tuple(AnnualProblem(econ, None, _column(parts), _reason(parts))
                    for econ, parts in sorted(gaps.items()))
    return SpanCrossSection(built[complete].copy(), first, last, dropped)


def period_panel(data: AnnualData, length: int = 5, first_year: int | None = None,
                 last_year: int | None = None) -> PeriodPanel:
    """A panel of non-overlapping periods of ``length`` years.

    Parameters
    ----------
    data
        A checked annual table.
    length
        Years per period, a whole number of at least 1.
    first_year
        Start year of the first period; default the earliest year of the data.
    last_year
        Periods run while their end year is at most this; default the last data year.

    Returns
    -------
    PeriodPanel

    Notes
    -----
    Period ``p`` starts in ``s = first_year + p * length`` and ends in ``e = s + length``.
    ``income`` is income in ``e`` and ``income_lag`` income in ``s`` (the previous
    period's end); rates and ``human_stock`` are means over the ``length`` years
    ``s``..``e-1``, each year required; ``workforce_growth = (ln L_e - ln L_s) /
    length``.  Economy-periods that cannot be built stay in the grid as missing values.
    """
    lo, hi = _year_range(data)
    where = "period panel"
    if not isinstance(length, Integral) or isinstance(length, bool) or length < 1:
        raise InputError(f"the period length must be a whole number of years of at least 1, "
                         f"not {quote(repr(length))}", where)
    length = int(length)
    start = lo if first_year is None else _whole(first_year, "the first year", where)
    stop = hi if last_year is None else _whole(last_year, "the last year", where)
    if start < lo or stop > hi:
        raise InputError(f"the years {start}-{stop} reach outside the data's years {lo}-{hi}",
                         where)
    periods = (stop - start) // length
    if periods < 1:
        raise InputError(f"no whole period of {length} years fits between {start} and {stop}",
                         where)
    wides = _wides(data, start, start + periods * length)
    blocks, missing = [], []
    for p in range(periods):
        s, e = start + p * length, start + (p + 1) * length
        built, gaps = _window(wides, s, e, e - 1)
        block = built.rename(columns={"income_start": "income_lag"})
        block.insert(0, "start_year", s)
        block.insert(0, "end_year", e)
        block.insert(0, "period", p)
        blocks.append(block.rename_axis("economy").reset_index())
        missing += [AnnualProblem(econ, e, _column(parts), _reason(parts))
                    for econ, parts in gaps.items()]
    frame = pd.concat(blocks, ignore_index=True)
    frame = frame.sort_values(["economy", "period"], kind="mergesort", ignore_index=True)
    order = ["economy", "period", "end_year", "start_year", "income", "income_lag",
             *[c for c in AVERAGED if c in frame.columns], "workforce_growth"]
    frame = frame[order]
    missing.sort(key=lambda m: (m.economy, m.year))
    return PeriodPanel(frame, length, start, _shape(frame, order[4:], periods), tuple(missing))


def _shape(frame: pd.DataFrame, columns: list[str], periods: int) -> PanelShape:
    """Complete counts and interior gaps; ``frame`` is the full sorted grid."""
    complete = np.isfinite(frame[columns].to_numpy()).all(axis=1)
    grid = complete.reshape(-1, periods)  # economies x periods, thanks to the full grid
    economies = frame["economy"].to_numpy()[::periods]
    ends = frame["end_year"].to_numpy()[:periods]
    before = np.logical_or.accumulate(grid, axis=1)
    after = np.logical_or.accumulate(grid[:, ::-1], axis=1)[:, ::-1]
    inside = ~grid & before & after
    gaps = tuple((str(economies[i]), tuple(int(y) for y in ends[inside[i]]))
                 for i in np.flatnonzero(inside.any(axis=1)))
    counted = grid.any(axis=1)
    return PanelShape(
        economies=int(counted.sum()), periods=periods, observations=int(grid.sum()),
        per_period=tuple((int(e), int(n)) for e, n in zip(ends, grid.sum(axis=0), strict=True)),
        gaps=gaps, balanced=bool(counted.any() and grid[counted].all()))


def _year_range(data: AnnualData) -> tuple[int, int]:
    years = data.frame["year"]
    if years.empty:
        raise InputError("the annual data have no rows", "annual data")
    return int(years.min()), int(years.max())


def _plain(value: object) -> str:
    """A cell as the file shows it: numbers without numpy's type names."""
    if isinstance(value, np.generic):
        value = value.item()
    return f"{value:g}" if isinstance(value, float) else str(value)


def _whole(value: object, what: str, where: str) -> int:
    if isinstance(value, Integral) and not isinstance(value, bool):
        return int(value)
    raise InputError(f"{what} must be a whole number, not {quote(repr(value))}", where)


def _wides(data: AnnualData, first: int, last: int) -> dict[str, pd.DataFrame]:
    """Economy x year tables of each variable over ``first``..``last`` (NaN where absent)."""
    frame = data.frame
    economies = pd.Index(sorted(frame["economy"].unique()), name="economy")
    years = pd.Index(range(first, last + 1), name="year")
    return {var: frame.pivot(index="economy", columns="year", values=var)
            .reindex(index=economies, columns=years).astype(float)
            for var in data.variables}


Parts = list[tuple[str, str]]


def _window(wides: dict[str, pd.DataFrame], start: int, end: int,
            mean_last: int) -> tuple[pd.DataFrame, dict[str, Parts]]:
    """Values built from the years ``start``, ``end`` and ``start``..``mean_last``.

    Returns the built columns (NaN where a year is missing) and, per economy with a
    missing year, ``(variable, "variable missing in years")`` pairs.
    """
    gaps: dict[str, Parts] = {}

    def take(var: str, years: list[int]) -> pd.DataFrame:
        sub = wides[var][years]
        mask = sub.isna().to_numpy()
        rows, cols = np.nonzero(mask)
        if len(rows):
            listed = pd.Series(sub.columns.to_numpy()[cols].astype(str),
                               index=sub.index.to_numpy()[rows])
            for econ, text in listed.groupby(level=0, sort=False).agg(", ".join).items():
                gaps.setdefault(str(econ), []).append((var, f"{var} missing in {text}"))
        return sub

    income = take("income", [start, end])
    out = {"income_start": income[start], "income": income[end]}
    for var in AVERAGED:
        if var in wides:
            sub = take(var, list(range(start, mean_last + 1)))
            out[var] = sub.mean(axis=1).where(sub.notna().all(axis=1))
    workforce = take("workforce", [start, end])
    out["workforce_growth"] = (np.log(workforce[end]) - np.log(workforce[start])) / (end - start)
    return pd.DataFrame(out), gaps


def _column(parts: Parts) -> str | None:
    names = {var for var, _ in parts}
    return names.pop() if len(names) == 1 else None


def _reason(parts: Parts) -> str:
    return "; ".join(text for _, text in parts)
