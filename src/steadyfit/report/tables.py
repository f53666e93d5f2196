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
    remark: str | None = None  # a word after the value ("divergence")

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


def format_number(x: float, digits: int = 3) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    if isinstance(x, float) and math.isinf(x):
        return UNBOUNDED
    text = f"{x:.{digits}f}"
    return "0." + "0" * digits if text == "-0." + "0" * digits else text


def format_cell(cell: Cell, digits: int = 3) -> tuple[str, str | None]:
    """Text of a cell and of its standard-error line (None when it has none)."""
    digits = max(0, digits + cell.extra_digits)
    se = None
    if cell.se is not None:
        se = f"({format_number(cell.se, digits) if math.isfinite(cell.se) else NOT_AVAILABLE})"
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
        lo, hi = cast(tuple[float | None, float | None], v)
        if lo is None or hi is None or math.isnan(lo) or math.isnan(hi):
            return NOT_AVAILABLE, se
        return f"[{format_number(lo, digits)}, {format_number(hi, digits)}]", se
    if cell.kind == "number":
        x = float(v)  # type: ignore[arg-type]
        text = format_number(x, digits) if not math.isnan(x) else NOT_AVAILABLE
        return (f"{text} {cell.remark}" if cell.remark else text), se
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
    """A few words for a result whose estimates imply no ordinary shares."""
    return (r.problem or "").split(":")[0]


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


def _parameter_rows(results: tuple[EquationFindings, ...], section: str | None,
                    reasons: Reasons) -> list[Row]:
    rows: list[Row] = []
    names = list(dict.fromkeys(s.name for r in results for s in r.shares))
    for name in names:
        rows.append(Row(f"implied {name}", tuple(
            estimate_cell(v.estimate if (v := r.share(name)) else None, reasons, r.column)
            for r in results), section=section if not rows else None))
    labels = {"lam": "implied lambda", "half_life": "half-life (years)"}
    for name in dict.fromkeys(e.name for r in results for e in r.speed):
        rows.append(Row(labels.get(name, name),
                        tuple(estimate_cell(r.speed_estimate(name), reasons, r.column)
                              for r in results), section=section if not rows else None))
    return rows


def covariance_words(findings: Findings, results: tuple[EquationFindings, ...]) -> str:
    """The covariance choice, with the number of clusters of each clustered result."""
    s = findings.settings
    if not s.cluster:
        return s.covariance
    counts = list(dict.fromkeys(r.unrestricted.n_clusters for r in results))
    if len(counts) == 1:
        return f"cluster-robust by '{s.cluster}', {counts[0]} clusters"
    per = ", ".join(f"{r.column}: {r.unrestricted.n_clusters}" for r in results)
    return f"cluster-robust by '{s.cluster}'; clusters {per}"


def _notes(findings: Findings, results: tuple[EquationFindings, ...]) -> list[str]:
    s = findings.settings
    cov = covariance_words(findings, results)
    dependent = "; ".join(dict.fromkeys(r.dependent_label for r in results))
    notes = [f"Dependent variable: {dependent}. Standard errors ({cov} covariance) in "
             f"parentheses. g + delta = {s.g_plus_delta:g}."]
    if any(r.speed for r in results):
        notes.append(f"Span {s.span_years:g} years; lambda = -ln(1 + b)/span with b the "
                     "coefficient on initial income (negative: divergence); half-life "
                     "ln 2 / lambda.")
    return notes


def test_cell(t: TestResult | None, stat: bool, reasons: Reasons | None = None,
              where: str = "") -> Cell:
    """A test's statistic or p-value; 'n/a' (reason noted) when it is not available."""
    if t is None:
        return Cell("text", "-")
    if not t.available:
        if reasons is not None:
            reasons.add(t.reason, where)
        return Cell("text", NOT_AVAILABLE)
    return Cell("number", t.statistic) if stat else Cell("pvalue", t.pvalue)


def _restriction_rows(results: tuple[EquationFindings, ...], reasons: Reasons) -> list[Row]:
    return [
        Row("restriction F", tuple(test_cell(r.f_test, True, reasons, r.column)
                                   for r in results), section="restriction test"),
        Row("p-value (F)", tuple(test_cell(r.f_test, False) for r in results)),
        Row("restriction Wald", tuple(test_cell(r.wald_test, True, reasons, r.column)
                                      for r in results)),
        Row("p-value (Wald)", tuple(test_cell(r.wald_test, False) for r in results)),
    ]


