"""One table model shared by every renderer, and the builders that fill it from findings.

Builders read :class:`~steadyfit.findings.Findings` only.  A renderer (text,
Markdown, and later HTML and LaTeX) turns a :class:`Table` into its format and
never looks at findings itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, cast

from ..findings import EquationFindings, Estimate, Findings, ShareVerdict

CellKind = Literal["number", "integer", "pvalue", "text", "interval", "empty"]


@dataclass(frozen=True)
class Cell:
    """A value and how to show it; ``se`` goes in parentheses on the line below."""

    kind: CellKind
    value: object = None
    se: float | None = None
    p: float | None = None  # p-value of a coefficient, for optional significance marks

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


def format_number(x: float, digits: int = 3) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    if isinstance(x, float) and math.isinf(x):
        return "inf" if x > 0 else "-inf"
    text = f"{x:.{digits}f}"
    return "0." + "0" * digits if text == "-0." + "0" * digits else text


def format_cell(cell: Cell, digits: int = 3) -> tuple[str, str | None]:
    """Text of a cell and of its standard-error line (None when it has none)."""
    se = f"({format_number(cell.se, digits)})" if cell.se is not None else None
    v = cell.value
    if cell.kind == "empty" or v is None:
        return "", se
    if cell.kind == "integer":
        return f"{int(v):d}", se  # type: ignore[call-overload]
    if cell.kind == "pvalue":
        p = float(v)  # type: ignore[arg-type]
        return ("<0.001" if p < 0.001 else f"{p:.3f}"), se
    if cell.kind == "interval":
        lo, hi = cast(tuple[float | None, float | None], v)
        if lo is None or hi is None:
            return "n/a", se
        return f"[{format_number(lo, digits)}, {format_number(hi, digits)}]", se
    if cell.kind == "number":
        return format_number(float(v), digits), se  # type: ignore[arg-type]
    return str(v), se


def _columns(findings: Findings) -> tuple[tuple[str, ...], ...]:
    return tuple((r.equation, r.sample) for r in findings.results)


def _union_labels(per_column: list[list[str]]) -> list[str]:
    out: list[str] = []
    for labels in per_column:
        for lab in labels:
            if lab not in out:
                out.append(lab)
    # the constant goes last, as journals print it
    if "constant" in out:
        out.remove("constant")
        out.append("constant")
    return out


def _coef_rows(results: tuple[EquationFindings, ...], restricted: bool) -> list[Row]:
    fits = [r.restricted if restricted else r.unrestricted for r in results]
    labels = _union_labels([list(f.labels) for f in fits])
    rows = []
    for lab in labels:
        cells = []
        for f in fits:
            if lab in f.labels:
                i = f.labels.index(lab)
                cells.append(Cell("number", float(f.coef[i]), float(f.se[i]),
                                  float(f.pvalues[i])))
            else:
                cells.append(Cell.empty())
        rows.append(Row(lab, tuple(cells)))
    return rows


def _fit_rows(results: tuple[EquationFindings, ...], restricted: bool) -> list[Row]:
    fits = [r.restricted if restricted else r.unrestricted for r in results]
    return [
        Row("observations", tuple(Cell("integer", f.nobs) for f in fits), section="fit"),
        Row("R^2", tuple(Cell("number", f.rsquared) for f in fits)),
        Row("adjusted R^2", tuple(Cell("number", f.rsquared_adj) for f in fits)),
        Row("s.e. of regression", tuple(Cell("number", f.ser) for f in fits)),
    ]


def share_cell(v: ShareVerdict | None, steady: bool) -> Cell:
    if v is None:
        return Cell.empty()
    if not steady:
        return Cell("text", "no steady state")
    return Cell("number", v.estimate.value, v.estimate.se)


def coefficient_table(findings: Findings, restricted: bool) -> Table:
    results = findings.results
    rows = _coef_rows(results, restricted)
    rows += _fit_rows(results, restricted)
    if restricted:
        names = list(dict.fromkeys(s.name for r in results for s in r.shares))
        first = True
        for name in names:
            rows.append(Row(f"implied {name}",
                            tuple(share_cell(r.share(name), r.steady_state) for r in results),
                            section="implied shares" if first else None))
            first = False
    else:
        rows.append(Row("restriction F", tuple(Cell("number", r.f_test.statistic)
                                               for r in results), section="restriction test"))
        rows.append(Row("p-value (F)", tuple(Cell("pvalue", r.f_test.pvalue) for r in results)))
        rows.append(Row("restriction Wald", tuple(Cell("number", r.wald_test.statistic)
                                                  for r in results)))
        rows.append(Row("p-value (Wald)", tuple(Cell("pvalue", r.wald_test.pvalue)
                                                for r in results)))
    s = findings.settings
    cov = s.covariance + (f" by '{s.cluster}'" if s.cluster else "")
    which = "restricted" if restricted else "unrestricted"
    notes = [f"Dependent variable: log income per worker. Standard errors ({cov} covariance) "
             "in parentheses.",
             f"g + delta = {s.g_plus_delta:g}."]
    if restricted:
        notes.append("Implied shares by the delta method from the restricted slopes.")
    else:
        notes.append("The restriction: the slopes sum to zero (constant returns). F uses the "
                     "classical covariance; Wald uses the run's covariance.")
    return Table(f"{which}_coefficients", f"{which.capitalize()} regressions", "",
                 _columns(findings), tuple(rows), tuple(notes))


def journal_table(findings: Findings) -> Table:
    """The layout journals print: unrestricted slopes, fit, the restriction's p-value, then the
    restricted slopes and the shares they imply."""
    results = findings.results
    rows = _coef_rows(results, restricted=False)
    fits = [r.unrestricted for r in results]
    rows += [
        Row("observations", tuple(Cell("integer", f.nobs) for f in fits), section="fit"),
        Row("adjusted R^2", tuple(Cell("number", f.rsquared_adj) for f in fits)),
        Row("s.e. of regression", tuple(Cell("number", f.ser) for f in fits)),
        Row("restriction p-value (F)", tuple(Cell("pvalue", r.f_test.pvalue) for r in results)),
    ]
    restricted = _coef_rows(results, restricted=True)
    restricted = [x for x in restricted if x.label != "constant"]
    if restricted:
        restricted[0] = Row(restricted[0].label, restricted[0].cells, section="restricted")
    rows += restricted
    names = list(dict.fromkeys(s.name for r in results for s in r.shares))
    rows += [Row(f"implied {name}", tuple(share_cell(r.share(name), r.steady_state)
                                         for r in results)) for name in names]
    s = findings.settings
    cov = s.covariance + (f" by '{s.cluster}'" if s.cluster else "")
    notes = (f"Dependent variable: log income per worker. Standard errors ({cov} covariance) in "
             f"parentheses. g + delta = {s.g_plus_delta:g}.",
             "Restriction: the unrestricted slopes sum to zero. Implied shares from the "
             "restricted slopes, delta-method standard errors.")
    return Table("regressions", "Steady-state income regressions", "", _columns(findings),
                 tuple(rows), notes)


def _interval(e: Estimate) -> Cell:
    return Cell("interval", (e.low, e.high))


def share_status(v: ShareVerdict, steady: bool) -> str:
    """One word or phrase for where a share stands: its band verdict, or why it has none."""
    if not steady:
        return "no steady state"
    if v.interval_reaches_one:
        return "interval reaches 1 (no steady state)"
    return v.band_status or ""


def format_p(p: float) -> str:
    """A p-value for prose: three decimals, or '< 0.001'."""
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def shares_table(findings: Findings) -> Table:
    """Implied shares with intervals, band verdicts and the z-test against the point."""
    pct = round(findings.settings.confidence * 100)
    rows = []
    for r in findings.results:
        first = True
        for v in r.shares:
            e = v.estimate
            status = share_status(v, r.steady_state)
            cells = (
                Cell("text", e.name),
                share_cell(v, r.steady_state) if r.steady_state else Cell("text", "n/a"),
                Cell("number", e.se),
                _interval(e),
                Cell("interval", (e.exact_low, e.exact_high)) if e.exact_low is not None
                else Cell("text", "-"),
                Cell("interval", v.band) if v.band else Cell("text", "-"),
                Cell("text", status),
                Cell("pvalue", v.point_test.pvalue) if v.point_test else Cell("text", "-"),
            )
            rows.append(Row(r.column if first else "", tuple(
                Cell(c.kind, c.value) for c in cells)))
            first = False
    cols = (("share",), ("estimate",), ("s.e.",), (f"{pct}% interval (delta)",),
            (f"{pct}% interval (endpoints)",), ("plausible band",), ("verdict",),
            ("p (share = point)",))
    pts = ", ".join(f"{k} = {v:.4g}" for k, v in findings.settings.points.items())
    notes = ("Verdict: 'inside' when the whole interval lies in the band, 'overlaps' when they "
             "share some values, 'outside' when they share none.",
             "Endpoint interval: the coefficient's interval mapped through the share formula "
             "(exact where the share depends on one coefficient).",
             f"Test points: {pts}.")
    return Table("implied_shares", "Implied capital shares", "equation / sample", cols,
                 tuple(rows), notes)


def crosscheck_table(findings: Findings) -> Table:
    rows = []
    for r in findings.results:
        c = r.crosscheck
        shares = ", ".join(f"{e.name} {format_number(e.value)} ({format_number(e.se)})"
                           for e in r.unrestricted_shares)
        rows.append(Row(r.column, (
            Cell("text", shares),
            Cell("text", c.quantity),
            Cell("number", c.from_rates.value, c.from_rates.se),
            Cell("number", c.from_growth.value, c.from_growth.se),
            Cell("number", c.gap.value, c.gap.se),
            Cell("pvalue", c.test.pvalue),
        )))
    cols = (("shares from investment slopes (s.e.)",), ("quantity",),
            ("from investment slopes",), ("from n+g+d slope",), ("difference",),
            ("p-value",))
    note = ("The unrestricted slopes imply the same share twice: once from the investment "
            "slopes and once from the n+g+d slope. A small p-value says the two disagree.")
    return Table("unrestricted_crosscheck", "Shares implied by the unrestricted regression",
                 "equation / sample", cols, tuple(rows), (note,))


def dropped_table(findings: Findings) -> Table:
    rows = []
    for r in findings.results:
        for d in r.dropped:
            rows.append(Row(r.column, (Cell("text", d.economy), Cell("text", d.reason))))
    return Table("dropped_economies", "Economies dropped from estimation samples",
                 "equation / sample", (("economy",), ("reason",)), tuple(rows),
                 () if rows else ("No economy was dropped.",))


def samples_table(findings: Findings) -> Table:
    rows = [Row(s.name, (Cell("text", s.filter or "(all)"), Cell("integer", s.n_selected)))
            for s in findings.samples]
    for r in findings.results:
        rows.append(Row(r.column, (Cell("text", f"used ({len(r.dropped)} dropped)"),
                                   Cell("integer", r.nobs)), section=None))
    return Table("samples", "Samples", "sample", (("filter",), ("economies",)), tuple(rows))


def compact_table(findings: Findings) -> Table:
    """One line per equation and sample: the numbers a reader looks at first."""
    rows = []
    for r in findings.results:
        cells: list[Cell] = [Cell("integer", r.nobs), Cell("pvalue", r.f_test.pvalue)]
        for name in ("alpha", "beta"):
            v = r.share(name)
            cells.append(share_cell(v, r.steady_state) if v else Cell("text", "-"))
            cells.append(_interval(v.estimate) if v and r.steady_state else Cell("text", ""))
            cells[-2] = Cell(cells[-2].kind, cells[-2].value)
        status = "; ".join(f"{v.name} {v.band_status}" for v in r.shares if v.band_status)
        if not r.steady_state:
            status = "no steady state"
        cells.append(Cell("text", status))
        rows.append(Row(r.column, tuple(cells)))
    pct = round(findings.settings.confidence * 100)
    cols = (("N",), ("p restr.",), ("alpha",), (f"{pct}% interval",), ("beta",),
            (f"{pct}% interval",), ("against the bands",))
    return Table("key_results", "Key results", "equation / sample", cols, tuple(rows),
                 ("p restr.: F test of the constant-returns restriction. Shares from the "
                  "restricted fit, delta-method intervals.",))


def scorecard_table(findings: Findings) -> Table | None:
    """Published targets against our numbers (None when the spec lists no target)."""
    if not findings.scorecard:
        return None
    rows = tuple(Row(f"{t.equation} / {t.sample}", (
        Cell("text", t.quantity),
        Cell("number", t.published),
        Cell("number", t.ours),
        Cell("number", t.difference),
        Cell("number", t.tolerance),
        Cell("text", "met" if t.met else "MISSED"),
        Cell("text", t.source),
    )) for t in findings.scorecard)
    met = sum(t.met for t in findings.scorecard)
    return Table("scorecard", "Replication scorecard", "equation / sample",
                 (("quantity",), ("published",), ("ours",), ("difference",), ("tolerance",),
                  ("verdict",), ("source",)), rows,
                 (f"{met} of {len(rows)} targets met (|ours - published| <= tolerance).",),
                 digits=findings.settings.digits + 1)


def all_tables(findings: Findings) -> tuple[Table, ...]:
    """Every table of a run, in reading order."""
    card = scorecard_table(findings)
    return (*((card,) if card else ()),
        shares_table(findings),
        journal_table(findings),
        coefficient_table(findings, restricted=False),
        coefficient_table(findings, restricted=True),
        crosscheck_table(findings),
        samples_table(findings),
        dropped_table(findings),
    )


def _share_phrase(v: ShareVerdict, steady: bool) -> str:
    e = v.estimate
    pct = round(e.confidence * 100)
    if not steady:
        return f"{e.name}: no steady state (estimate {format_number(e.value)} is not an " \
               "ordinary share)"
    text = (f"{e.name} = {format_number(e.value)} ({pct}% interval "
            f"{format_number(e.low)} to {format_number(e.high)})")
    if v.band and v.band_status:
        where = {"inside": "inside", "overlaps": "overlapping", "outside": "outside"}
        text += (f", {where[v.band_status]} the plausible band {format_number(v.band[0], 2)}"
                 f" to {format_number(v.band[1], 2)}")
    if v.point_test and v.point is not None:
        p = format_p(v.point_test.pvalue)
        text += f"; test of {e.name} = {v.point:.3g}: p {p if p.startswith('<') else '= ' + p}"
    if v.interval_reaches_one:
        text += "; the interval reaches 1, where no steady state exists"
    return text


def verdict_lines(findings: Findings) -> tuple[str, ...]:
    """One plain-language verdict per equation and sample, for the top of every report."""
    level = 1 - findings.settings.confidence
    out = []
    for r in findings.results:
        f = r.f_test
        p = format_p(f.pvalue)
        ptxt = f"p {p}" if p.startswith("<") else f"p = {p}"
        held = "rejected" if f.rejects(level) else "not rejected"
        shares = "; ".join(_share_phrase(v, r.steady_state) for v in r.shares
                           if v.band is not None or "+" in v.name)
        out.append(f"{r.column} ({r.nobs} economies): the constant-returns restriction is "
                   f"{held} at the {level:.0%} level (F {ptxt}). {shares}.")
    return tuple(out)
