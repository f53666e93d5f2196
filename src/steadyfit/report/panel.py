"""The panel table: one column per estimator, each coefficient, implied parameter and
diagnostic once, filled from panel findings only."""

from __future__ import annotations

import math
from dataclasses import replace

from ..equations import get_form
from ..findings import Findings
from ..labels import GAMMA, MINUS, quantity_label
from ..panel.methods import ASSUMES, TITLES
from ..panel.results import PanelFindings
from .model import NOT_AVAILABLE, PLACEHOLDER, Cell, Reasons, Row, Table, estimate_cell, test_cell

LAG_LABEL = f"ln(y) of the period before, {GAMMA}"


def _coef(fit_coef: float, se: float) -> Cell:
    return Cell("number", fit_coef, se if math.isfinite(se) else math.nan)


def panel_table(findings: Findings, p: PanelFindings) -> Table:
    """Every estimator of one panel equation on one sample, side by side."""
    form = get_form(p.form_key, float(p.period_years))
    est = p.estimators
    reasons = Reasons()
    rows: list[Row] = []

    def coefficient_rows(restricted: bool, section: str) -> None:
        regs = form.restricted if restricted else form.unrestricted
        for j, reg in enumerate(regs):
            label = LAG_LABEL if reg.name == "ln_y0" else reg.text()
            cells = []
            for f in est:
                fit = f.restricted if restricted else f.unrestricted
                cells.append(_coef(float(fit.coef[j]), float(fit.se[j])))
            rows.append(Row(label, tuple(cells), section if j == 0 else None))

    coefficient_rows(False, "Unrestricted")
    coefficient_rows(True, "Restricted (constant returns imposed)")
    implied = [n for n in (*form.parameters.shares,
                           *(("+".join(form.parameters.shares),)
                             if len(form.parameters.shares) > 1 else ()), "lam", "half_life")]
    first = True
    for name in implied:
        cells = []
        for f in est:
            e = (f.speed_estimate(name) if name in ("lam", "half_life") else
                 f.share_estimate(name))
            cells.append(estimate_cell(e, reasons, f"{quantity_label(name)}, {f.title}"))
        rows.append(Row(quantity_label(name), tuple(cells),
                        "Implied by the restricted fit" if first else None))
        first = False
    rows.append(Row("against the bands", tuple(
        Cell("text", "; ".join(f"{quantity_label(v.name)} {v.band_status}" for v in f.shares
                               if v.band_status) or PLACEHOLDER) for f in est)))
    tests = (
        ("restriction (Wald), p", lambda f: f.wald_test),
        ("over-identification, p", lambda f: f.unrestricted.test("Sargan", "Hansen")),
        ("AR(1) in differences, p", lambda f: f.unrestricted.test("AR(1)")),
        ("AR(2) in differences, p", lambda f: f.unrestricted.test("AR(2)")),
        ("first-stage F", lambda f: f.unrestricted.test("first-stage")),
    )
    for i, (label, pick) in enumerate(tests):
        cells = []
        for f in est:
            cells.append(test_cell(pick(f), label.startswith("first-stage"), reasons,
                                   f"{label}, {f.title}"))
        rows.append(Row(label, tuple(cells), "Tests" if i == 0 else None))
    rows.append(Row("within the within-to-pooled bracket", tuple(
        Cell("text", PLACEHOLDER if f.bracket is None else
             ("yes" if f.bracket.inside else "no")) for f in est)))
    rows.append(Row("observations", tuple(Cell("integer", f.unrestricted.nobs) for f in est),
                    "Sample"))
    rows.append(Row("economies", tuple(Cell("integer", f.unrestricted.n_economies)
                                       for f in est)))
    rows.append(Row("instruments", tuple(
        Cell("integer", f.unrestricted.n_instruments) if f.unrestricted.n_instruments
        is not None else Cell("text", PLACEHOLDER) for f in est)))
    notes = [f"{p.heading}: {form.description}; periods of {p.period_years} years. "
             + " ".join(line[:1].upper() + line[1:] + "." for line in p.shape) + " "
             f"{GAMMA} is the coefficient on log income of the period before; "
             f"{quantity_label('lam')} = {MINUS}ln({GAMMA})/{p.period_years} and the shares "
             "come from the restricted fit through the same maps as the growth form. Standard "
             "errors (in parentheses) are clustered by economy; two-step GMM standard errors "
             "carry the Windmeijer correction. Over-identification: Sargan after one step, "
             "Hansen's J after two."]
    notes += [f"{TITLES[f.method]} assumes {ASSUMES[f.method]}." for f in est]
    notes += [f"Bracket, {f.title}: {f.bracket.sentence}." for f in est
              if f.bracket is not None and not f.bracket.inside]
    notes += [f"{f.title}: {f.problem}." for f in est if f.problem]
    notes += list(p.notes)
    notes += reasons.notes()
    return Table(f"panel_{p.equation}_{p.sample}", f"Dynamic panel: {p.heading}", "",
                 tuple((f.title,) for f in est), tuple(rows), tuple(notes))


