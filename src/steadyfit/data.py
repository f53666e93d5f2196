"""Reading the data table, declared units, canonical columns and samples.

:func:`load_data` reads the table named by the spec and adds the canonical
columns the model forms use (``ln_y``, ``ln_y0``, ``ln_sk``, ``ln_sh``,
``ln_h``, ``ln_ngd``).  :func:`select` cuts one estimation sample for one form:
it applies the sample filter and lists every economy it drops, with the reason.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from .equations import ModelForm
from .errors import InputError, did_you_mean
from .filters import evaluate_filter, parse_filter, referenced_columns
from .spec import RATE_VARIABLES, Spec

# model variable -> canonical log column derived from it
LOG_COLUMNS = {
    "income": "ln_y",
    "income_start": "ln_y0",
    "invest": "ln_sk",
    "schooling": "ln_sh",
    "human_stock": "ln_h",
    "workforce_growth": "ln_ngd",
}

# Rates outside these bounds cannot be right in the declared unit.  The bounds
# are common practice, no source: investment shares lie in (0, 1] as fractions,
# and no workforce grows or shrinks by more than 20% a year.
_SHARE_VARS = ("invest", "schooling")


@dataclass(frozen=True)
class Dropped:
    """An economy left out of one estimation sample, and why."""

    economy: str
    reason: str


@dataclass(frozen=True)
class EconomyTable:
    """The data table with canonical columns, indexed by economy id (text)."""

    frame: pd.DataFrame
    path: Path
    sha256: str
    id_column: str
    variables: dict[str, str]  # model variable -> source column
    warnings: tuple[str, ...]

    @property
    def n_economies(self) -> int:
        return len(self.frame)


@dataclass(frozen=True)
class Selection:
    """One estimation sample for one form: the rows used and the rows dropped."""

    sample: str
    filter: str
    frame: pd.DataFrame  # canonical columns (and cluster column) of the economies used
    n_in_sample: int
    dropped: tuple[Dropped, ...]

    @property
    def economies(self) -> tuple[str, ...]:
        return tuple(self.frame.index)

    @property
    def nobs(self) -> int:
        return len(self.frame)


def read_table(path: Path, id_column: str | None = None) -> pd.DataFrame:
    """Read a CSV or Parquet file into a DataFrame (the id column of a CSV as text, so codes
    such as '004' keep their leading zeros)."""
    if not path.exists():
        raise InputError(f"data file '{path}' does not exist", "data.file")
    suffix = path.suffix.lower()
    try:
        if suffix == ".csv":
            return pd.read_csv(path, dtype={id_column: str} if id_column else None)
        if suffix in (".parquet", ".pq"):
            try:
                return pd.read_parquet(path)
            except ImportError as exc:
                raise InputError(f"reading Parquet needs a working pyarrow ({exc}); "
                                 "pip install 'steadyfit[parquet]'", "data.file") from None
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, OSError) as exc:
        raise InputError(f"cannot read '{path.name}': {exc}", "data.file") from None
    raise InputError(f"'{path.name}' is neither .csv nor .parquet", "data.file")


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with path.open("rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def load_data(spec: Spec) -> EconomyTable:
    """Read the spec's data table, check it, convert units and add canonical columns."""
    body = spec.body
    path = spec.data_path
    raw = read_table(path, body.data.id)
    columns = [str(c) for c in raw.columns]
    raw.columns = columns
    if body.data.id not in raw.columns:
        raise InputError(f"the data have no column '{body.data.id}'"
                         f"{did_you_mean(body.data.id, columns)}", "data.id")
    ids = raw[body.data.id]
    if ids.isna().any():
        row = int(np.flatnonzero(ids.isna().to_numpy())[0]) + 2
        raise InputError(f"the economy id is empty in line {row} of '{path.name}'", "data.id")
    ids = ids.astype(str)
    dup = ids[ids.duplicated()]
    if len(dup):
        raise InputError(f"economy '{dup.iloc[0]}' appears more than once", "data.id")
    frame = raw.copy()
    frame.index = pd.Index(ids, name="economy")

    variables = {k: v for k, v in body.data.columns.model_dump().items() if v is not None}
    warnings: list[str] = []
    for var, col in variables.items():
        if col not in frame.columns:
            raise InputError(f"the data have no column '{col}'{did_you_mean(col, columns)}",
                             f"data.columns.{var}")
        frame[col] = _numeric(frame[col], var, col)
    for var in RATE_VARIABLES:
        if var in variables:
            unit = getattr(body.data.units, var)
            warnings += _check_unit(frame[variables[var]], var, variables[var], unit)
    cluster = body.inference.cluster
    if cluster is not None and cluster not in frame.columns:
        raise InputError(f"the data have no column '{cluster}'{did_you_mean(cluster, columns)}",
                         "inference.cluster")

    gd = body.assumptions.g_plus_delta
    for var, col in variables.items():
        values = frame[col].astype(float)
        if var in RATE_VARIABLES and getattr(body.data.units, var) == "percent":
            values = values / 100.0
        if var == "workforce_growth":
            values = values + gd
        with np.errstate(divide="ignore", invalid="ignore"):
            frame[LOG_COLUMNS[var]] = np.where(values > 0, np.log(values.where(values > 0)),
                                               np.nan)
        frame[f"_{var}_level"] = values  # fraction (and n+g+d), kept for messages and checks
    if "ln_y" in frame.columns and "ln_y0" in frame.columns:
        frame["ln_growth"] = frame["ln_y"] - frame["ln_y0"]
    return EconomyTable(frame, path, _sha256(path), body.data.id, variables, tuple(warnings))


