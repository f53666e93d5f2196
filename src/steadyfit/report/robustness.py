"""Tables of the robustness analyses: bootstrap intervals beside the delta-method ones.

Reads findings only; built only for the analyses a run asked for.
"""

from __future__ import annotations

import numpy as np

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


# economies listed per cell in the influence table
LISTED = 10


def influence_table(findings: Findings) -> Table | None:
    """The economies the leave-one-out analysis names: the shift in each implied quantity,
    the restriction's p-value without the economy and its Cook's distance.  None without the
    analysis."""
    cells = [r for r in findings.results if r.influence is not None]
    if not cells:
        return None
    quantities = list(dict.fromkeys(q for r in cells if r.influence is not None
                                    for q in r.influence.quantities))
    rows: list[Row] = []
    for r in cells:
        inf = r.influence
        assert inf is not None
        if not inf.named:
            rows.append(Row(r.heading, (Cell("text", "none named"),
                                        *(Cell("text", PLACEHOLDER) for _ in quantities),
                                        Cell("text", PLACEHOLDER), Cell("text", PLACEHOLDER))))
            continue
        for j, e in enumerate(inf.named[:LISTED]):
            shifts = [Cell("number", e.shifts[q], extra_digits=EXTRA_DIGITS.get(q, 0))
                      if q in e.shifts and e.shifts[q] == e.shifts[q] else
                      Cell("text", "no steady state" if not e.ordinary else PLACEHOLDER)
                      for q in quantities]
            rows.append(Row(r.heading if j == 0 else "", (
                Cell("text", e.economy), *shifts,
                Cell("pvalue", e.restriction_p) if e.restriction_p is not None
                else Cell("text", PLACEHOLDER),
                Cell("number", e.cooks_distance))))
        if len(inf.named) > LISTED:
            rows.append(Row("", (Cell("text", f"and {len(inf.named) - LISTED} more"),
                                 *(Cell("text", "") for _ in quantities), Cell("text", ""),
                                 Cell("text", ""))))
    first = cells[0].influence
    assert first is not None
    notes = [
        "Each economy left out in turn and the equation refitted under the run's covariance. "
        "Shift: the implied quantity without the economy minus with all. Named: economies "
        f"that move a share by more than {first.threshold:g} or {quantity_label('lam')} by "
        f"more than {first.speed_threshold:g} a year (the spec's [influence] settings), whose "
        "Cook's distance (restricted fit) exceeds 4/n (common practice, no source), or "
        "without which no steady state is implied; the largest effect first, at most "
        f"{LISTED} a result.",
        "Restriction p: the Wald test of the restriction without the economy, under the "
        "run's covariance.",
    ]
    cols = (("economy left out",), *((f"shift in {quantity_label(q)}",) for q in quantities),
            ("restriction p",), ("Cook's distance",))
    return Table("influence", "Influential economies", "equation / sample", cols, tuple(rows),
                 tuple(notes))


