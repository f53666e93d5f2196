"""The run specification: schema, TOML loading and error messages that name the key.

A spec is a small TOML file.  :func:`load_spec` reads and validates it into a
frozen :class:`Spec`; :func:`spec_from_dict` does the same for a dictionary (for
notebooks).  Every problem raises :class:`~steadyfit.errors.InputError` naming
the key path (``equation[2].capital``, positions counted from 1) and, when
the spec came from a file, its line.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any, Literal, get_args

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StrictBool,
    field_validator,
    model_validator,
)

from . import equations
from .errors import InputError, did_you_mean, quote
from .estimators import CovarianceName
from .panel.methods import METHODS, Method
from .quantities import canonical, quantity_names
from .robust.choices import BootstrapMethod, WildWeights
from .tomlinput import MAX_DEPTH, read_toml, too_deep, validate

Unit = Literal["percent", "fraction"]
NonPositive = Literal["error", "drop"]
IncomeMeasure = Literal["per_worker", "total"]
Treatment = Literal["exogenous", "predetermined", "endogenous"]
FigureChoice = Literal["all", "key", "none"]
FigureFormat = Literal["svg", "pdf"]
RATE_VARIABLES = ("invest", "schooling", "workforce_growth")
# Every column whose unit must be declared: the rates and the labour share of income.
UNIT_VARIABLES = (*RATE_VARIABLES, "labour_share")
# Names become file names in run folders: a letter first, then letters, digits, _ and -, so
# none can be '.', '..', absolute or hold a separator.
_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]{0,63}$")


class Record(BaseModel):
    # NaN and infinity are refused in every number; booleans are not numbers (strict below)
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)

    @model_validator(mode="before")
    @classmethod
    def _no_booleans_as_numbers(cls, data: Any) -> Any:
        if isinstance(data, dict):
            for name, field in cls.model_fields.items():
                value = data.get(name)
                kinds = {field.annotation, *get_args(field.annotation)}
                if isinstance(value, bool) and (kinds & {int, float}) and bool not in kinds:
                    raise ValueError(f"{name}: expected a number, not the boolean "
                                     f"{str(value).lower()}")
        return data


class ColumnMap(Record):
    """Model variable -> column of the data table."""

    income: str = Field(description="output per worker at the end of the span")
    invest: str = Field(description="share of output invested in physical capital")
    workforce_growth: str | None = Field(None, description="growth rate of the workforce")
    workforce: str | None = Field(None, description="workforce or population (annual data)")
    schooling: str | None = Field(None, description="share invested in human capital")
    human_stock: str | None = Field(None, description="stock of human capital per worker")
    income_start: str | None = Field(None, description="output per worker at the start")
    labour_share: str | None = Field(None, description="labour share of income in the "
                                     "national accounts (not used in estimation)")


class UnitMap(Record):
    """Declared unit of each rate column and of the labour share."""

    invest: Unit | None = None
    schooling: Unit | None = None
    workforce_growth: Unit | None = None
    labour_share: Unit | None = None


class DataSpec(Record):
    file: str
    id: str
    columns: ColumnMap
    units: UnitMap = Field(default_factory=UnitMap)
    non_positive: NonPositive = "error"
    missing_codes: tuple[float, ...] = ()
    # annual data: one row per economy and year
    year: str | None = None
    income_measure: IncomeMeasure = "per_worker"
    span: tuple[int, int] | None = None

    @property
    def annual(self) -> bool:
        return self.year is not None

    @model_validator(mode="after")
    def _units_declared(self) -> DataSpec:
        if self.annual:
            if self.columns.workforce is None:
                raise ValueError("columns.workforce: annual data (data.year is given) need the "
                                 "workforce or population column, from which n is computed")
            for derived in ("workforce_growth", "income_start"):
                if getattr(self.columns, derived) is not None:
                    raise ValueError(f"columns.{derived}: with annual data it is computed from "
                                     "the yearly values; remove this mapping")
            if self.span is not None and not self.span[0] < self.span[1]:
                raise ValueError(f"span: the first year must come before the last, not "
                                 f"{list(self.span)}")
        else:
            for key, value, default in (("span", self.span, None),
                                        ("income_measure", self.income_measure, "per_worker"),
                                        ("columns.workforce", self.columns.workforce, None)):
                if value != default:
                    raise ValueError(f"{key}: only for annual data (give data.year, the column "
                                     "of years)")
        for var in UNIT_VARIABLES:
            if getattr(self.columns, var) is not None and getattr(self.units, var) is None:
                raise ValueError(
                    f"units.{var}: the unit of '{var}' must be declared as \"percent\" or "
                    f"\"fraction\" (it is never guessed)")
        return self


class Assumptions(Record):
    g_plus_delta: float = Field(0.05, gt=0, lt=1)
    span_years: float | None = Field(None, gt=0)


class EquationSpec(Record):
    name: str
    form: str = "levels"
    capital: tuple[str, ...] = ("physical",)
    samples: tuple[str, ...] | None = None
    structural: StrictBool = False

    @field_validator("name")
    @classmethod
    def _name_ok(cls, v: str) -> str:
        if not _NAME.match(v):
            raise ValueError(f"'{quote(v)}' must start with a letter and hold only letters, "
                             "digits, _ and - (at most 64 characters)")
        return v

    @model_validator(mode="after")
    def _form_known(self) -> EquationSpec:
        form = equations.find_form(self.form, self.capital)  # ValueError names the options
        if self.structural and not form.parameters.names:
            raise ValueError(f"structural: form '{form.key}' has no parameters to estimate")
        return self


class InferenceSpec(Record):
    covariance: CovarianceName = "classical"
    cluster: str | None = None
    confidence: float = Field(0.95, gt=0.5, lt=1)
    max_evaluations: int = Field(2000, ge=1)

    @model_validator(mode="after")
    def _cluster_named(self) -> InferenceSpec:
        if self.covariance == "cluster" and not self.cluster:
            raise ValueError("cluster: covariance = \"cluster\" needs cluster = \"<column>\"")
        if self.covariance != "cluster" and self.cluster:
            raise ValueError("cluster: a cluster column is given but covariance is not \"cluster\"")
        return self


class PlausibleSpec(Record):
    """Plausibility bands and test points for the implied shares (DOMAIN.md section 6)."""

    alpha: tuple[float, float] = (0.25, 0.40)
    beta: tuple[float, float] = (0.20, 0.45)
    alpha_point: float = 1 / 3
    beta_point: float = 1 / 3

    @field_validator("alpha", "beta")
    @classmethod
    def _band_ordered(cls, v: tuple[float, float]) -> tuple[float, float]:
        if not (0 <= v[0] < v[1] <= 1):
            raise ValueError(f"a band is [low, high] with 0 <= low < high <= 1, not {list(v)}")
        return v


class PanelSpec(Record):
    """How annual data become a period panel, and which panel estimators run."""

    period_years: int = Field(5, ge=1, le=50)
    first_year: int | None = None
    last_year: int | None = None
    estimators: tuple[Method, ...] = Field(METHODS, min_length=1)  # type: ignore[arg-type]
    gmm_steps: Literal[1, 2] = 2
    max_lag: int | None = Field(None, ge=1)
    collapse: StrictBool = False
    within_period_effects: StrictBool = True
    treatment: dict[str, Treatment] = Field(default_factory=dict)

    @field_validator("estimators")
    @classmethod
    def _once(cls, v: tuple[str, ...]) -> tuple[str, ...]:
        twice = [m for m in v if v.count(m) > 1]
        if twice:
            raise ValueError(f"'{twice[0]}' is listed twice")
        return v

    @field_validator("treatment")
    @classmethod
    def _treated(cls, v: dict[str, str]) -> dict[str, str]:
        for var in v:
            if var not in PANEL_REGRESSOR_VARIABLES:
                raise ValueError(f"'{quote(var)}' is not a regressor variable; valid: "
                                 f"{', '.join(PANEL_REGRESSOR_VARIABLES)}"
                                 f"{did_you_mean(var, PANEL_REGRESSOR_VARIABLES)}")
        return v


PANEL_REGRESSOR_VARIABLES = ("invest", "schooling", "human_stock", "workforce_growth")


class OutputSpec(Record):
    folder: str | None = None


class ReportSpec(Record):
    """How results are shown: decimal places, significance marks in LaTeX tables, figures,
    and how LaTeX tables are laid out."""

    digits: int = Field(3, ge=0, le=8)
    significance_marks: StrictBool = False
    figures: FigureChoice = "all"
    figure_formats: tuple[FigureFormat, ...] = Field(("svg",), min_length=1)
    latex_max_columns: int | None = Field(None, ge=1, le=20)
    latex_landscape: StrictBool = False


_LABEL_TEXT = 80  # longest display label (characters)


class LabelSpec(Record):
    """Display labels: what tables, figures and verdicts show instead of identifiers."""

    equations: dict[str, str] = Field(default_factory=dict)
    samples: dict[str, str] = Field(default_factory=dict)
    variables: dict[str, str] = Field(default_factory=dict)

    @field_validator("equations", "samples", "variables")
    @classmethod
    def _label_text(cls, v: dict[str, str]) -> dict[str, str]:
        for key, text in v.items():
            if not text.strip() or len(text) > _LABEL_TEXT or any(
                    ord(ch) < 32 for ch in text):
                raise ValueError(f"the label of '{quote(key)}' must be one line of 1 to "
                                 f"{_LABEL_TEXT} characters")
        return v


class TargetSpec(Record):
    """A published value the run should reproduce, within a tolerance."""

    equation: str
    sample: str
    quantity: str
    value: float
    tolerance: float = Field(gt=0)
    source: str = ""

    @field_validator("quantity")
    @classmethod
    def _canonical(cls, v: str) -> str:
        return canonical(v)


class BootstrapSpec(Record):
    """The bootstrap of every cross-section equation and sample (or of ``equations``)."""

    replications: int = Field(1999, ge=99, le=1_000_000)
    method: BootstrapMethod = "pairs"
    wild_weights: WildWeights = "rademacher"
    seed: int = Field(20261203, ge=0, lt=2**63)
    equations: tuple[str, ...] | None = None


class InfluenceSpec(Record):
    """Leave one economy out of every cross-section equation and sample (or of
    ``equations``); name the economies that move a share by more than ``threshold`` or the
    speed of convergence by more than ``speed_threshold`` (a year)."""

    threshold: float = Field(0.02, gt=0, lt=1)
    speed_threshold: float = Field(0.002, gt=0, lt=1)
    equations: tuple[str, ...] | None = None


class SweepSpec(Record):
    """A grid of specifications: every combination of the listed samples, values of
    g + delta and covariance choices, and (with ``drop_each``) each group of that column
    left out in turn."""

    equations: tuple[str, ...] | None = None
    samples: tuple[str, ...] | None = None
    g_plus_delta: tuple[float, ...] | None = Field(None, min_length=1)
    covariance: tuple[CovarianceName, ...] | None = Field(None, min_length=1)
    drop_each: str | None = None

    @field_validator("g_plus_delta")
    @classmethod
    def _gd_range(cls, v: tuple[float, ...] | None) -> tuple[float, ...] | None:
        for x in v or ():
            if not 0 < x < 1:
                raise ValueError(f"each value lies between 0 and 1, not {x:g}")
        return v


class SpecBody(Record):
    title: str = "steadyfit run"
    data: DataSpec
    assumptions: Assumptions = Field(default_factory=Assumptions)
    panel: PanelSpec = Field(default_factory=PanelSpec)
    samples: dict[str, str] = Field(default_factory=lambda: {"all": ""})
    equation: tuple[EquationSpec, ...] = Field(min_length=1)
    inference: InferenceSpec = Field(default_factory=InferenceSpec)
    plausible: PlausibleSpec = Field(default_factory=PlausibleSpec)
    output: OutputSpec = Field(default_factory=OutputSpec)
    report: ReportSpec = Field(default_factory=ReportSpec)
    labels: LabelSpec = Field(default_factory=LabelSpec)
    target: tuple[TargetSpec, ...] = ()
    bootstrap: BootstrapSpec | None = None
    influence: InfluenceSpec | None = None
    sweep: SweepSpec | None = None

    @field_validator("samples")
    @classmethod
    def _samples_ok(cls, v: dict[str, str]) -> dict[str, str]:
        if not v:
            raise ValueError("at least one sample is needed (an empty filter \"\" selects all)")
        for name in v:
            if not _NAME.match(name):
                raise ValueError(f"sample name '{quote(name)}' must start with a letter and hold "
                                 "only letters, digits, _ and - (at most 64 characters)")
        return v

    @model_validator(mode="after")
    def _cross_refs(self) -> SpecBody:
        names = [e.name for e in self.equation]
        for i, eq in enumerate(self.equation, 1):
            if names.count(eq.name) > 1:
                raise ValueError(f"equation[{i}].name: the name '{eq.name}' is used twice")
            for s in eq.samples or ():
                if s not in self.samples:
                    raise ValueError(f"equation[{i}].samples: unknown sample '{quote(s)}'"
                                     f"{did_you_mean(s, self.samples)}")
            form = equations.find_form(eq.form, eq.capital)
            derived = ("income_start", "workforce_growth") if self.data.annual else ()
            for var in form.needs:
                if getattr(self.data.columns, var, None) is None and var not in derived:
                    raise ValueError(f"equation[{i}]: form '{form.key}' needs the column "
                                     f"mapping data.columns.{var}")
            if form.form == "panel":
                if not self.data.annual:
                    raise ValueError(f"equation[{i}].form: a panel equation needs annual data "
                                     "(data.year names the column of years)")
                if eq.structural:
                    raise ValueError(f"equation[{i}].structural: not available for panel "
                                     "equations")
            elif form.needs_span and self.span_years is None and not self.data.annual:
                raise ValueError(f"equation[{i}]: form '{form.key}' needs assumptions.span_years")
        equations_by_name = {e.name: e for e in self.equation}
        self._check_labels(equations_by_name)
        if self.sweep is not None:
            for s in self.sweep.samples or ():
                if s not in self.samples:
                    raise ValueError(f"sweep.samples: unknown sample '{quote(s)}'"
                                     f"{did_you_mean(s, self.samples)}")
            if "cluster" in (self.sweep.covariance or ()) and not self.inference.cluster:
                raise ValueError("sweep.covariance: \"cluster\" needs inference.cluster, "
                                 "the column to cluster by")
        for section in ("bootstrap", "influence", "sweep"):
            asked = getattr(self, section)
            for name in (asked.equations or ()) if asked is not None else ():
                chosen = equations_by_name.get(name)
                if chosen is None:
                    raise ValueError(f"{section}.equations: unknown equation '{quote(name)}'"
                                     f"{did_you_mean(name, equations_by_name)}")
                if chosen.form == "panel":
                    raise ValueError(f"{section}.equations: '{name}' is a panel equation; "
                                     f"[{section}] covers cross-section equations")
        for i, t in enumerate(self.target, 1):
            target_eq = equations_by_name.get(t.equation)
            if target_eq is None:
                raise ValueError(f"target[{i}].equation: unknown equation '{quote(t.equation)}'"
                                 f"{did_you_mean(t.equation, equations_by_name)}")
            runs_on = target_eq.samples or tuple(self.samples)
            if t.sample not in runs_on:
                raise ValueError(f"target[{i}].sample: equation '{t.equation}' does not run on "
                                 f"sample '{quote(t.sample)}'{did_you_mean(t.sample, runs_on)}")
            known = quantity_names(equations.find_form(target_eq.form, target_eq.capital))
            if t.quantity not in known:
                raise ValueError(f"target[{i}].quantity: '{quote(t.quantity)}' is not a "
                                 f"quantity of equation '{t.equation}'"
                                 f"{did_you_mean(t.quantity, known)}")
        return self


    @property
    def span_years(self) -> float | None:
        """The growth form's span: as given, else the annual data's span."""
        if self.assumptions.span_years is not None:
            return self.assumptions.span_years
        if self.data.span is not None:
            return float(self.data.span[1] - self.data.span[0])
        return None

    def _check_labels(self, equations_by_name: dict[str, EquationSpec]) -> None:
        variables = [k for k, v in self.data.columns.model_dump().items() if v is not None]
        for section, known in (("equations", equations_by_name), ("samples", self.samples),
                               ("variables", variables)):
            for key in getattr(self.labels, section):
                if key not in known:
                    raise ValueError(f"labels.{section}: '{quote(key)}' is not one of the "
                                     f"{section} of this spec{did_you_mean(key, known)}")


class Spec:
    """A validated spec with its origin (file, folder for relative paths, hash)."""

    def __init__(self, body: SpecBody, base_dir: Path, path: Path | None, text: str,
                 notices: tuple[str, ...] = ()) -> None:
        self.body = body
        self.notices = notices  # renamed keys and old syntax still accepted
        self.base_dir = base_dir
        self.path = path
        self.text = text
        self.sha256 = hashlib.sha256(text.encode()).hexdigest()

    def __repr__(self) -> str:
        return f"Spec({self.body.title!r}, path={self.path})"

    @property
    def stem(self) -> str:
        """The spec file's stem made safe as one folder name (``...toml`` has the stem '..')."""
        return safe_stem(self.path.stem if self.path else "spec")

    @property
    def data_path(self) -> Path:
        return (self.base_dir / self.body.data.file).resolve()

    def equation_samples(self, eq: EquationSpec) -> tuple[str, ...]:
        return eq.samples if eq.samples else tuple(self.body.samples)


