"""The calibrators' inputs: the printed table as a small TOML file (or the same keys from the
command line), validated with messages that name the key.

A printed table::

    form = "levels"                       # or "growth" (then span = years)
    capital = ["physical", "human_rate"]
    restricted = true
    mean_ngd = 0.06                       # optional: the sample's mean n + g + delta
    mean_investment = 0.2                 # optional: the sample's mean s_k

    [slopes]                              # the form's regressor names
    ln_sk_less_ln_ngd = { coef = 0.73, se = 0.12 }
    ln_sh_less_ln_ngd = { coef = 0.67, se = 0.07 }

    [[correlation]]                       # only those the paper prints
    slopes = ["ln_sk_less_ln_ngd", "ln_sh_less_ln_ngd"]
    value = -0.3

    [plausible]                           # bands, as in a run spec
    alpha = [0.25, 0.40]
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from pydantic import Field, StrictBool, model_validator

from ..errors import InputError
from ..spec import PlausibleSpec, Record
from ..tomlinput import read_toml, validate
from .accounting import SCHOOLING_BREAKS, SCHOOLING_RETURNS
from .printed import PrintedTable


class SlopeSpec(Record):
    coef: float
    se: float = Field(gt=0)


class CorrelationSpec(Record):
    slopes: tuple[str, str]
    value: float = Field(ge=-1, le=1)


class PrintedTableSpec(Record):
    """What a manuscript prints, as the TOML keys above."""

    form: str = "levels"
    capital: tuple[str, ...] = ("physical",)
    restricted: StrictBool = True
    slopes: dict[str, SlopeSpec] = Field(min_length=1)
    correlation: tuple[CorrelationSpec, ...] = ()
    span: float | None = Field(None, gt=0)
    mean_ngd: float | None = Field(None, gt=0)
    mean_investment: float | None = Field(None, gt=0, lt=1)
    confidence: float = Field(0.95, gt=0, lt=1)
    level: float = Field(0.05, gt=0, lt=1)
    plausible: PlausibleSpec = PlausibleSpec()
    title: str = ""

    @model_validator(mode="after")
    def _pairs_once(self) -> PrintedTableSpec:
        seen = set()
        for i, c in enumerate(self.correlation, 1):
            pair = frozenset(c.slopes)
            if pair in seen:
                raise ValueError(f"correlation[{i}].slopes: the pair {list(c.slopes)} is given "
                                 "twice")
            seen.add(pair)
        return self

    def table(self) -> PrintedTable:
        return PrintedTable(
            self.form, tuple(self.capital), self.restricted,
            {k: v.coef for k, v in self.slopes.items()},
            {k: v.se for k, v in self.slopes.items()},
            {(c.slopes[0], c.slopes[1]): c.value for c in self.correlation},
            self.span, self.mean_ngd, self.mean_investment, self.confidence,
            {"alpha": self.plausible.alpha, "beta": self.plausible.beta}, self.level,
            self.title, {"alpha": self.plausible.alpha_point, "beta": self.plausible.beta_point})


def load_printed_table(path: str | Path) -> PrintedTable:
    """Read a printed table from its TOML file."""
    path = Path(path)
    raw, text = read_toml(path, "table file")
    return validate(PrintedTableSpec, raw, path, text, "table").table()


def printed_table_from_options(form: str, capital: Sequence[str], restricted: bool,
                               slopes: Sequence[str], correlations: Sequence[str] = (),
                               **rest: Any) -> PrintedTable:
    """The same table from command-line strings: each slope as ``name=coef,se`` and each
    correlation as ``name,name=value``; ``rest`` holds the other keys by their TOML names."""
    raw: dict[str, Any] = {"form": form, "capital": list(capital), "restricted": restricted,
                           "slopes": {}, "correlation": []}
    for text in slopes:
        name, _, numbers = text.partition("=")
        parts = numbers.split(",")
        if not name or len(parts) != 2:
            raise InputError(f"'{text}' is not name=coef,se", "--slope")
        if name.strip() in raw["slopes"]:
            raise InputError(f"the slope '{name.strip()}' is given twice", "--slope")
        try:
            raw["slopes"][name.strip()] = {"coef": float(parts[0]), "se": float(parts[1])}
        except ValueError:
            raise InputError(f"'{text}': coef and se must be numbers", "--slope") from None
    for text in correlations:
        names, _, value = text.partition("=")
        pair = [n.strip() for n in names.split(",")]
        if len(pair) != 2 or not value:
            raise InputError(f"'{text}' is not name,name=value", "--correlation")
        try:
            raw["correlation"].append({"slopes": pair, "value": float(value)})
        except ValueError:
            raise InputError(f"'{text}': the value must be a number", "--correlation") from None
    raw |= {k: v for k, v in rest.items() if v is not None}
    try:
        return validate(PrintedTableSpec, raw, None, "", "options").table()
    except InputError as exc:  # name the option, not the TOML key behind it
        key, _, inner = (exc.where or "").removeprefix("options: ").partition(".")
        option = {"slopes": "--slope", "correlation": "--correlation"}.get(
            key, "--" + key.replace("_", "-"))
        raise InputError(exc.detail, (f"{option} {inner}" if inner else option) if key
                         else exc.where) from None


class AccountingColumns(Record):
    output: str
    capital: str
    workers: str | None = None
    human_index: str | None = None
    schooling_years: str | None = None
    labour_share: str | None = None

    @model_validator(mode="after")
    def _one_human(self) -> AccountingColumns:
        if (self.human_index is None) == (self.schooling_years is None):
            raise ValueError("give exactly one of human_index and schooling_years")
        return self


class SchoolingSpec(Record):
    breaks: tuple[float, ...] = SCHOOLING_BREAKS
    returns: tuple[float, ...] = SCHOOLING_RETURNS

    @model_validator(mode="after")
    def _shape(self) -> SchoolingSpec:
        if len(self.returns) != len(self.breaks) + 1:
            raise ValueError("returns: give one return more than breaks")
        if list(self.breaks) != sorted(set(self.breaks)) or any(b <= 0 for b in self.breaks):
            raise ValueError("breaks: positive years in increasing order")
        if any(not 0 <= r < 1 for r in self.returns):
            raise ValueError("returns: fractions in [0, 1) (0.1, not 10)")
        return self


class AccountingSpec(Record):
    """Development accounting on an annual table (the keys of the README)."""

    file: str
    id: str
    year: str
    columns: AccountingColumns
    years: tuple[int, ...] = Field((), max_length=50)
    alpha: float = Field(1 / 3, gt=0, lt=1)
    schooling: SchoolingSpec = SchoolingSpec()
    title: str = ""


def load_accounting(path: str | Path) -> tuple[AccountingSpec, Path]:
    """The accounting input and the path of its data file (relative to the input's folder)."""
    path = Path(path)
    raw, text = read_toml(path, "accounting file")
    spec = validate(AccountingSpec, raw, path, text, "accounting")
    return spec, (path.parent / spec.file).resolve()