def _numeric(series: pd.Series, var: str, col: str) -> pd.Series:
    if pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series):
        return series.astype(float)
    converted = pd.to_numeric(series, errors="coerce")
    bad = converted.isna() & series.notna()
    if bad.any():
        economy = series.index[bad.to_numpy()][0]
        raise InputError(f"economy '{economy}' has the non-numeric value {series[economy]!r}",
                         f"column '{col}' (data.columns.{var})")
    return converted.astype(float)


def _check_unit(values: pd.Series, var: str, col: str, unit: str) -> list[str]:
    """Refuse values impossible in the declared unit; warn when they merely look odd."""
    v = values.dropna()
    if v.empty:
        return []
    where = f"column '{col}' (data.units.{var} = \"{unit}\")"
    fix = f"declare data.units.{var} = \"{'percent' if unit == 'fraction' else 'fraction'}\""
    if var in _SHARE_VARS:
        if unit == "fraction" and v.max() > 1:
            raise InputError(f"values up to {v.max():g} cannot be fractions of output; "
                             f"they look like percent: {fix}", where)
        if unit == "percent" and v.max() <= 1:
            raise InputError(f"every value is at most {v.max():g}, which as percent would mean "
                             f"almost nothing is invested; they look like fractions: {fix}",
                             where)
        if unit == "percent" and v.median() < 2:
            return [f"{where}: the median is {v.median():g} percent, low for a share of output; "
                    "check the unit"]
        return []
    # workforce growth
    if unit == "fraction" and v.abs().max() > 0.2:
        raise InputError(f"values up to {v.abs().max():g} would mean more than 20% growth a year; "
                         f"they look like percent: {fix}", where)
    if unit == "percent" and v.abs().max() < 0.1:
        return [f"{where}: every value is below 0.1 percent a year; they may be fractions, "
                "check the unit"]
    return []


def select(table: EconomyTable, spec: Spec, sample: str, form: ModelForm) -> Selection:
    """Cut the estimation sample ``sample`` for ``form``, listing every economy dropped."""
    text = spec.body.samples[sample]
    where = f"samples.{sample}"
    node = parse_filter(text, where)
    frame = table.frame
    dropped: list[Dropped] = []

    filter_cols = referenced_columns(node)
    keep = np.ones(len(frame), dtype=bool)
    for col in filter_cols:
        if col in frame.columns:
            missing = frame[col].isna().to_numpy()
            for economy in frame.index[missing & keep]:
                dropped.append(Dropped(economy, f"missing '{col}', which the sample filter reads"))
            keep &= ~missing
    keep[keep] = evaluate_filter(node, frame.loc[keep], where)
    in_sample = frame.loc[keep]
    n_in_sample = int(keep.sum())

    used = np.ones(len(in_sample), dtype=bool)
    policy = spec.body.data.non_positive
    needed = list(form.needs)
    cluster = spec.body.inference.cluster
    for var in needed:
        col = table.variables[var]
        raw = in_sample[col]
        level = in_sample[f"_{var}_level"]
        missing = raw.isna().to_numpy()
        nonpos = (~missing) & (level <= 0).to_numpy()
        for economy in in_sample.index[missing & used]:
            dropped.append(Dropped(economy, f"missing {var} ('{col}')"))
        bad = nonpos & used
        if bad.any():
            economy = in_sample.index[bad][0]
            what = ("n + g + delta" if var == "workforce_growth" else var)
            value = raw[economy]
            if policy == "error":
                raise InputError(
                    f"economy '{economy}' has {what} <= 0 (value {value:g}), and its log is "
                    f"needed; fix the data or set data.non_positive = \"drop\"",
                    f"column '{col}' in sample '{sample}'")
            for e in in_sample.index[bad]:
                dropped.append(Dropped(e, f"{what} <= 0 (value {raw[e]:g}) in '{col}'"))
        used &= ~(missing | nonpos)
    if cluster is not None:
        missing = in_sample[cluster].isna().to_numpy()
        for economy in in_sample.index[missing & used]:
            dropped.append(Dropped(economy, f"missing cluster '{cluster}'"))
        used &= ~missing

    columns = list(dict.fromkeys([LOG_COLUMNS[v] for v in needed] + [form.dependent]))
    out = in_sample.loc[used, columns].copy()
    if cluster is not None:
        out["_cluster"] = in_sample.loc[used, cluster]
    return Selection(sample, text, out, n_in_sample, tuple(dropped))