def coefficient_table(findings: Findings, restricted: bool,
                      results: tuple[EquationFindings, ...] | None = None,
                      suffix: str = "") -> Table:
    results = findings.results if results is None else results
    reasons = Reasons()
    rows = _coef_rows(results, restricted)
    rows += _fit_rows(results, restricted)
    notes = _notes(findings, results)
    if restricted:
        rows += _parameter_rows(results, "implied parameters", reasons)
        notes.append("Implied parameters by the delta method from the restricted slopes.")
    else:
        rows += _restriction_rows(results, reasons)
        notes.append("The restriction: the slopes of the rates sum to zero (constant returns). "
                     "F uses the classical covariance; Wald uses the run's covariance.")
    which = "restricted" if restricted else "unrestricted"
    return Table(f"{which}_coefficients{suffix}", f"{which.capitalize()} regressions"
                 + (" (growth)" if suffix else ""), "",
                 tuple((r.equation, r.sample) for r in results), tuple(rows),
                 tuple(notes + reasons.notes()))


def journal_table(findings: Findings, results: tuple[EquationFindings, ...] | None = None,
                  suffix: str = "", title: str = "Steady-state income regressions") -> Table:
    """The layout journals print: unrestricted slopes, fit, the restriction's p-value, then the
    restricted slopes and the parameters they imply."""
    results = findings.results if results is None else results
    reasons = Reasons()
    rows = _coef_rows(results, restricted=False)
    fits = [r.unrestricted for r in results]
    rows += [
        Row("observations", tuple(Cell("integer", f.nobs) for f in fits), section="fit"),
        Row("adjusted R^2", tuple(Cell("number", f.rsquared_adj) for f in fits)),
        Row("s.e. of regression", tuple(Cell("number", f.ser) for f in fits)),
    ]
    if any(r.f_test for r in results):
        rows.append(Row("restriction p-value (F)",
                        tuple(test_cell(r.f_test, False, reasons, r.column) for r in results)))
    restricted = [x for x in _coef_rows(results, restricted=True) if x.label != "constant"]
    if restricted:
        restricted[0] = Row(restricted[0].label, restricted[0].cells, section="restricted")
    rows += restricted
    rows += _parameter_rows(results, None, reasons)
    notes = _notes(findings, results)
    notes.append("Restriction: the unrestricted slopes of the rates sum to zero. Implied "
                 "parameters from the restricted slopes, delta-method standard errors.")
    return Table(f"regressions{suffix}", title, "",
                 tuple((r.equation, r.sample) for r in results), tuple(rows),
                 tuple(notes + reasons.notes()))


def share_status(v: ShareVerdict, r: EquationFindings) -> str:
    """One word or phrase for where a share stands: its band verdict, or why it has none."""
    e = v.estimate
    if not e.has_value:
        return e.missing
    if v.interval_reaches_one:
        return "interval reaches 1 (no steady state)"
    if v.band is not None and v.band_status is None:
        return "not available (no interval)"
    return v.band_status or ""


def _interval_cell(lo: float | None, hi: float | None, x: int) -> Cell:
    if lo is None or hi is None:
        return Cell("text", "-")
    return Cell("interval", (lo, hi), extra_digits=x)


