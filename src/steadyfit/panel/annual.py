"""Reading annual data named by a spec: the cross-section over the span and the period panel.

:func:`load_annual` reads the table (one row per economy and year), applies the
same value and unit checks as a cross-section table, converts units (percent
rates to fractions, total income to income per worker), and builds with
:mod:`steadyfit.panel.build`:

- the cross-section over ``data.span`` (default: the data's first and last
  year), which becomes the run's ordinary :class:`~steadyfit.data.EconomyTable`
  so the levels and growth forms run on it unchanged; columns that are constant
  within every economy (region, group flags) come along for sample filters;
- the period panel of ``[panel]`` as a :class:`PanelTable` on the full economy x
  period grid with canonical log columns, one extra period at the start holding
  the first period's initial income.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Mapping
from dataclasses import dataclass, replace
from typing import TypeVar

import numpy as np
import pandas as pd

from ..data import (
    LABOUR_SHARE,
    LOG_COLUMNS,
    EconomyTable,
    add_log_columns,
    check_labour_share,
    check_unit,
    check_values,
    file_sha256,
    numeric_column,
    read_table,
)
from ..errors import InputError, did_you_mean, quote
from ..spec import Spec
from .build import (
    AnnualProblem,
    PanelShape,
    PeriodPanel,
    check_annual,
    cross_section,
    period_panel,
)

T = TypeVar("T")
_ANNUAL_VARIABLES = ("income", "workforce", "invest", "schooling", "human_stock")
_PANEL_LOGS = {"income": "ln_y", "invest": "ln_sk", "schooling": "ln_sh", "human_stock": "ln_h"}


@dataclass(frozen=True, eq=False)
class PanelTable:
    """The period panel of a run: canonical columns on the economy x period grid.

    ``frame`` has ``economy``, ``year`` (each period's end year; the first row of
    each economy is the start of the first period and holds ``ln_y`` only),
    ``ln_y``, ``ln_sk``, [``ln_sh``], [``ln_h``], ``ln_ngd`` (log of n + g + delta)
    and ``_workforce_growth_level`` (n + g + delta).
    """

    frame: pd.DataFrame
    length: int
    first_year: int
    shape: PanelShape
    missing: tuple[AnnualProblem, ...]
    grid: PeriodPanel  # the panel in natural units, as built
    # per economy, the mean labour share over the panel's years (None: no labour share column)
    labour_share: pd.Series | None = None

    def shape_of(self, economies: Collection[str]) -> PanelShape:
        return self.grid.shape_of(economies)

    def __repr__(self) -> str:
        return (f"PanelTable({self.shape.periods} periods of {self.length} years from "
                f"{self.first_year}, {self.shape.economies} economies)")


def _shorten(problems: tuple[AnnualProblem, ...], what: str, limit: int = 3) -> list[str]:
    if not problems:
        return []
    shown = "; ".join(f"'{quote(p.economy, 40)}'"
                      + (f" {p.year}" if p.year is not None else "") + f": {p.reason}"
                      for p in problems[:limit])
    more = f"; and {len(problems) - limit} more" if len(problems) > limit else ""
    return [f"{what}: {shown}{more}"]


def load_annual(spec: Spec) -> EconomyTable:
    """Read the spec's annual table and build the cross-section and the period panel."""
    body = spec.body
    data = body.data
    assert data.year is not None
    path = spec.data_path
    raw = read_table(path, data.id)
    raw.columns = [str(c) for c in raw.columns]
    columns = list(raw.columns)
    for key, col in (("data.id", data.id), ("data.year", data.year)):
        if col not in raw.columns:
            raise InputError(f"the data have no column '{quote(col)}'"
                             f"{did_you_mean(col, columns)}", key)
    variables = {k: v for k, v in data.columns.model_dump().items() if v is not None}
    codes = set(data.missing_codes)
    warnings: list[str] = []
    canonical = pd.DataFrame({"economy": raw[data.id].astype(str).where(raw[data.id].notna()),
                              "year": raw[data.year]})
    # value messages name the economy and the year of a cell
    cells = pd.Index(raw[data.id].astype(str) + " in " + raw[data.year].astype(str))
    for var, col in variables.items():
        if col not in raw.columns:
            raise InputError(f"the data have no column '{quote(col)}'"
                             f"{did_you_mean(col, columns)}", f"data.columns.{var}")
        values = numeric_column(raw[col].set_axis(cells), var, col)
        if codes:
            values = values.where(~values.isin(codes))
        check_values(values, var, col, bool(codes))
        unit = getattr(data.units, var, None)
        if unit is not None:
            warnings += check_unit(values, var, col, unit)
            if var == LABOUR_SHARE:
                warnings += check_labour_share(values, col, unit)
            if unit == "percent":
                values = values / 100.0
        canonical[var] = values.to_numpy()
    if data.income_measure == "total":
        canonical["income"] = canonical["income"] / canonical["workforce"]
    if data.non_positive == "error":
        _refuse_non_positive(raw, data.id, data.year,
                             {k: v for k, v in variables.items() if k != LABOUR_SHARE})
    annual = check_annual(canonical[["economy", "year", *[v for v in _ANNUAL_VARIABLES
                                                          if v in canonical]]],
                          on_problem=data.non_positive)
    warnings += _shorten(annual.problems, "data.non_positive: values left out of the annual data")
    years = annual.frame["year"]
    first, last = data.span if data.span is not None else (int(years.min()), int(years.max()))
    span = _named(lambda: cross_section(annual, first, last), "data.span")
    absent = {d.economy: f"no complete cross-section over {first}\u2013{last}: {d.reason}"
              for d in span.dropped}

    economies = pd.Index(sorted(annual.frame["economy"].unique()), name="economy")
    frame = span.frame.reindex(economies)
    frame = frame.join(_constant_columns(raw, data.id, {data.year, *variables.values()}))
    cs_variables = {v: v for v in span.frame.columns}
    if LABOUR_SHARE in canonical:
        frame[LABOUR_SHARE] = mean_over_years(canonical, first, last).reindex(economies)
        cs_variables[LABOUR_SHARE] = LABOUR_SHARE
        warnings += sparse_years(canonical, first, last, variables[LABOUR_SHARE])
    add_log_columns(frame, cs_variables, (), body.assumptions.g_plus_delta)
    table = EconomyTable(frame, path, file_sha256(path), data.id, cs_variables, tuple(warnings),
                         span=(first, last), absent=absent, file_rows=len(raw))
    if not any(e.form == "panel" for e in body.equation):
        return table
    p = body.panel
    built = _named(lambda: period_panel(annual, p.period_years, p.first_year, p.last_year),
                   "panel")
    panel_frame = _panel_frame(built.frame, body.assumptions.g_plus_delta)
    share = (mean_over_years(canonical, int(panel_frame["year"].min()),
                             int(panel_frame["year"].max()))
             if LABOUR_SHARE in canonical else None)
    panel = PanelTable(panel_frame, built.length, built.first_year, built.shape, built.missing,
                       built, share)
    return replace(table, panel=panel)