def safe_stem(stem: str) -> str:
    """A folder name from a file stem: no separators, control characters or leading dots, so
    it can never be '.', '..' or point outside the folder it is joined to."""
    text = re.sub(r"[^A-Za-z0-9_.\-]+", "_", stem).lstrip(".")[:64]
    return text or "spec"


def load_spec(path: str | Path) -> Spec:
    """Read and validate a TOML spec; relative paths inside resolve against its folder."""
    path = Path(path)
    raw, text = read_toml(path)
    return _validate(raw, path.parent.resolve(), path, text)


def spec_from_dict(raw: Mapping[str, Any], base_dir: str | Path = ".") -> Spec:
    """Validate a spec given as a dictionary (the parsed form of the TOML)."""
    if not isinstance(raw, Mapping):
        raise InputError("a spec is a table of keys", "spec")
    deep = too_deep(raw)
    if deep is not None:
        raise InputError(f"values are nested more than {MAX_DEPTH} levels deep", f"spec: {deep}")
    return _validate(dict(raw), Path(base_dir).resolve(), None, repr(sorted(raw.items(), key=str)))


def _validate(raw: dict[str, Any], base_dir: Path, path: Path | None, text: str) -> Spec:
    raw, notices = _renamed_keys(raw)
    body = validate(SpecBody, raw, path, text)
    notices += [f"samples.{name}: a column name in backticks is read as before, but backticks "
                "will stop working in a later release; write {column name} instead"
                for name, text in body.samples.items() if "`" in text]
    return Spec(body, base_dir, path, text, tuple(notices))


# Keys renamed in this release: the old name still works, with a notice.
_RENAMED = {("report", "stars"): "significance_marks"}


def _renamed_keys(raw: dict[str, Any]) -> tuple[dict[str, Any], list[str]]:
    notices = []
    for (section, old), new in _RENAMED.items():
        table = raw.get(section)
        if isinstance(table, Mapping) and old in table and new not in table:
            table = {(new if k == old else k): v for k, v in table.items()}
            raw = {**raw, section: table}
            notices.append(f"{section}.{old} is now called {section}.{new}; the old name works "
                           "in this release and will be removed in a later one")
    return raw, notices


