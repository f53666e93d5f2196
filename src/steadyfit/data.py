"""Reading the data table, declared units, canonical columns and samples.

:func:`load_data` reads the table named by the spec and adds the canonical
columns the model forms use (``ln_y``, ``ln_y0``, ``ln_sk``, ``ln_sh``,
``ln_h``, ``ln_ngd``).  :func:`select` cuts one estimation sample for one form:
it applies the sample filter and lists every economy it drops, with the reason.
"""

from __future__ import annotations

import csv
import hashlib
from collections.abc import Collection, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, NoReturn

import numpy as np
import pandas as pd

from .equations import ModelForm
from .errors import InputError, did_you_mean, quote
from .filters import Node, evaluate_filter, parse_filter, referenced_columns
from .spec import UNIT_VARIABLES, Spec

if TYPE_CHECKING:
    from .panel.annual import PanelTable

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
# are common practice, no source: investment shares and the labour share lie in
# (0, 1] as fractions, and no workforce grows or shrinks by more than 20% a year.
_SHARE_VARS = ("invest", "schooling", "labour_share")
# The labour share: its model variable, and its canonical column as a fraction (private, so
# a user's column of the same name is never overwritten; never logged, never a regressor).
LABOUR_SHARE = "labour_share"
SHARE_COLUMN = "_labour_share"
# Labour shares outside this range are possible but rare enough to check (common practice, no
# source): a warning names the economies.
USUAL_LABOUR_SHARE = (0.2, 0.95)


# the end of the reason of an economy dropped before the sample filter (not a member)
FILTER_READS = "which the sample filter reads"


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
    panel: PanelTable | None = None  # annual data: the period panel
    span: tuple[int, int] | None = None  # annual data: the cross-section's first and last year
    # annual data: economies without a complete cross-section over the span, and why
    absent: Mapping[str, str] = field(default_factory=dict)
    file_rows: int | None = None  # annual data: rows of the file (economies times years)

    def __repr__(self) -> str:
        panel = f", {self.panel!r}" if self.panel is not None else ""
        return f"EconomyTable({self.path.name}: {self.n_economies} economies{panel})"

    @property
    def n_economies(self) -> int:
        return len(self.frame)


@dataclass(frozen=True)
class Selection:
    """One estimation sample for one form: the rows used and the rows dropped."""

    sample: str
    filter: str
    source: pd.DataFrame = field(repr=False)  # the table's rows (shared, never copied)
    columns: tuple[str, ...]  # the canonical columns the form needs
    cluster: str | None  # the cluster column under cluster-robust covariance
    n_in_sample: int
    dropped: tuple[Dropped, ...]
    used: np.ndarray = field(repr=False)  # True on the table's rows of the economies used
    in_sample: np.ndarray = field(repr=False)  # True on the rows of the sample's economies

    @property
    def rows(self) -> np.ndarray:
        """The economies used, as positions in the table's rows."""
        return np.flatnonzero(self.used)

    @property
    def members(self) -> np.ndarray:
        """The economies in the sample (used or not), as positions in the table's rows."""
        return np.flatnonzero(self.in_sample)

    def column(self, name: str) -> np.ndarray:
        """One column's values over the economies used."""
        return self.source[name].to_numpy()[self.used]

    @property
    def frame(self) -> pd.DataFrame:
        """The canonical columns (and the cluster as ``_cluster``) of the economies used,
        made when asked for."""
        out = self.source[list(self.columns)].loc[self.used]
        if self.cluster is not None:
            out = out.assign(_cluster=self.column(self.cluster))
        return out

    @property
    def economies(self) -> pd.Index:
        """The economies used, in the table's order (an index, never copied element by
        element)."""
        return self.source.index[self.used]

    @property
    def nobs(self) -> int:
        return int(np.count_nonzero(self.used))


# What a CSV cell may hold for "missing" (the usual spellings); ids never use this list:
# 'NA', 'N/A' and 'None' are real economy codes, only a blank id is missing.
_MISSING_TEXT = ("", "#N/A", "#N/A N/A", "#NA", "-1.#IND", "-1.#QNAN", "-NaN", "-nan",
                 "1.#IND", "1.#QNAN", "<NA>", "N/A", "NA", "NULL", "NaN", "None", "n/a", "nan",
                 "null")