def mean_over_years(canonical: pd.DataFrame, first: int, last: int) -> pd.Series:
    """Each economy's mean labour share over the years ``first``..``last`` it has a value
    for (missing years are skipped, not required: the share only anchors the estimates)."""
    years = pd.to_numeric(canonical["year"], errors="coerce")
    rows = canonical[(years >= first) & (years <= last)]
    return rows.groupby("economy")[LABOUR_SHARE].mean()


def sparse_years(canonical: pd.DataFrame, first: int, last: int, col: str) -> list[str]:
    """A warning naming the economies whose labour share covers fewer than half the years
    ``first``..``last`` (their mean rests on those years alone)."""
    years = pd.to_numeric(canonical["year"], errors="coerce")
    rows = canonical[(years >= first) & (years <= last)]
    counts = rows.groupby("economy")[LABOUR_SHARE].count()
    span = last - first + 1
    sparse = counts[(counts > 0) & (counts < span / 2)]
    if sparse.empty:
        return []
    shown = ", ".join(f"'{quote(str(e), 30)}' ({n} of {span} years)"
                      for e, n in sparse.iloc[:3].items())
    more = f" and {len(sparse) - 3} more" if len(sparse) > 3 else ""
    return [f"column '{col}' (data.columns.{LABOUR_SHARE}): the labour share of {shown}{more} "
            f"covers fewer than half the years {first}\u2013{last}; each such economy's mean "
            "rests on the years it has"]


def _named(build: Callable[[], T], key: str) -> T:
    """Run a builder, naming the spec key its refusals come from."""
    try:
        return build()
    except InputError as exc:
        raise InputError(exc.detail, key) from None


def _refuse_non_positive(raw: pd.DataFrame, id_column: str, year_column: str,
                         variables: Mapping[str, str]) -> None:
    """With data.non_positive = "error": the first zero or negative value, as the file has it."""
    for var, col in variables.items():
        values = pd.to_numeric(raw[col], errors="coerce")
        bad = (values <= 0).to_numpy()
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(
                f"economy '{quote(raw[id_column].iloc[i])}' has {values.iloc[i]:g} in "
                f"{raw[year_column].iloc[i]}, and its log is needed; fix the data or set "
                "data.non_positive = \"drop\"", f"column '{col}' (data.columns.{var})")


def _constant_columns(raw: pd.DataFrame, id_column: str, skip: set[str]) -> pd.DataFrame:
    """Columns whose value never changes within an economy (missing values aside), one row
    per economy: what sample filters and clusters may read."""
    others = [c for c in raw.columns if c != id_column and c not in skip]
    if not others:
        return pd.DataFrame(index=pd.Index([], name="economy"))
    ids = raw[id_column].astype(str)
    grouped = raw[others].groupby(ids)
    constant = grouped.nunique(dropna=True).le(1).all()
    kept = grouped.first()[[c for c in others if constant[c]]]
    kept.index.name = "economy"
    return kept


def _panel_frame(grid: pd.DataFrame, g_plus_delta: float) -> pd.DataFrame:
    """Canonical log columns of the period panel, with each economy's starting row."""
    body = pd.DataFrame({"economy": grid["economy"].to_numpy(),
                         "year": grid["end_year"].to_numpy()})
    for var, col in _PANEL_LOGS.items():
        if var in grid.columns:
            values = grid[var].to_numpy(dtype=float)
            with np.errstate(divide="ignore", invalid="ignore"):
                body[col] = np.where(values > 0, np.log(values), np.nan)
    ngd = grid["workforce_growth"].to_numpy(dtype=float) + g_plus_delta
    with np.errstate(divide="ignore", invalid="ignore"):
        body[LOG_COLUMNS["workforce_growth"]] = np.where(ngd > 0, np.log(ngd), np.nan)
    body["_workforce_growth_level"] = ngd
    first = grid[grid["period"] == 0]
    lag = first["income_lag"].to_numpy(dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        start = pd.DataFrame({"economy": first["economy"].to_numpy(),
                              "year": first["start_year"].to_numpy(),
                              "ln_y": np.where(lag > 0, np.log(lag), np.nan)})
    out = pd.concat([start, body], ignore_index=True)
    return out.sort_values(["economy", "year"], kind="stable").reset_index(drop=True)