def shares_table(findings: Findings) -> Table:
    """Implied shares with intervals, band verdicts and the z-test against the point."""
    pct = round(findings.settings.confidence * 100)
    reasons = Reasons()
    rows = []
    for r in findings.results:
        first = True
        lines = [(v.estimate, v) for v in r.shares] + [(e, None) for e in r.speed]
        for e, v in lines:
            x = EXTRA_DIGITS.get(e.name, 0)
            reasons.add(e.reason, r.column)
            if v and v.point_test:
                reasons.add(v.point_test.reason, r.column)
            if e.has_value:
                value = Cell("number", e.value, extra_digits=x, remark=e.remark)
                se = Cell("number", e.se, extra_digits=x)
                delta = Cell("interval", (e.low, e.high), extra_digits=x)
            else:
                value, se, delta = Cell("text", e.missing), Cell("text", "-"), Cell("text", "-")
            cells = (
                Cell("text", e.name), value, se, delta,
                _interval_cell(e.exact_low, e.exact_high, x),
                Cell("interval", v.band) if v and v.band else Cell("text", "-"),
                Cell("text", share_status(v, r) if v else ""),
                test_cell(v.point_test, False) if v and v.point_test else Cell("text", "-"),
            )
            rows.append(Row(r.column if first else "", cells))
            first = False
    cols = (("share",), ("estimate",), ("s.e.",), (f"{pct}% interval (delta)",),
            (f"{pct}% interval (endpoints)",), ("plausible band",), ("verdict",),
            ("p (share = point)",))
    pts = ", ".join(f"{k} = {v:.4g}" for k, v in findings.settings.points.items())
    notes = ["Verdict: 'inside' when the whole interval lies in the band, 'overlaps' when they "
             "share some values, 'outside' when they share none.",
             "Endpoint interval: the coefficient's interval mapped through the share formula "
             "(exact where the share depends on one coefficient).",
             f"Test points: {pts}.",
             "lam: speed of convergence per year (negative: divergence); half_life: years to "
             "close half the gap to the steady state (growth forms), its intervals mapped from "
             "lam's, unbounded where lam's interval reaches zero."]
    return Table("implied_shares", "Implied capital shares", "equation / sample", cols,
                 tuple(rows), tuple(notes + reasons.notes()))


def crosscheck_table(findings: Findings) -> Table:
    reasons = Reasons()
    rows = []
    for r in findings.results:
        c = r.crosscheck
        if c is None:
            continue
        shares = ", ".join(
            f"{e.name} {format_number(e.value)} "
            f"({format_number(e.se) if e.has_se else NOT_AVAILABLE})"
            for e in r.unrestricted_shares)
        rows.append(Row(r.column, (
            Cell("text", shares),
            Cell("text", c.quantity),
            estimate_cell(c.from_rates, reasons, r.column),
            estimate_cell(c.from_growth, reasons, r.column),
            estimate_cell(c.gap, reasons, r.column),
            test_cell(c.test, False, reasons, r.column),
        )))
    cols = (("shares from investment slopes (s.e.)",), ("quantity",),
            ("from investment slopes",), ("from n+g+d slope",), ("difference",),
            ("p-value",))
    note = ("The unrestricted slopes imply the same share twice: once from the investment "
            "slopes and once from the n+g+d slope. A small p-value says the two disagree.")
    return Table("unrestricted_crosscheck", "Shares implied by the unrestricted regression",
                 "equation / sample", cols, tuple(rows), (note, *reasons.notes()))


def structural_table(findings: Findings) -> Table | None:
    """Each parameter three ways: mapped from the restricted OLS fit, by minimum distance from
    the unrestricted slopes, and by nonlinear least squares (where asked for)."""
    reasons = Reasons()
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
            if rob is not None:
                reasons.add(rob.reason, r.column)
            rows.append(Row(r.column if first else "", (
                Cell("text", name),
                estimate_cell(e, reasons, r.column),
                estimate_cell(md, reasons, r.column) if md else Cell("text", "-"),
                estimate_cell(nls, reasons, r.column) if nls else Cell("text", "-"),
                Cell("number", rob.se if rob.has_se else math.nan,
                     extra_digits=EXTRA_DIGITS.get(name, 0)) if rob else Cell("text", "-"),
            )))
            first = False
        if r.minimum_distance is not None:
            t = r.minimum_distance.overid
            reasons.add(t.reason, r.column)
            stat = (f"chi2({t.df[0]:g}) = {t.statistic:.3f}" if t.available
                    else NOT_AVAILABLE)
            rows.append(Row("", (Cell("text", "over-identification"), Cell("text", stat),
                                 test_cell(t, False), Cell("text", ""), Cell("text", ""))))
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
                  "(classical standard errors; the last column robust ones).",
                  *reasons.notes()),
                 digits=findings.settings.digits + 1)