_DELIMITERS = {",": "comma", ";": "semicolon", "\t": "tab"}


def _sniff_delimiter(sample: str, name: str) -> str:
    """The delimiter of a CSV file: comma, semicolon or tab, judged from its first lines."""
    lines = [ln for ln in sample.splitlines()[:20] if ln.strip()]
    if not lines:
        raise InputError(f"'{name}' is empty", "data.file")
    try:
        found = csv.Sniffer().sniff("\n".join(lines), delimiters="".join(_DELIMITERS)).delimiter
        if found in _DELIMITERS:
            return found
    except csv.Error:
        pass
    counts = {d: lines[0].count(d) for d in _DELIMITERS}
    best = max(counts, key=lambda d: counts[d])
    if counts[best] > 0:
        return best
    other = max("|:^~ ", key=lines[0].count)
    if lines[0].count(other) > 0:
        shown = "space" if other == " " else f"'{other}'"
        raise InputError(f"'{name}' seems to separate its values with {shown}; steadyfit reads "
                         "comma, semicolon or tab separated files", "data.file")
    return ","


def _read_csv(path: Path, id_column: str | None) -> pd.DataFrame:
    with path.open("rb") as fh:
        start = fh.read(1 << 16)
    if start.startswith(b"PAR1"):
        raise InputError(f"'{path.name}' holds Parquet data, not CSV text; rename it to "
                         ".parquet", "data.file")
    try:
        sample = start.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.start < len(start) - 4:  # not merely a character cut at the sample's end
            raise InputError(f"'{path.name}' is not UTF-8 text (byte {exc.start + 1}); save it "
                             "as UTF-8 CSV", "data.file") from None
        sample = start[: exc.start].decode("utf-8")
    sep = _sniff_delimiter(sample.lstrip("\ufeff"), path.name)
    header = next(csv.reader([sample.lstrip("\ufeff").splitlines()[0]], delimiter=sep))
    header = [h.strip() for h in header]
    seen: set[str] = set()
    for h in header:
        if h in seen:
            raise InputError(f"the column name '{quote(h)}' appears more than once in the "
                             "header; rename one of them", f"data.file '{path.name}'")
        seen.add(h)
    na = {h: list(_MISSING_TEXT) for h in header if h != id_column}
    return pd.read_csv(path, sep=sep, dtype={id_column: str} if id_column else None,
                       keep_default_na=False, na_values=na, encoding="utf-8-sig")


def read_table(path: Path, id_column: str | None = None) -> pd.DataFrame:
    """Read a CSV (comma, semicolon or tab separated, UTF-8) or Parquet file into a DataFrame.

    The id column of a CSV is read as text, so codes such as '004' keep their leading zeros
    and 'NA' stays an id.
    """
    if not path.exists():
        raise InputError(f"data file '{path}' does not exist", "data.file")
    if path.is_dir():
        raise InputError(f"'{path}' is a folder, not a data file", "data.file")
    suffix = path.suffix.lower()
    try:
        if suffix == ".csv":
            frame = _read_csv(path, id_column)
        elif suffix in (".parquet", ".pq"):
            with path.open("rb") as fh:
                if fh.read(4) != b"PAR1":
                    raise InputError(f"'{path.name}' does not hold Parquet data (a Parquet "
                                     "file starts with 'PAR1'); if it is CSV text, rename it "
                                     "to .csv", "data.file")
            try:
                frame = pd.read_parquet(path)
            except ImportError as exc:
                raise InputError(f"reading Parquet needs a working pyarrow ({exc}); "
                                 "pip install 'steadyfit[parquet]'", "data.file") from None
        else:
            raise InputError(f"'{quote(path.name)}' is neither .csv nor .parquet", "data.file")
    except InputError:
        raise
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, OSError,
            ValueError) as exc:
        raise InputError(f"cannot read '{path.name}': {quote(exc, 160)}", "data.file") from None
    dup = frame.columns[pd.Index(frame.columns).duplicated()]
    if len(dup):
        raise InputError(f"the column name '{quote(dup[0])}' appears more than once",
                         f"data.file '{path.name}'")
    return frame


