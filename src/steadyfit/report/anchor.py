"""The table of implied capital shares held against the national accounts.

Built only when the run's data carry a labour share (``data.columns.labour_share``);
one row per implied alpha, cross-section results first, then each panel
estimator.  Reads findings only.
"""

from __future__ import annotations

from ..findings import Findings, ShareVerdict
from ..labels import ALPHA, MINUS
from .model import NOT_AVAILABLE, PLACEHOLDER, Cell, Reasons, Row, Table, estimate_cell, test_cell


def _lies_in(inside: bool | None, in_band: bool | None) -> Cell:
    """Where the measured share lies: in the implied share's interval, the band, both or
    neither ('-' where a side is not known)."""
    if inside is None and in_band is None:
        return Cell("text", PLACEHOLDER)
    places = [w for w, flag in (("interval", inside), ("band", in_band)) if flag]
    unknown = [w for w, flag in (("interval", inside), ("band", in_band)) if flag is None]
    text = " and ".join(places) if places else "neither"
    if unknown:
        text += f" ({' and '.join(unknown)} {NOT_AVAILABLE})"
    return Cell("text", text)


def anchor_row(heading: str, v: ShareVerdict, reasons: Reasons) -> Row:
    """One implied share against the measured capital share, as a row of the table."""
    a = v.anchor
    assert a is not None
    m = a.measured
    reasons.add(m.reason, heading)
    if m.available:
        measured = Cell("number", m.value, m.se)
        spread = Cell("interval", (m.lowest, m.highest))
    else:
        measured = spread = Cell("text", NOT_AVAILABLE)
    gap = estimate_cell(a.gap, reasons, heading) if m.available else Cell("text", PLACEHOLDER)
    return Row(heading, (
        estimate_cell(v.estimate, reasons, heading), measured, spread,
        Cell("text", f"{m.n} of {m.n_sample}"), gap,
        test_cell(a.test, False, reasons if m.available else None, heading),
        _lies_in(a.inside, a.measured_in_band)))


def anchor_table(findings: Findings) -> Table | None:
    """Implied alpha against the sample's measured capital share, or None when no result
    has one."""
    anchored = findings.anchored()
    if not anchored:
        return None
    reasons = Reasons()
    rows = [anchor_row(heading, v, reasons) for heading, v in anchored]
    measured = [v.anchor.measured for _, v in anchored if v.anchor is not None]
    pct = round(findings.settings.confidence * 100)
    years = sorted({m.years for m in measured if m.years is not None})
    averaged = ("; within each economy the labour share is averaged over the years "
                + ", ".join(f"{a}\u2013{b}" for a, b in years) if years else "")
    independent = any(v.anchor is not None and v.anchor.covariance is None
                      for _, v in anchored)
    notes = [
        f"Measured: 1 {MINUS} the labour share the data give, the unweighted mean over the "
        "economies each equation used that have one (not the capital share of the group's "
        "total income), with the standard error of that mean in parentheses; range: its "
        f"lowest and highest economy{averaged}.",
        f"Difference: implied {ALPHA} {MINUS} measured. Its standard error uses the covariance "
        "of the two, estimated from each economy's contribution to both"
        + ("; panel estimators treat them as independent" if independent else "")
        + ". p tests that they are equal, counting sampling error only. "
        f"'Measured lies in': {ALPHA}'s {pct}% interval, the plausible band, both or neither.",
        "What the measured share leaves out: income of the self-employed booked as capital "
        "income raises it, and it holds land and resource rents (see the caveats); these "
        "errors of measurement can exceed the sampling error the test counts.",
    ]
    cols = ((f"implied {ALPHA}",), ("measured",), ("range",), ("economies",),
            ("difference",), ("p (equal)",), ("measured lies in",))
    return Table("capital_share_anchor", "Implied capital share against national accounts",
                 "equation / sample", cols, tuple(rows), tuple(notes + reasons.notes()))
