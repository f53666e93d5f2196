"""Tables of the robustness analyses: bootstrap intervals beside the delta-method ones.

Reads findings only; built only for the analyses a run asked for.
"""

from __future__ import annotations

from ..findings import EquationFindings, Findings
from ..labels import quantity_label
from .model import (
    EXTRA_DIGITS,
    NOT_AVAILABLE,
    PLACEHOLDER,
    Cell,
    Reasons,
    Row,
    Table,
    test_cell,
)


def _interval(pair: tuple[float, float] | None, x: int) -> Cell:
    return Cell("text", NOT_AVAILABLE) if pair is None else Cell("interval", pair,
                                                                  extra_digits=x)


def _delta(r: EquationFindings, name: str) -> tuple[float, float] | None:
    v = r.share(name)
    e = v.estimate if v is not None else r.speed_estimate(name)
    return (e.low, e.high) if e is not None and e.has_se else None


def bootstrap_table(findings: Findings) -> Table | None:
    """Each bootstrapped quantity: estimate, delta-method interval, the percentile,
    bias-corrected and studentised intervals, and the draws' standard deviation; a row for the
    restriction's asymptotic and bootstrap p-values.  None without a bootstrap."""
    cells = [r for r in findings.results if r.bootstrap is not None]
    if not cells:
        return None
    reasons = Reasons()
    rows: list[Row] = []
    descriptions = []
    for r in cells:
        b = r.bootstrap
        assert b is not None
        descriptions.append(b.description)
        first = True
        for i in b.intervals:
            x = EXTRA_DIGITS.get(i.name, 0)
            reasons.add(i.reason, r.heading)
            estimate = (Cell("number", i.estimate, i.spread, extra_digits=x)
                        if i.estimate == i.estimate else Cell("text", NOT_AVAILABLE))
            rows.append(Row(r.heading if first else "", (
                Cell("text", quantity_label(i.name)), estimate,
                _interval(_delta(r, i.name), x), _interval(i.percentile, x),
                _interval(i.bias_corrected, x), _interval(i.studentised, x))))
            first = False
        if b.restriction is not None and r.wald_test is not None:
            rows.append(Row(r.heading if first else "", (
                Cell("text", "restriction p"), Cell("text", PLACEHOLDER),
                test_cell(r.wald_test, False, reasons, r.heading),
                test_cell(b.restriction, False, reasons, r.heading),
                Cell("text", PLACEHOLDER), Cell("text", PLACEHOLDER))))
    pct = round(findings.settings.confidence * 100)
    method = "; ".join(dict.fromkeys(descriptions))
    notes = [
        f"{method[0].upper()}{method[1:]}. Intervals at {pct}% from the draws whose parameters "
        "are ordinary (a steady state and, for growth forms, convergence): percentile; "
        "bias-corrected (shifted by the share of draws below the estimate); studentised "
        "(each draw divided by its own delta-method standard error). In parentheses: the "
        "standard deviation of the draws.",
        "Restriction p: the asymptotic p-value of the Wald test (delta column) and its "
        "bootstrap p-value (percentile column), the share of draws whose statistic is at "
        "least the sample's; the pairs bootstrap recentres each draw at the sample's "
        "restriction value, the wild bootstrap draws under the restriction.",
    ]
    cols = (("quantity",), ("estimate",), (f"{pct}% delta",), ("percentile",),
            ("bias-corrected",), ("studentised",))
    return Table("bootstrap", "Bootstrap intervals", "equation / sample", cols, tuple(rows),
                 tuple(notes + reasons.notes()))
