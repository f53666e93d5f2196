"""One table model shared by every renderer, and the builders that fill it from findings.

Builders read :class:`~steadyfit.findings.Findings` only.  A renderer (text,
Markdown, and later HTML and LaTeX) turns a :class:`Table` into its format and
never looks at findings itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, cast

from ..findings import EquationFindings, Estimate, Findings, ShareVerdict, TestResult

CellKind = Literal["number", "integer", "pvalue", "text", "interval", "empty"]


@dataclass(frozen=True)
class Cell:
    """A value and how to show it; ``se`` goes in parentheses on the line below."""

    kind: CellKind
    value: object = None
    se: float | None = None
    p: float | None = None  # p-value of a coefficient, for optional significance marks
    extra_digits: int = 0  # more (or, negative, fewer) decimals than the table's

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
    digits = max(0, digits + cell.extra_digits)
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


def problem_label(r: EquationFindings) -> str:
    """A few words for a result whose estimates imply no ordinary parameters."""
    return (r.problem or "").split(":")[0]


# Speeds of convergence are small numbers and half-lives are years: show them so.
EXTRA_DIGITS = {"lam": 1, "half_life": -2}


def estimate_cell(e: Estimate | None, r: EquationFindings) -> Cell:
    """A derived parameter with its standard error, or why there is none."""
    if e is None:
        return Cell.empty()
    if not r.steady_state:
        return Cell("text", problem_label(r))
    return Cell("number", e.value, e.se, extra_digits=EXTRA_DIGITS.get(e.name, 0))


def share_cell(v: ShareVerdict | None, r: EquationFindings) -> Cell:
    return estimate_cell(v.estimate if v else None, r)


_FAMILIES = {"levels": ("", "Steady-state income regressions"),
             "growth": ("_growth", "Growth regressions (convergence)")}


def families(findings: Findings) -> list[tuple[str, str, tuple[EquationFindings, ...]]]:
    """Results grouped by form (their dependent variables differ): key suffix, title, results."""
    out = []
    for form, (suffix, title) in _FAMILIES.items():
        results = tuple(r for r in findings.results if r.form_key.startswith(form + ":"))
        if results:
            out.append((suffix, title, results))
    return out


def _parameter_rows(results: tuple[EquationFindings, ...], section: str | None) -> list[Row]:
    rows: list[Row] = []
    names = list(dict.fromkeys(s.name for r in results for s in r.shares))
    for name in names:
        rows.append(Row(f"implied {name}", tuple(share_cell(r.share(name), r) for r in results),
                        section=section if not rows else None))
    labels = {"lam": "implied lambda", "half_life": "half-life (years)"}
    for name in dict.fromkeys(e.name for r in results for e in r.speed):
        rows.append(Row(labels.get(name, name),
                        tuple(estimate_cell(r.speed_estimate(name), r) for r in results),
                        section=section if not rows else None))
    return rows


def _notes(findings: Findings, results: tuple[EquationFindings, ...]) -> list[str]:
    s = findings.settings
    cov = s.covariance + (f" by '{s.cluster}'" if s.cluster else "")
    dependent = "; ".join(dict.fromkeys(r.dependent_label for r in results))
    notes = [f"Dependent variable: {dependent}. Standard errors ({cov} covariance) in "
             f"parentheses. g + delta = {s.g_plus_delta:g}."]
    if any(r.speed for r in results):
        notes.append(f"Span {s.span_years:g} years; lambda = -ln(1 + b)/span with b the "
                     "coefficient on initial income; half-life ln 2 / lambda.")
    return notes


def _test_cell(t: TestResult | None, stat: bool) -> Cell:
    if t is None:
        return Cell("text", "-")
    return Cell("number", t.statistic) if stat else Cell("pvalue", t.pvalue)


def coefficient_table(findings: Findings, restricted: bool,
                      results: tuple[EquationFindings, ...] | None = None,
                      suffix: str = "") -> Table:
    results = findings.results if results is None else results
    rows = _coef_rows(results, restricted)
    rows += _fit_rows(results, restricted)
    notes = _notes(findings, results)
    if restricted:
        rows += _parameter_rows(results, "implied parameters")
        notes.append("Implied parameters by the delta method from the restricted slopes.")
    else:
        rows += [
            Row("restriction F", tuple(_test_cell(r.f_test, True) for r in results),
                section="restriction test"),
            Row("p-value (F)", tuple(_test_cell(r.f_test, False) for r in results)),
            Row("restriction Wald", tuple(_test_cell(r.wald_test, True) for r in results)),
            Row("p-value (Wald)", tuple(_test_cell(r.wald_test, False) for r in results)),
        ]
        notes.append("The restriction: the slopes of the rates sum to zero (constant returns). "
                     "F uses the classical covariance; Wald uses the run's covariance.")
    which = "restricted" if restricted else "unrestricted"
    return Table(f"{which}_coefficients{suffix}", f"{which.capitalize()} regressions"
                 + (" (growth)" if suffix else ""), "",
                 tuple((r.equation, r.sample) for r in results), tuple(rows), tuple(notes))


def journal_table(findings: Findings, results: tuple[EquationFindings, ...] | None = None,
                  suffix: str = "", title: str = "Steady-state income regressions") -> Table:
    """The layout journals print: unrestricted slopes, fit, the restriction's p-value, then the
    restricted slopes and the parameters they imply."""
    results = findings.results if results is None else results
    rows = _coef_rows(results, restricted=False)
    fits = [r.unrestricted for r in results]
    rows += [
        Row("observations", tuple(Cell("integer", f.nobs) for f in fits), section="fit"),
        Row("adjusted R^2", tuple(Cell("number", f.rsquared_adj) for f in fits)),
        Row("s.e. of regression", tuple(Cell("number", f.ser) for f in fits)),
    ]
    if any(r.f_test for r in results):
        rows.append(Row("restriction p-value (F)",
                        tuple(_test_cell(r.f_test, False) for r in results)))
    restricted = [x for x in _coef_rows(results, restricted=True) if x.label != "constant"]
    if restricted:
        restricted[0] = Row(restricted[0].label, restricted[0].cells, section="restricted")
    rows += restricted
    rows += _parameter_rows(results, None)
    notes = _notes(findings, results)
    notes.append("Restriction: the unrestricted slopes of the rates sum to zero. Implied "
                 "parameters from the restricted slopes, delta-method standard errors.")
    return Table(f"regressions{suffix}", title, "",
                 tuple((r.equation, r.sample) for r in results), tuple(rows), tuple(notes))


def _interval(e: Estimate) -> Cell:
    return Cell("interval", (e.low, e.high))


def share_status(v: ShareVerdict, r: EquationFindings) -> str:
    """One word or phrase for where a share stands: its band verdict, or why it has none."""
    if not r.steady_state:
        return problem_label(r)
    if v.interval_reaches_one:
        return "interval reaches 1 (no steady state)"
    return v.band_status or ""


def format_p(p: float) -> str:
    """A p-value for prose: three decimals, or '< 0.001'."""
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def p_phrase(p: float) -> str:
    """'p < 0.001' or 'p = 0.123'."""
    text = format_p(p)
    return f"p {text}" if text.startswith("<") else f"p = {text}"


def shares_table(findings: Findings) -> Table:
    """Implied shares with intervals, band verdicts and the z-test against the point."""
    pct = round(findings.settings.confidence * 100)
    rows = []
    for r in findings.results:
        first = True
        lines = [(v.estimate, v) for v in r.shares] + [(e, None) for e in r.speed]
        for e, v in lines:
            ok = r.steady_state
            x = EXTRA_DIGITS.get(e.name, 0)
            cells = (
                Cell("text", e.name),
                Cell("number", e.value, extra_digits=x) if ok else Cell("text", "n/a"),
                Cell("number", e.se, extra_digits=x) if ok else Cell("text", "-"),
                Cell("interval", (e.low, e.high), extra_digits=x) if ok else Cell("text", "-"),
                Cell("interval", (e.exact_low, e.exact_high), extra_digits=x)
                if ok and e.exact_low is not None else Cell("text", "-"),
                Cell("interval", v.band) if v and v.band else Cell("text", "-"),
                Cell("text", share_status(v, r) if v else (
                    "" if r.steady_state else problem_label(r))),
                Cell("pvalue", v.point_test.pvalue) if v and v.point_test else Cell("text", "-"),
            )
            rows.append(Row(r.column if first else "", cells))
            first = False
    cols = (("share",), ("estimate",), ("s.e.",), (f"{pct}% interval (delta)",),
            (f"{pct}% interval (endpoints)",), ("plausible band",), ("verdict",),
            ("p (share = point)",))
    pts = ", ".join(f"{k} = {v:.4g}" for k, v in findings.settings.points.items())
    notes = ("Verdict: 'inside' when the whole interval lies in the band, 'overlaps' when they "
             "share some values, 'outside' when they share none.",
             "Endpoint interval: the coefficient's interval mapped through the share formula "
             "(exact where the share depends on one coefficient).",
             f"Test points: {pts}.",
             "lam: speed of convergence per year; half_life: years to close half the gap to "
             "the steady state (growth forms).")
    return Table("implied_shares", "Implied capital shares", "equation / sample", cols,
                 tuple(rows), notes)


def crosscheck_table(findings: Findings) -> Table:
    rows = []
    for r in findings.results:
        c = r.crosscheck
        if c is None:
            continue
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


def structural_table(findings: Findings) -> Table | None:
    """Each parameter three ways: mapped from the restricted OLS fit, by minimum distance from
    the unrestricted slopes, and by nonlinear least squares (where asked for)."""
    rows = []
    robust_names = set()
    for r in findings.results:
        if r.minimum_distance is None and r.nonlinear is None:
            continue
        mapped = {v.estimate.name: v.estimate for v in r.shares} | {e.name: e for e in r.speed}
        first = True
        for name in (n for n in mapped if "+" not in n and n != "half_life"):
            e = mapped[name]
            md = r.minimum_distance.estimate(name) if r.minimum_distance else None
            nls = r.nonlinear.estimate(name) if r.nonlinear else None
            rob = r.nonlinear.estimate(name, robust=True) if r.nonlinear else None
            if r.nonlinear:
                robust_names.add(r.nonlinear.robust_covariance)
            rows.append(Row(r.column if first else "", (
                Cell("text", name),
                Cell("number", e.value, e.se),
                Cell("number", md.value, md.se) if md else Cell("text", "-"),
                Cell("number", nls.value, nls.se) if nls else Cell("text", "-"),
                Cell("number", rob.se) if rob else Cell("text", "-"),
            )))
            first = False
        if r.minimum_distance is not None:
            t = r.minimum_distance.overid
            rows.append(Row("", (Cell("text", "over-identification"),
                                 Cell("text", f"chi2({t.df[0]:g}) = {t.statistic:.3f}"),
                                 Cell("pvalue", t.pvalue), Cell("text", ""), Cell("text", ""))))
    if not rows:
        return None
    robust = "/".join(sorted(robust_names)) or "robust"
    return Table("structural", "Structural estimates of the parameters", "equation / sample",
                 (("parameter",), ("from restricted OLS",), ("minimum distance",),
                  ("nonlinear LS",), (f"nonlinear LS s.e. ({robust})",)), tuple(rows),
                 ("Standard errors in parentheses. Minimum distance fits the parameters to the "
                  "unrestricted slopes weighted by their inverse covariance; its minimum is "
                  "the over-identification statistic (p-value in the next column). Nonlinear "
                  "least squares fits the restricted equation in the parameters directly "
                  "(classical standard errors; the last column robust ones).",),
                 digits=findings.settings.digits + 1)


def consistency_table(findings: Findings) -> Table | None:
    """Levels against growth form on the same sample: speed of convergence and shares."""
    if not findings.consistency:
        return None
    rows = []
    for c in findings.consistency:
        rows.append(Row(f"{c.levels_equation} vs {c.growth_equation} / {c.sample}", (
            Cell("text", {"lam": "lambda"}.get(c.quantity, c.quantity)),
            Cell("number", c.from_levels.value, c.from_levels.se),
            Cell("number", c.from_growth.value, c.from_growth.se),
            Cell("number", c.difference.value, c.difference.se),
            Cell("pvalue", c.test.pvalue),
            Cell("text", "joint" if c.joint_covariance else "independent"),
        )))
    return Table("consistency", "Cross-equation consistency: levels against growth",
                 "equations / sample",
                 (("quantity",), ("levels form",), ("growth form",), ("growth - levels",),
                  ("p-value",), ("covariance",)), tuple(rows),
                 ("lambda from the levels form: the sample's mean n + g + delta times "
                  "(1 - alpha - beta); from the growth form: -ln(1 + b)/span. 'joint': the "
                  "two fits' correlation is estimated (same economies); 'independent': it is "
                  "ignored (the samples differ).",), digits=findings.settings.digits + 1)


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
    speed = any(r.speed for r in findings.results)
    for r in findings.results:
        cells: list[Cell] = [Cell("integer", r.nobs), _test_cell(r.f_test, False)]
        for name in ("alpha", "beta"):
            v = r.share(name)
            c = share_cell(v, r) if v else Cell("text", "-")
            cells.append(Cell(c.kind, c.value))
            cells.append(_interval(v.estimate) if v and r.steady_state else Cell("text", ""))
        if speed:
            lam = r.speed_estimate("lam")
            cells.append(Cell("number", lam.value, extra_digits=1) if lam and r.steady_state
                         else Cell("text", "-"))
        status = "; ".join(f"{v.name} {v.band_status}" for v in r.shares if v.band_status)
        if not r.steady_state:
            status = problem_label(r)
        cells.append(Cell("text", status))
        rows.append(Row(r.column, tuple(cells)))
    pct = round(findings.settings.confidence * 100)
    cols = (("N",), ("p restr.",), ("alpha",), (f"{pct}% interval",), ("beta",),
            (f"{pct}% interval",), *((("lambda",),) if speed else ()), ("against the bands",))
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
    groups = families(findings)
    out: list[Table] = [*((card,) if card else ()), shares_table(findings)]
    out += [journal_table(findings, res, suffix, title) for suffix, title, res in groups]
    for restricted in (False, True):
        out += [coefficient_table(findings, restricted, res, suffix) for suffix, _, res in groups]
    if any(r.crosscheck for r in findings.results):
        out.append(crosscheck_table(findings))
    for optional in (structural_table(findings), consistency_table(findings)):
        if optional is not None:
            out.append(optional)
    out += [samples_table(findings), dropped_table(findings)]
    return tuple(out)


def _share_phrase(v: ShareVerdict, r: EquationFindings) -> str:
    e = v.estimate
    pct = round(e.confidence * 100)
    if not r.steady_state:
        return f"{e.name}: {problem_label(r)} (estimate {format_number(e.value)} is not an " \
               "ordinary share)"
    text = (f"{e.name} = {format_number(e.value)} ({pct}% interval "
            f"{format_number(e.low)} to {format_number(e.high)})")
    if v.band and v.band_status:
        where = {"inside": "inside", "overlaps": "overlapping", "outside": "outside"}
        text += (f", {where[v.band_status]} the plausible band {format_number(v.band[0], 2)}"
                 f" to {format_number(v.band[1], 2)}")
    if v.point_test and v.point is not None:
        text += f"; test of {e.name} = {v.point:.3g}: {p_phrase(v.point_test.pvalue)}"
    if v.interval_reaches_one:
        text += "; the interval reaches 1, where no steady state exists"
    return text


def verdict_lines(findings: Findings) -> tuple[str, ...]:
    """One plain-language verdict per equation and sample, for the top of every report."""
    level = 1 - findings.settings.confidence
    out = []
    for r in findings.results:
        f = r.f_test
        if f is None:
            head = f"{r.column} ({r.nobs} economies): no restriction to test."
        else:
            held = "rejected" if f.rejects(level) else "not rejected"
            head = (f"{r.column} ({r.nobs} economies): the constant-returns restriction is "
                    f"{held} at the {level:.0%} level (F {p_phrase(f.pvalue)}).")
        parts = [_share_phrase(v, r) for v in r.shares if v.band is not None or "+" in v.name]
        lam, half = r.speed_estimate("lam"), r.speed_estimate("half_life")
        if lam is not None and half is not None:
            parts.append(
                f"convergence {format_number(lam.value, 4)} a year ({round(lam.confidence * 100)}"
                f"% interval {format_number(lam.low, 4)} to {format_number(lam.high, 4)}), a "
                f"half-life of {half.value:.0f} years" if r.steady_state else problem_label(r))
        text = "; ".join(parts)
        out.append(f"{head} {text[0].upper()}{text[1:]}." if parts else head)
    return (*out, *consistency_lines(findings))


def consistency_lines(findings: Findings) -> tuple[str, ...]:
    """One sentence per cross-equation comparison."""
    level = 1 - findings.settings.confidence
    out = []
    for c in findings.consistency:
        what = "speed of convergence" if c.quantity == "lam" else c.quantity
        held = "disagree" if c.test.rejects(level) else "agree"
        out.append(f"{c.levels_equation} and {c.growth_equation} on {c.sample}: the {what} "
                   f"from the levels form ({format_number(c.from_levels.value, 4)}) and from "
                   f"the growth form ({format_number(c.from_growth.value, 4)}) {held} at the "
                   f"{level:.0%} level ({p_phrase(c.test.pvalue)}).")
    return tuple(out)