def panel_tables(findings: Findings) -> list[Table]:
    return [panel_table(findings, p) for p in findings.panels]


def _narrow(cell: Cell) -> Cell:
    """A number without its remark, 'n/a' for a word (the notes say why): narrow columns."""
    if cell.kind == "text" and cell.value != PLACEHOLDER:
        return Cell("text", NOT_AVAILABLE)
    return replace(cell, remark=None)


def panel_key_table(findings: Findings) -> Table | None:
    """The terminal's view of the panels: one row per equation, sample and estimator with
    gamma, the implied parameters and the tests that decide whether to trust them."""
    if not findings.panels:
        return None
    shares = list(dict.fromkeys(v.name for p in findings.panels for f in p.estimators
                                for v in f.shares if "+" not in v.name))
    reasons = Reasons()
    rows = []
    for p in findings.panels:
        for i, f in enumerate(p.estimators):
            where = f"{p.heading}, {f.title}"
            numbers = [f.gamma, f.speed_estimate("lam"),
                       *(f.share_estimate(s) for s in shares)]
            cells = [_narrow(estimate_cell(e, reasons, where, se=False)) for e in numbers]
            cells += [test_cell(f.wald_test, False, reasons, where),
                      test_cell(f.unrestricted.test("AR(2)"), False, reasons, where),
                      test_cell(f.unrestricted.test("Sargan", "Hansen"), False, reasons,
                                where),
                      Cell("text", PLACEHOLDER if f.bracket is None else
                           ("inside" if f.bracket.inside else "outside"))]
            rows.append(Row(TITLES[f.method], tuple(cells), p.heading if i == 0 else None))
    columns = [(GAMMA,), (quantity_label("lam"),), *((quantity_label(s),) for s in shares),
               ("p restr.",), ("AR(2) p",), ("over-id. p",), ("bracket",)]
    steps = {f.restricted.steps for p in findings.panels for f in p.estimators
             if f.restricted.steps}
    notes = [("GMM in " + " and ".join({1: "one step", 2: "two steps"}[k] for k in sorted(steps))
              + ". " if steps else "") +
             f"{GAMMA}: coefficient on log income of the period before; shares and "
             f"{quantity_label('lam')} from the restricted fit. p restr.: Wald test of "
             "constant returns; AR(2) p: no second-order correlation of the differenced "
             "residuals; over-id. p: Sargan (one step) or Hansen's J (two steps); bracket: "
             f"GMM estimate of {GAMMA} against the within-to-pooled interval; a negative "
             f"{quantity_label('lam')} means divergence. Every "
             "estimator, its assumptions and its coefficients: the panel tables of the run "
             "folder.", *reasons.notes()]
    return Table("panel_key_results", "Dynamic panels", "estimator", tuple(columns),
                 tuple(rows), tuple(notes))
