"""The analysis data of a run: every economy of every sample, with the columns as estimated.

:func:`build_analysis` turns a run's plan (the data table and every planned
cell's selection and design) into one :class:`AnalysisData` record: a table with
one row per economy that belongs to at least one sample, and one
:class:`ColumnInfo` per column saying what it means, its unit, the user's column
it comes from and how it was transformed.  The replication package of a run
folder (:mod:`steadyfit.report.package`) renders it; nothing here reads files.

Derived regressors are computed by the same code that builds the design
matrices, and checked against the designs, so the columns are exactly those
estimated.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Literal

import numpy as np
import pandas as pd

from .data import LOG_COLUMNS, sample_members
from .design import Design, regressor_matrix
from .equations import Regressor, term_label
from .filters import parse_filter, referenced_columns
from .labels import MINUS, SYMBOLS
from .spec import UNIT_VARIABLES, ColumnMap, Spec

if TYPE_CHECKING:
    from .pipeline import Plan

Role = Literal["id", "variable", "filter", "cluster", "log", "derived", "sample", "used"]

GROWTH_COLUMN = "ln_growth"

# Above this many economies a run folder keeps no economy-level copies: no analysis.csv and
# no economy lists in results.json or the report (their count and a SHA-256 digest instead),
# so the folder stays small whatever the size of the data.  At this size the analysis data
# take about 10 MB as CSV (a choice of this project, no source).
LISTED_ECONOMIES = 50_000


def listing_limit() -> int:
    """:data:`LISTED_ECONOMIES`, read when called (tests lower it)."""
    return LISTED_ECONOMIES

# short names of the model variables, for table rows
_SHORT = {"income": "income per worker", "income_start": "initial income per worker",
          "invest": "investment share", "schooling": "schooling investment share",
          "human_stock": "human-capital stock", "workforce_growth": "workforce growth",
          "labour_share": "labour share"}
_PER = {"invest": "of output", "schooling": "of output", "workforce_growth": "a year",
        "labour_share": "of income"}


@dataclass(frozen=True)
class ColumnInfo:
    """One column of the analysis data, described for a codebook.

    ``label`` is how tables name the column; ``variable`` the model variable
    (a key of ``[data.columns]``) for natural-unit and log columns; ``equation``
    and ``sample`` tie membership and used-in-estimation columns to their cell.
    """

    column: str
    role: Role
    meaning: str
    unit: str
    source: str
    transformation: str
    label: str
    variable: str | None = None
    equation: str | None = None
    sample: str | None = None


@dataclass(frozen=True)
class Estimation:
    """Which columns one equation on one sample was estimated with (constant not listed)."""

    equation: str
    sample: str
    used: str  # the 0/1 column of the economies used
    dependent: str
    unrestricted: tuple[str, ...]
    restricted: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class AnalysisData:
    """The analysis data of a run and its codebook (treat ``frame`` as read-only).

    ``frame`` has one row per economy of at least one sample, in the order of the
    data file; its first column is the user's id column.
    """

    frame: pd.DataFrame
    columns: tuple[ColumnInfo, ...]
    estimations: tuple[Estimation, ...]
    id_column: str

    def column(self, name: str) -> ColumnInfo:
        for info in self.columns:
            if info.column == name:
                return info
        raise KeyError(f"the analysis data have no column '{name}'")

    def with_role(self, *roles: Role) -> tuple[ColumnInfo, ...]:
        return tuple(c for c in self.columns if c.role in roles)

    @property
    def samples(self) -> tuple[str, ...]:
        return tuple(c.sample for c in self.with_role("sample") if c.sample is not None)

    def sample_column(self, sample: str) -> str:
        return next(c.column for c in self.with_role("sample") if c.sample == sample)

    def members(self, sample: str, columns: Sequence[str] | None = None) -> pd.DataFrame:
        """The rows of the economies in ``sample`` (its filter): the ``columns`` asked for
        (default: all)."""
        mask = self.frame[self.sample_column(sample)].to_numpy() == 1
        chosen = self.frame if columns is None else self.frame[list(columns)]
        return chosen.loc[mask]

    def regressors(self, sample: str) -> tuple[str, ...]:
        """The unrestricted regressor columns of the equations estimated on ``sample``."""
        found = [c for e in self.estimations if e.sample == sample for c in e.unrestricted]
        return tuple(dict.fromkeys(found))

    def __repr__(self) -> str:
        return (f"AnalysisData({len(self.frame)} economies, {len(self.columns)} columns, "
                f"{len(self.samples)} samples, {len(self.estimations)} estimations)")


class _Names:
    """Column names of the analysis data, unique: a later name that is taken gets a suffix."""

    def __init__(self) -> None:
        self.taken: set[str] = set()

    def claim(self, name: str) -> str:
        out, n = name, 2
        while out in self.taken:
            out, n = f"{name}_{n}", n + 1
        self.taken.add(out)
        return out


def _formula(reg: Regressor) -> str:
    """A regressor as a linear combination of canonical columns: 'ln_sk - ln_ngd'."""
    out = ""
    for col, w in reg.weights.items():
        scale = "" if abs(w) == 1 else f"{abs(w):g}*"
        sign = "-" if w < 0 else "+"
        out += (f"{sign} " if out or w < 0 else "") + scale + col + " "
    return out.strip()


def _variable_info(var: str, col: str, spec: Spec, symbols: Mapping[str, str]) -> ColumnInfo:
    unit = getattr(spec.body.data.units, var) if var in UNIT_VARIABLES else None
    codes = spec.body.data.missing_codes
    symbol = symbols.get(var) or SYMBOLS[var]
    unit_text = f"{unit} {_PER[var]}" if unit else "as in the data file"
    return ColumnInfo(
        col, "variable", f"{ColumnMap.model_fields[var].description} (data.columns.{var})",
        unit_text, col,
        "none: as in the data file" + (
            f"; the missing-value codes {', '.join(f'{c:g}' for c in codes)} are left empty"
            if codes else ""),
        f"{_SHORT[var]} {symbol}" + (f" ({unit})" if unit else ""), variable=var)


def _log_info(var: str, col: str, name: str, spec: Spec, symbols: Mapping[str, str]
              ) -> ColumnInfo:
    unit = getattr(spec.body.data.units, var) if var in UNIT_VARIABLES else None
    arg = f"{col}/100" if unit == "percent" else col
    gd = spec.body.assumptions.g_plus_delta
    if var == "workforce_growth":
        how = f"ln({arg} + g + delta) with g + delta = {gd:g}"
        meaning = "natural log of workforce growth plus g + delta, ln(n + g + delta)"
    else:
        how = f"ln({arg})"
        meaning = f"natural log of {_SHORT[var]}" + (" as a fraction" if unit else "")
    return ColumnInfo(name, "log", meaning, "natural log", col,
                      how + "; empty where the value is missing or the argument is not "
                      "positive", term_label(LOG_COLUMNS[var], symbols), variable=var)


def _check_design(frame: pd.DataFrame, positions: np.ndarray, design: Design) -> None:
    """The analysis columns must equal the arrays the cell was estimated with."""
    form = design.form
    pairs = [(form.dependent, design.y)]
    pairs += [(r.name, design.x_unrestricted[:, j]) for j, r in enumerate(form.unrestricted, 1)]
    pairs += [(r.name, design.x_restricted[:, j]) for j, r in enumerate(form.restricted, 1)]
    for name, x in pairs:
        if not np.array_equal(frame[name].to_numpy(dtype=float)[positions], x):
            raise RuntimeError(f"internal error: analysis column '{name}' differs from the "
                               f"design of {design.where}")


def build_analysis(plan: Plan) -> AnalysisData:
    """The analysis data of a planned run (see the module docstring)."""
    spec, table, cells = plan.spec, plan.table, plan.cells
    symbols = spec.body.labels.variables
    frame = table.frame
    names = _Names()
    out: dict[str, pd.Series | np.ndarray] = {}
    infos: list[ColumnInfo] = []

    def add(info: ColumnInfo, values: pd.Series | np.ndarray) -> str:
        name = names.claim(info.column)
        infos.append(info if name == info.column else replace(info, column=name))
        out[name] = values
        return name

    # samples, in the order the cells use them
    samples = list(dict.fromkeys(c.selection.sample for c in cells))
    filters = {s: spec.body.samples[s] for s in samples}
    member = {s: sample_members(table, text, f"samples.{s}") for s, text in filters.items()}
    rows = np.logical_or.reduce(list(member.values())) if member else np.zeros(0, bool)

    add(ColumnInfo(table.id_column, "id", "economy identifier", "text", table.id_column,
                   "none: read as text", "economy"), frame.index.to_numpy())
    columns = dict.fromkeys(table.variables.values())
    for col in columns:
        var = next(v for v, c in table.variables.items() if c == col)
        add(_variable_info(var, col, spec, symbols), frame[col])
    cluster = spec.body.inference.cluster
    filter_cols = [c for text in filters.values() for c in referenced_columns(
        parse_filter(text)) if c in frame.columns]
    for col in dict.fromkeys(filter_cols):
        if col not in columns and col != cluster and col not in _generated(frame):
            readers = ", ".join(f"'{s}'" for s, t in filters.items()
                                if col in referenced_columns(parse_filter(t)))
            add(ColumnInfo(col, "filter", f"read by the filter of sample {readers}",
                           "as in the data file", col, "none: as in the data file", col),
                frame[col])
    if cluster is not None and cluster not in columns:
        add(ColumnInfo(cluster, "cluster", "cluster of the cluster-robust covariance",
                       "label", cluster, "none: as in the data file", cluster), frame[cluster])

    canonical: dict[str, str] = {}  # canonical or regressor name -> analysis column
    for var, col in table.variables.items():
        if var not in LOG_COLUMNS:  # the labour share: an anchor, never logged
            continue
        ln = LOG_COLUMNS[var]
        canonical[ln] = add(_log_info(var, col, ln, spec, symbols), frame[ln])
    if GROWTH_COLUMN in frame.columns:
        y, y0 = table.variables["income"], table.variables["income_start"]
        canonical[GROWTH_COLUMN] = add(ColumnInfo(
            GROWTH_COLUMN, "log", "log change of income per worker over the span",
            "natural log", f"{y}, {y0}", f"ln_y - ln_y0 = ln({y}) - ln({y0})",
            f"{term_label('ln_y', symbols)} {MINUS} {term_label('ln_y0', symbols)}"),
            frame[GROWTH_COLUMN])

    values = {c: frame[c].to_numpy(dtype=float) for c in canonical if c in frame.columns}
    for reg in _derived(c.form.unrestricted + c.form.restricted for c in cells):
        column = regressor_matrix(values, (reg,), len(frame))[:, 1]
        parts = [table.variables[_variable_of(c)] for c in reg.weights]
        canonical[reg.name] = add(ColumnInfo(
            reg.name, "derived", f"regressor {reg.text(symbols)} of the restricted equations",
            "natural log", ", ".join(dict.fromkeys(parts)), _formula(reg), reg.text(symbols)),
            column)

    for s in samples:
        add(ColumnInfo(f"in_{s}", "sample", f"1 when the economy belongs to sample '{s}', "
                       "else 0", "0/1", ", ".join(referenced_columns(parse_filter(filters[s]))),
                       f"1 when the filter {filters[s]!r} holds and no column it reads is "
                       "missing" if filters[s].strip() else
                       "1 for every economy (the sample has no filter)", f"in sample {s}",
                       sample=s),
            member[s].astype(np.int8))

    estimations: list[Estimation] = []
    index = frame.index
    for c in cells:
        sel, form, equation = c.selection, c.form, c.equation
        positions = sel.rows
        in_s = member[sel.sample]
        if int(in_s.sum()) != sel.n_in_sample or not in_s[positions].all():
            raise RuntimeError(f"internal error: the members of sample '{sel.sample}' differ "
                               f"from those of {c.where}")
        used = np.zeros(len(frame), dtype=np.int8)
        used[positions] = 1
        name = add(ColumnInfo(
            f"used_{equation}_{sel.sample}", "used",
            f"1 when the economy was used in estimating equation '{equation}' on sample "
            f"'{sel.sample}', else 0", "0/1", "",
            "1 when in the sample and every value the equation needs is present (and positive "
            "where a log is taken)" + (", the cluster included" if cluster else ""),
            f"used in {equation} on {sel.sample}",
            equation=equation, sample=sel.sample), used)
        estimations.append(Estimation(
            equation, sel.sample, name, canonical[form.dependent],
            tuple(canonical[r.name] for r in form.unrestricted),
            tuple(canonical[r.name] for r in form.restricted)))

    kept = np.flatnonzero(rows)
    data = pd.DataFrame(out, index=index, copy=False)  # shares the table's columns
    if len(kept) < len(frame):
        data = data.iloc[kept]
    data = data.reset_index(drop=True)
    renamed = data.rename(columns={v: k for k, v in canonical.items()})
    for c in cells:  # the selection's rows, as positions among the rows kept
        _check_design(renamed, np.searchsorted(kept, c.selection.rows), c.design)
    return AnalysisData(data, tuple(infos), tuple(estimations), infos[0].column)


def _generated(frame: pd.DataFrame) -> set[str]:
    return {*LOG_COLUMNS.values(), GROWTH_COLUMN, *(c for c in frame.columns if c.startswith("_"))}


def _variable_of(canonical: str) -> str:
    return next(v for v, c in LOG_COLUMNS.items() if c == canonical)


def _derived(groups: Iterable[tuple[Regressor, ...]]) -> list[Regressor]:
    """Regressors that are combinations, not one canonical column, each once."""
    seen: dict[str, Regressor] = {}
    for regs in groups:
        for r in regs:
            if dict(r.weights) != {r.name: 1.0}:
                seen.setdefault(r.name, r)
    return list(seen.values())
