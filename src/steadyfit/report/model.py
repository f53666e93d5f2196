"""The table model every renderer shares: cells, rows, tables, and number formatting.

Builders (:mod:`steadyfit.report.tables`) fill it from findings; renderers
(text, Markdown, HTML, LaTeX) turn a :class:`Table` into their format and never
look at findings.  Text in a table is typographic Unicode (see
:mod:`steadyfit.labels`); only the LaTeX renderer translates it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, cast

from ..findings import Estimate, TestResult
from ..labels import signed

CellKind = Literal["number", "integer", "pvalue", "text", "interval", "empty"]


@dataclass(frozen=True)
class Cell:
    """A value and how to show it; ``se`` goes in parentheses on the line below."""

    kind: CellKind
    value: object = None
    se: float | None = None
    p: float | None = None  # p-value of a coefficient, for optional significance marks
    extra_digits: int = 0  # more (or, negative, fewer) decimals than the table's
    remark: str | None = None  # a word after the value ("divergence")
    interval: tuple[float, float] | None = None  # shown on the line below (instead of se)

    @staticmethod
    def empty() -> Cell:
        return Cell("empty")


@dataclass(frozen=True)
class Row:
    label: str
    cells: tuple[Cell, ...]
    section: str | None = None  # a heading shown above the first row of a section


@dataclass(frozen=True)
class Table:
    """A table: column headers (one tuple of header levels per column), rows, notes."""

    key: str
    title: str
    stub: str
    columns: tuple[tuple[str, ...], ...]
    rows: tuple[Row, ...]
    notes: tuple[str, ...] = ()
    digits: int | None = None  # overrides the run's decimal places for this table

    def places(self, default: int) -> int:
        return self.digits if self.digits is not None else default

    def __str__(self) -> str:
        from .text import render_table_text

        return render_table_text(self)

    def _repr_html_(self) -> str:
        from .html import render_table_html

        return render_table_html(self)

    def text_columns(self) -> tuple[bool, ...]:
        """Per column: True when every cell is text (renderers align those to the left)."""
        return tuple(all(r.cells[j].kind in ("text", "empty") for r in self.rows)
                     for j in range(len(self.columns)))


# Shown for a number that is not available; the table's notes give the reason.
NOT_AVAILABLE = "n/a"
UNBOUNDED = "unbounded"
PLACEHOLDER = "\u2013"  # an en dash: nothing to show in this cell


def format_number(x: float, digits: int = 3) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    if isinstance(x, float) and math.isinf(x):
        return UNBOUNDED
    text = f"{x:.{digits}f}"
    return text.lstrip("-") if float(text) == 0 else signed(text)  # never "−0.000"


def _interval_text(bounds: tuple[float | None, float | None], digits: int) -> str:
    lo, hi = bounds
    if lo is None or hi is None or math.isnan(lo) or math.isnan(hi):
        return NOT_AVAILABLE
    return f"[{format_number(lo, digits)}, {format_number(hi, digits)}]"


def format_cell(cell: Cell, digits: int = 3) -> tuple[str, str | None]:
    """Text of a cell and of its second line, the standard error in parentheses or the
    interval in brackets (None when it has neither)."""
    digits = max(0, digits + cell.extra_digits)
    se = None
    if cell.se is not None:
        se = f"({format_number(cell.se, digits) if math.isfinite(cell.se) else NOT_AVAILABLE})"
    elif cell.interval is not None:
        se = _interval_text(cell.interval, digits)
    v = cell.value
    if cell.kind == "empty" or v is None:
        return "", se
    if cell.kind == "integer":
        return f"{int(v):d}", se  # type: ignore[call-overload]
    if cell.kind == "pvalue":
        p = float(v)  # type: ignore[arg-type]
        if math.isnan(p):
            return NOT_AVAILABLE, se
        return ("<0.001" if p < 0.001 else f"{p:.3f}"), se
    if cell.kind == "interval":
        return _interval_text(cast(tuple[float | None, float | None], v), digits), se
    if cell.kind == "number":
        x = float(v)  # type: ignore[arg-type]
        text = format_number(x, digits) if not math.isnan(x) else NOT_AVAILABLE
        return (f"{text} {cell.remark}" if cell.remark else text), se
    return str(v), se


# Speeds of convergence are small numbers and half-lives are years: show them so.
EXTRA_DIGITS = {"lam": 1, "half_life": -2}


class Reasons:
    """Collects why numbers of a table are not available, for one note per reason."""

    def __init__(self) -> None:
        self._seen: dict[str, list[str]] = {}

    def add(self, reason: str | None, where: str) -> None:
        if reason:
            places = self._seen.setdefault(reason, [])
            if where not in places:
                places.append(where)

    def notes(self) -> list[str]:
        return [f"{NOT_AVAILABLE} ({'; '.join(places)}): {reason}."
                for reason, places in self._seen.items()]


def estimate_cell(e: Estimate | None, reasons: Reasons | None = None, where: str = "",
                  se: bool = True) -> Cell:
    """A derived parameter with its standard error; what stands in for it when it has none."""
    if e is None:
        return Cell.empty()
    if reasons is not None:
        reasons.add(e.reason, where)
    x = EXTRA_DIGITS.get(e.name, 0)
    if not e.has_value:
        return Cell("text", e.missing)
    return Cell("number", e.value, (e.se if e.has_se else math.nan) if se else None,
                extra_digits=x, remark=e.remark)


def test_cell(t: TestResult | None, stat: bool, reasons: Reasons | None = None,
              where: str = "") -> Cell:
    """A test's statistic or p-value; 'n/a' (reason noted) when it is not available."""
    if t is None:
        return Cell("text", PLACEHOLDER)
    if not t.available:
        if reasons is not None:
            reasons.add(t.reason, where)
        return Cell("text", NOT_AVAILABLE)
    return Cell("number", t.statistic) if stat else Cell("pvalue", t.pvalue)