def file_sha256(path: Path) -> str:
    h = hashlib.sha256()
    with path.open("rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _check_ids(raw: pd.DataFrame, id_column: str, name: str) -> tuple[pd.Index, list[str]]:
    """Economy ids as text: blanks refused, duplicates refused (also after trimming spaces),
    ids equal after case folding warned about."""
    ids = raw[id_column]
    text = ids.astype(str)
    if ids.isna().any():
        text = text.where(ids.notna(), "")
    trimmed = text.str.strip()
    blank = (trimmed == "").to_numpy()
    if blank.any():
        row = int(np.flatnonzero(blank)[0]) + 2
        raise InputError(f"the economy id is empty in line {row} of '{name}'", "data.id")
    index = pd.Index(text, name="economy")
    if not _folded(trimmed).duplicated().any():  # no id equals another, trimmed or folded
        return index, []
    dup = text[text.duplicated()]
    if len(dup):
        raise InputError(f"economy '{quote(dup.iloc[0])}' appears more than once", "data.id")
    twins = trimmed[trimmed.duplicated(keep=False)]
    if len(twins):
        pair = [text[i] for i in twins.index[:2]]
        raise InputError(f"economies '{quote(pair[0])}' and '{quote(pair[1])}' differ only by "
                         "spaces at the start or end; give them distinct ids", "data.id")
    warnings = []
    folded = text.str.casefold()
    same = folded[folded.duplicated(keep=False)]
    if len(same):
        pair = [text[i] for i in same.index[:2]]
        warnings.append(f"data.id: economies '{quote(pair[0])}' and '{quote(pair[1])}' differ "
                        "only in upper and lower case; check that they are different economies")
    return index, warnings


def _folded(text: pd.Series) -> pd.Series:
    """Ids case-folded: lower case (a whole-column operation) where they are ASCII, where the
    two agree; Python's case folding for the others."""
    folded = text.str.lower()
    other = ~text.str.fullmatch(r"[\x00-\x7f]*").to_numpy(dtype=bool)
    if other.any():
        folded = folded.where(~other, text.str.casefold())
    return folded


def load_data(spec: Spec) -> EconomyTable:
    """Read the spec's data table, check it, convert units and add canonical columns.

    Annual data (``data.year`` given) go through :func:`steadyfit.panel.annual.load_annual`,
    which builds the cross-section over the span and the period panel."""
    body = spec.body
    if body.data.annual:
        from .panel.annual import load_annual

        return load_annual(spec)
    path = spec.data_path
    raw = read_table(path, body.data.id)
    columns = [str(c) for c in raw.columns]
    raw.columns = columns
    if body.data.id not in raw.columns:
        raise InputError(f"the data have no column '{quote(body.data.id)}'"
                         f"{did_you_mean(body.data.id, columns)}", "data.id")
    index, warnings = _check_ids(raw, body.data.id, path.name)
    frame = raw.copy(deep=False)  # columns are replaced, never changed in place
    frame.index = index

    variables = {k: v for k, v in body.data.columns.model_dump().items() if v is not None}
    codes = set(body.data.missing_codes)
    for var, col in variables.items():
        if col not in frame.columns:
            raise InputError(f"the data have no column '{quote(col)}'"
                             f"{did_you_mean(col, columns)}", f"data.columns.{var}")
    for col in dict.fromkeys(variables.values()):
        var = next(v for v, c in variables.items() if c == col)
        values = numeric_column(frame[col], var, col)
        if codes:
            values = values.where(~values.isin(codes))
        check_values(values, var, col, bool(codes))
        frame[col] = values
    for var in UNIT_VARIABLES:
        if var in variables:
            unit = getattr(body.data.units, var)
            warnings += check_unit(frame[variables[var]], var, variables[var], unit)
    if LABOUR_SHARE in variables:
        warnings += check_labour_share(frame[variables[LABOUR_SHARE]], variables[LABOUR_SHARE],
                                       body.data.units.labour_share or "fraction")
    cluster = body.inference.cluster
    if cluster is not None and cluster not in frame.columns:
        raise InputError(f"the data have no column '{quote(cluster)}'"
                         f"{did_you_mean(cluster, columns)}", "inference.cluster")

    percent = {var for var in UNIT_VARIABLES if getattr(body.data.units, var) == "percent"}
    add_log_columns(frame, variables, percent, body.assumptions.g_plus_delta)
    return EconomyTable(frame, path, file_sha256(path), body.data.id, variables, tuple(warnings))


def add_log_columns(frame: pd.DataFrame, variables: Mapping[str, str], percent: Collection[str],
                    g_plus_delta: float) -> None:
    """Add the canonical log columns (``ln_y``, ``ln_sk``, ...; ``ln_growth`` when both ends of
    income are there) to ``frame`` in place, with each variable's level (a fraction; n + g +
    delta for workforce growth) as ``_<variable>_level`` for messages and checks.  A value
    at or below zero gets a missing log.  The labour share is not logged: it becomes the
    fraction column ``_labour_share`` (checked before by :func:`check_labour_share`)."""
    for var, col in variables.items():
        values = frame[col].astype(float)
        if var in percent:
            values = values / 100.0
        if var == LABOUR_SHARE:
            frame[SHARE_COLUMN] = values
            continue
        if var == "workforce_growth":
            values = values + g_plus_delta
        level = values.to_numpy(dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            frame[LOG_COLUMNS[var]] = np.where(level > 0, np.log(level), np.nan)
        frame[f"_{var}_level"] = level
    if "ln_y" in frame.columns and "ln_y0" in frame.columns:
        frame["ln_growth"] = frame["ln_y"].to_numpy() - frame["ln_y0"].to_numpy()


def check_labour_share(values: pd.Series, col: str, unit: str) -> list[str]:
    """Refuse labour shares of zero or less and of all income or more, naming the economy and
    the value as the file writes it; warn where one lies outside :data:`USUAL_LABOUR_SHARE`.
    The index names each value (an economy, or an economy and year)."""
    where = f"column '{col}' (data.columns.{LABOUR_SHARE})"
    full = 100.0 if unit == "percent" else 1.0
    shown = " percent" if unit == "percent" else ""
    v = values.dropna()
    for bad, what in ((v <= 0, "a labour share must lie above 0"),
                      (v >= full, "a labour share of all income or more leaves no capital "
                                  "share")):
        if bad.any():
            raise InputError(f"{_who(v, bad)} a labour share of {v[bad].iloc[0]:g}{shown}; "
                             f"{what} (leave the cell empty where it is not known)", where)
    low, high = (b * full for b in USUAL_LABOUR_SHARE)
    odd = (v < low) | (v > high)
    if not odd.any():
        return []
    return [f"{where}: {_who(v, odd)} a labour share outside the usual {low:g} to {high:g}"
            f"{shown} (first: {v[odd].iloc[0]:g}); check the data (common practice, no "
            "source)"]


def _who(values: pd.Series, mask: pd.Series) -> str:
    """'economy 'A' has' or 'economies 'A', 'B' and 3 more have'."""
    many = int(mask.sum()) > 1
    return f"{'economies' if many else 'economy'} {_economies(values, mask)} " + (
        "have" if many else "has")


def numeric_column(series: pd.Series, var: str, col: str) -> pd.Series:
    if pd.api.types.is_bool_dtype(series):
        raise InputError("holds true/false values, not numbers", f"column '{col}' "
                         f"(data.columns.{var})")
    if pd.api.types.is_numeric_dtype(series):
        return series.astype(float)
    text = series.astype(str).str.strip()
    converted = pd.to_numeric(text.where(series.notna()), errors="coerce")
    bad = converted.isna() & series.notna()
    if bad.any():
        economy = series.index[bad.to_numpy()][0]
        raise InputError(f"economy '{quote(economy)}' has the non-numeric value "
                         f"{quote(repr(series[economy]))}",
                         f"column '{col}' (data.columns.{var})")
    return converted.astype(float)


# Values data providers use for "missing": -9, -99, -999, ... and 999, 9999, ...
_CODES = tuple(float(-(10**k - 1)) for k in range(1, 10)) + tuple(
    float(10**k - 1) for k in range(3, 10))


def check_values(values: pd.Series, var: str, col: str, codes_declared: bool) -> None:
    """Refuse infinite values, an all-missing column and missing-value codes."""
    where = f"column '{col}' (data.columns.{var})"
    inf = np.isinf(values.to_numpy())
    if inf.any():
        economy = values.index[inf][0]
        raise InputError(f"economy '{quote(economy)}' has the infinite value {values[economy]}",
                         where)
    array = values.to_numpy(dtype=float)
    if np.isnan(array).all():
        raise InputError("every value of the column is missing", where)
    if codes_declared or not np.isin(array, _CODES).any():
        return  # declared codes: every other value is data
    present = values.dropna()
    suspects = present[present.isin(_CODES)]
    if var in ("income", "income_start", "human_stock"):
        # levels: a positive all-nines value is only a code when far from the others
        median = float(present[~present.index.isin(suspects.index)].abs().median() or 1.0)
        suspects = suspects[(suspects < 0) | (suspects > 10 * median) | (suspects < median / 10)]
    if len(suspects):
        economy, value = suspects.index[0], suspects.iloc[0]
        hint = (f"; fix the value, or declare data.missing_codes (with [{value:g}] it means "
                "missing; with other codes every value not listed is taken as data)")
        raise InputError(f"economy '{quote(economy)}' has the value {value:g}, which looks like a "
                         f"missing-value code{hint}", where)


def _economies(values: pd.Series, mask: pd.Series, limit: int = 3) -> str:
    names = [f"'{quote(e, 30)}'" for e in values.index[mask.to_numpy()][:limit]]
    more = int(mask.sum()) - len(names)
    return ", ".join(names) + (f" and {more} more" if more > 0 else "")


def check_unit(values: pd.Series, var: str, col: str, unit: str) -> list[str]:
    """Refuse values impossible in the declared unit, and columns that mix units; warn when
    values merely look odd."""
    v = values.dropna()
    if v.empty:
        return []
    where = f"column '{col}' (data.units.{var} = \"{unit}\")"
    fix = f"declare data.units.{var} = \"{'percent' if unit == 'fraction' else 'fraction'}\""
    if var in _SHARE_VARS:
        if unit == "fraction" and v.max() > 1:
            _unit_error(v, v > 1, "above 1, which cannot be a fraction of output; they "
                               f"look like percent: {fix}", where)
        if unit == "percent" and v.max() > 100:
            _unit_error(v, v > 100, "above 100 percent of output", where)
        if unit == "percent" and v.max() <= 1:
            what = ("almost no income goes to labour" if var == LABOUR_SHARE
                    else "almost nothing is invested")
            raise InputError(f"every value is at most {v.max():g}, which as percent would mean "
                             f"{what}; they look like fractions: {fix}", where)
        _check_mixed(v, v.abs() <= 1, where)
        if unit == "percent" and v.median() < 2:
            return [f"{where}: the median is {v.median():g} percent, low for a share of output; "
                    "check the unit"]
        return []
    # workforce growth: no workforce grows or shrinks by more than 20% a year
    if unit == "fraction" and v.abs().max() > 0.2:
        _unit_error(v, v.abs() > 0.2, "beyond 20% a year as fractions; they look like "
                           f"percent: {fix}", where)
    if unit == "percent" and v.abs().max() > 20:
        _unit_error(v, v.abs() > 20, "beyond 20 percent a year", where)
    if unit == "percent":
        _check_mixed(v, v.abs() < 0.1, where)
    if unit == "percent" and v.abs().max() < 0.1:
        return [f"{where}: every value is below 0.1 percent a year; they may be fractions, "
                "check the unit"]
    return []


def _unit_error(v: pd.Series, mask: pd.Series, what: str, where: str) -> NoReturn:
    raise InputError(f"{_who(v, mask)} values {what}", where)


def _check_mixed(v: pd.Series, small: pd.Series, where: str) -> None:
    """A percent column where a group of values looks like fractions of the others.

    Flagged when at least 3 values (and a tenth of the column) are that small and, times 100,
    have a median within a factor of 4 of the other values' median: a rule of thumb (common
    practice, no source) that leaves genuinely small percent values (0.4 percent) alone.
    """
    if small.all() or int(small.sum()) < max(3, len(v) // 10):
        return
    ratio = float(v[small].abs().median() * 100) / max(float(v[~small].abs().median()), 1e-12)
    if 0.25 <= ratio <= 4:
        raise InputError(f"the column mixes units: economies {_economies(v, small)} have values "
                         "that look like fractions while the others look like percent; write "
                         "them all in one unit", where)


def _non_positive(var: str, value: float, level: float, g_plus_delta: float) -> str:
    """What is non-positive: the value itself, or n + g + delta (shown with its parts)."""
    if var != "workforce_growth":
        return f"{var} <= 0 (value {value:g})"
    return (f"n + g + delta = {level:.4g} <= 0 (n = {value:g} in the file, "
            f"g + delta = {g_plus_delta:g})")


def _filter_rows(frame: pd.DataFrame, node: Node, keep: np.ndarray, where: str) -> np.ndarray:
    """The filter's value on the rows ``keep`` marks, reading only the columns it names."""
    cols = referenced_columns(node)
    if all(c in frame.columns for c in cols):
        frame = frame[list(cols)]
    return evaluate_filter(node, frame.iloc[np.flatnonzero(keep)], where)


def sample_members(table: EconomyTable, text: str, where: str) -> np.ndarray:
    """Economies in a sample (a mask over the table's rows): every column the filter reads
    present, and the filter true."""
    node = parse_filter(text, where)
    frame = table.frame
    keep = np.ones(len(frame), dtype=bool)
    for col in referenced_columns(node):
        if col in frame.columns:
            keep &= frame[col].notna().to_numpy()
    keep[keep] = _filter_rows(frame, node, keep, where)
    return keep


def select(table: EconomyTable, spec: Spec, sample: str, form: ModelForm) -> Selection:
    """Cut the estimation sample ``sample`` for ``form``, listing every economy dropped.

    Works on row positions and whole columns: only the economies dropped are named one by
    one."""
    text = spec.body.samples[sample]
    where = f"samples.{sample}"
    node = parse_filter(text, where)
    frame = table.frame
    index = frame.index
    dropped: list[Dropped] = []

    filter_cols = referenced_columns(node)
    keep = np.ones(len(frame), dtype=bool)
    for col in filter_cols:
        if col in frame.columns:
            missing = frame[col].isna().to_numpy()
            for economy in index[missing & keep]:
                dropped.append(Dropped(economy, f"missing '{col}', {FILTER_READS}"))
            keep &= ~missing
    keep[keep] = _filter_rows(frame, node, keep, where)
    positions = np.flatnonzero(keep)
    n_in_sample = len(positions)

    used = np.ones(n_in_sample, dtype=bool)
    policy = spec.body.data.non_positive
    needed = list(form.needs)
    cluster = spec.body.inference.cluster
    for var in needed:
        col = table.variables[var]
        raw = frame[col].to_numpy(dtype=float)[positions]
        level = frame[f"_{var}_level"].to_numpy(dtype=float)[positions]
        missing = np.isnan(raw)
        with np.errstate(invalid="ignore"):
            nonpos = (~missing) & (level <= 0)
        for economy in index[positions[missing & used]]:
            dropped.append(Dropped(economy, table.absent.get(economy)
                                   or f"missing {var} ('{col}')"))
        bad = np.flatnonzero(nonpos & used)
        if len(bad):
            gd = spec.body.assumptions.g_plus_delta
            if policy == "error":
                raise InputError(
                    f"economy '{quote(index[positions[bad[0]]])}' has "
                    f"{_non_positive(var, raw[bad[0]], level[bad[0]], gd)}, and its log is "
                    f"needed; fix the data or set data.non_positive = \"drop\"",
                    f"column '{col}' in sample '{sample}'")
            dropped += [Dropped(index[positions[i]],
                                f"{_non_positive(var, raw[i], level[i], gd)} in '{col}'")
                        for i in bad]
        used &= ~(missing | nonpos)
    if cluster is not None:
        missing = frame[cluster].isna().to_numpy()[positions]
        for economy in index[positions[missing & used]]:
            dropped.append(Dropped(economy, f"missing cluster '{cluster}'"))
        used &= ~missing

    columns = tuple(dict.fromkeys([LOG_COLUMNS[v] for v in needed] + [form.dependent]))
    mask = np.zeros(len(frame), dtype=bool)
    mask[positions[used]] = True
    return Selection(sample, text, frame, columns, cluster, n_in_sample, tuple(dropped),
                     mask, keep)