def consistency_table(findings: Findings) -> Table | None:
    """Levels against growth form on the same sample: speed of convergence and shares."""
    if not findings.consistency:
        return None
    reasons = Reasons()
    rows = []
    for c in findings.consistency:
        where = f"{c.levels_equation} vs {c.growth_equation} / {c.sample}"
        cov = "joint" if c.joint_covariance else "independent"
        if c.n_clusters is not None:
            cov += f", {c.n_clusters} clusters"
        rows.append(Row(where, (
            Cell("text", {"lam": "lambda"}.get(c.quantity, c.quantity)),
            estimate_cell(c.from_levels, reasons, where),
            estimate_cell(c.from_growth, reasons, where),
            estimate_cell(c.difference, reasons, where),
            test_cell(c.test, False, reasons, where),
            Cell("text", cov),
        )))
    return Table("consistency", "Cross-equation consistency: levels against growth",
                 "equations / sample",
                 (("quantity",), ("levels form",), ("growth form",), ("growth - levels",),
                  ("p-value",), ("covariance",)), tuple(rows),
                 ("lambda from the levels form: the sample's mean n + g + delta times "
                  "(1 - alpha - beta); from the growth form: -ln(1 + b)/span. 'joint': the "
                  "two fits' correlation is estimated (same economies); 'independent': it is "
                  "ignored (the samples differ).", *reasons.notes()),
                 digits=findings.settings.digits + 1)


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
    reasons = Reasons()
    rows = []
    speed = any(r.speed for r in findings.results)
    clustered = findings.settings.cluster is not None
    for r in findings.results:
        cells: list[Cell] = [Cell("integer", r.nobs)]
        if clustered:
            cells.append(Cell("integer", r.unrestricted.n_clusters))
        cells.append(test_cell(r.f_test, False, reasons, r.column))
        for name in ("alpha", "beta"):
            v = r.share(name)
            if v is None:
                cells += [Cell("text", "-"), Cell("text", "")]
                continue
            e = v.estimate
            cells.append(estimate_cell(e, reasons, r.column, se=False))
            cells.append(Cell("interval", (e.low, e.high)) if e.has_value else Cell("text", ""))
        if speed:
            lam = r.speed_estimate("lam")
            cells.append(estimate_cell(lam, reasons, r.column, se=False) if lam
                         else Cell("text", "-"))
        status = "; ".join(f"{v.name} {share_status(v, r)}" for v in r.shares
                           if v.band is not None and v.estimate.has_value)
        cells.append(Cell("text", status if r.steady_state else problem_label(r)))
        rows.append(Row(r.column, tuple(cells)))
    pct = round(findings.settings.confidence * 100)
    cols = (("N",), *((("clusters",),) if clustered else ()), ("p restr.",), ("alpha",),
            (f"{pct}% interval",), ("beta",), (f"{pct}% interval",),
            *((("lambda",),) if speed else ()), ("against the bands",))
    return Table("key_results", "Key results", "equation / sample", cols, tuple(rows),
                 ("p restr.: F test of the constant-returns restriction. Shares from the "
                  "restricted fit, delta-method intervals.", *reasons.notes()))


def scorecard_table(findings: Findings) -> Table | None:
    """Published targets against our numbers (None when the spec lists no target)."""
    if not findings.scorecard:
        return None
    reasons = Reasons()
    rows = []
    for t in findings.scorecard:
        where = f"{t.equation} / {t.sample}"
        reasons.add(f"{t.quantity}: {t.reason}" if t.reason else None, where)
        ours = (Cell("number", t.ours) if t.ours is not None else Cell("text", NOT_AVAILABLE))
        diff = t.difference
        rows.append(Row(where, (
            Cell("text", t.quantity),
            Cell("number", t.published),
            ours,
            Cell("number", diff) if diff is not None else Cell("text", NOT_AVAILABLE),
            Cell("number", t.tolerance),
            Cell("text", "met" if t.met else ("not available" if t.ours is None else "MISSED")),
            Cell("text", t.source),
        )))
    met = sum(t.met for t in findings.scorecard)
    return Table("scorecard", "Replication scorecard", "equation / sample",
                 (("quantity",), ("published",), ("ours",), ("difference",), ("tolerance",),
                  ("verdict",), ("source",)), tuple(rows),
                 (f"{met} of {len(rows)} targets met (|ours - published| <= tolerance); a "
                  "quantity that is not available does not meet its target.",
                  *reasons.notes()),
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