def sweep_table(findings: Findings) -> Table | None:
    """Per equation: how many specifications the sweep fitted, the range of the implied
    shares, how many share intervals overlap the band and how many restriction tests
    reject.  None without a sweep."""
    s = findings.sweep
    if s is None:
        return None
    level = 1 - findings.settings.confidence
    rows = []
    for eq in s.equations():
        mine = [r for r in s.rows if r.equation == eq]
        fitted = [r for r in mine if r.reason is None]
        first = True
        for q in [q for q in ("alpha", "beta", "lam") if any(q in r.values for r in mine)]:
            values = np.array([r.values[q] for r in fitted])
            x = EXTRA_DIGITS.get(q, 0)
            overlap, counted = s.share_overlapping(eq, q)
            band = s.bands.get(q)
            rows.append(Row(findings.labels.equation(eq) if first else "", (
                Cell("text", quantity_label(q)),
                Cell("text", f"{len(fitted)} of {len(mine)}"),
                *(Cell("number", float(f(values)), extra_digits=x) if len(values) else
                  Cell("text", NOT_AVAILABLE) for f in (np.min, np.median, np.max)),
                Cell("text", f"{overlap} of {counted}" if band is not None else PLACEHOLDER),
            )))
            first = False
        rejected, tested = s.share_rejecting(eq, level)
        rows.append(Row("", (Cell("text", "restriction rejected"),
                             Cell("text", f"{rejected} of {tested}" if tested else
                                  PLACEHOLDER),
                             *(Cell("text", PLACEHOLDER) for _ in range(4)))))
    samples = dict.fromkeys(r.sample for r in s.rows)
    axes = [f"samples {', '.join(findings.labels.sample(x) for x in samples)}",
            "g + \u03b4 " + ", ".join(f"{g:g}" for g in dict.fromkeys(r.g_plus_delta
                                                                   for r in s.rows)),
            "covariance " + ", ".join(dict.fromkeys(r.covariance for r in s.rows))]
    if s.drop_each:
        axes.append(f"each group of '{s.drop_each}' left out in turn (and none)")
    notes = [f"The grid: {'; '.join(axes)}. Fitted: specifications with enough economies "
             "whose estimates imply ordinary parameters. Band: how many "
             f"{round(s.confidence * 100)}% delta-method intervals overlap the plausible band. "
             f"Restriction: Wald tests rejecting at the {level:.0%} level under each "
             "specification's covariance."]
    cols = (("quantity",), ("fitted",), ("lowest",), ("median",), ("highest",),
            ("interval overlaps band",))
    return Table("sweep", "Specification sweep", "equation", cols, tuple(rows), tuple(notes))


def sensitivity_table(findings: Findings) -> Table | None:
    """The implied shares and the restriction's p-value at each value of g + delta the sweep
    tried (the run's covariance, no group left out).  None unless the sweep varies g +
    delta."""
    s = findings.sweep
    if s is None:
        return None
    values = list(dict.fromkeys(r.g_plus_delta for r in s.rows))
    if len(values) < 2:
        return None
    cov = findings.settings.covariance
    base = [r for r in s.rows if r.dropped is None and r.covariance == cov]
    cells = list(dict.fromkeys((r.equation, r.sample) for r in base))
    rows = []
    for eq, sample in cells:
        by_gd = {r.g_plus_delta: r for r in base if (r.equation, r.sample) == (eq, sample)}
        heading = f"{findings.labels.equation(eq)} / {findings.labels.sample(sample)}"
        names = [q for q in ("alpha", "beta", "lam") if any(q in r.values for r in
                                                            by_gd.values())]
        for j, q in enumerate(names):
            x = EXTRA_DIGITS.get(q, 0)
            rows.append(Row(heading if j == 0 else "", (Cell("text", quantity_label(q)), *(
                Cell("number", by_gd[g].values[q], interval=by_gd[g].intervals[q],
                     extra_digits=x) if g in by_gd and by_gd[g].reason is None
                else Cell("text", NOT_AVAILABLE) for g in values))))
        rows.append(Row("", (Cell("text", "restriction p"), *(
            Cell("pvalue", by_gd[g].restriction_p) if g in by_gd and
            by_gd[g].restriction_p is not None else Cell("text", PLACEHOLDER)
            for g in values))))
    notes = [f"Each column refits every equation with that value of g + \u03b4 (the run uses "
             f"{findings.settings.g_plus_delta:g}), under the run's covariance and with every "
             f"economy; {round(s.confidence * 100)}% delta-method intervals below. The "
             "restriction test can move with g + \u03b4, which is an assumption, not data."]
    cols = (("quantity",), *((f"g + \u03b4 = {g:g}",) for g in values))
    return Table("g_plus_delta_sensitivity", "Sensitivity to g + \u03b4", "equation / sample",
                 cols, tuple(rows), tuple(notes))
