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
    """Each bootstrapped quantity: estimate, the draws' standard deviation, the delta-method
    interval and the percentile, bias-corrected and studentised intervals.  None without a
    bootstrap."""
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
            number = i.estimate == i.estimate
            rows.append(Row(r.heading if first else "", (
                Cell("text", quantity_label(i.name)),
                Cell("number", i.estimate, extra_digits=x) if number
                else Cell("text", NOT_AVAILABLE),
                Cell("number", i.spread, extra_digits=x) if i.spread == i.spread
                else Cell("text", PLACEHOLDER),
                _interval(_delta(r, i.name), x), _interval(i.percentile, x),
                _interval(i.bias_corrected, x), _interval(i.studentised, x))))
            first = False
    pct = round(findings.settings.confidence * 100)
    method = "; ".join(dict.fromkeys(descriptions))
    notes = [
        f"{method[0].upper()}{method[1:]}. Intervals at {pct}% from every draw that gives the "
        "quantity a number (draws implying no steady state or divergence included): "
        "percentile; "
        "bias-corrected (shifted by the share of draws below the estimate); studentised "
        "(each draw divided by its own delta-method standard error). Draws' s.d.: the "
        "standard deviation of the draws. The half-life's intervals are those of the speed "
        "of convergence mapped through ln 2 / speed.",
    ]
    cols = (("quantity",), ("estimate",), ("draws' s.d.",), (f"{pct}% delta",),
            ("percentile",), ("bias-corrected",), ("studentised",))
    return Table("bootstrap", "Bootstrap intervals", "equation / sample", cols, tuple(rows),
                 tuple(notes + reasons.notes()))


def bootstrap_restriction_table(findings: Findings) -> Table | None:
    """The restriction's Wald statistic with its asymptotic and bootstrap p-values."""
    reasons = Reasons()
    rows = [Row(r.heading, (test_cell(r.wald_test, True, reasons, r.heading),
                            test_cell(r.wald_test, False, reasons, r.heading),
                            test_cell(r.bootstrap.restriction, False, reasons, r.heading)))
            for r in findings.results if r.bootstrap is not None
            and r.bootstrap.restriction is not None and r.wald_test is not None]
    if not rows:
        return None
    notes = ["Wald test of the restriction under the run's covariance (the key results' "
             "verdict uses the F test). Bootstrap p: the share of draws whose statistic is at "
             "least the sample's; the pairs bootstrap recentres each draw at the sample's "
             "restriction value, the wild bootstrap draws under the restriction."]
    return Table("bootstrap_restriction", "Restriction test: asymptotic and bootstrap",
                 "equation / sample", (("Wald statistic",), ("asymptotic p",),
                                       ("bootstrap p",)), tuple(rows),
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
                      Cell("text", "no steady state or convergence" if not e.ordinary
                           else PLACEHOLDER)
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
        "Wald p: the restriction's Wald test without the economy, under the run's covariance "
        "(the key results' verdict uses the F test).",
    ]
    cols = (("economy left out",), *((f"shift in {quantity_label(q)}",) for q in quantities),
            ("Wald p",), ("Cook's distance",))
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
        rows.append(Row("", (Cell("text", "restriction rejected (Wald)"),
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
             "specification's covariance (the key results' verdict uses the F test). "
             "Specifications that differ only in their covariance share their estimate, so "
             "the range counts it once per covariance choice."]
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
    tried = list(dict.fromkeys(s.covariance))
    cov = findings.settings.covariance if findings.settings.covariance in tried else tried[0]
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
        rows.append(Row("", (Cell("text", "Wald p"), *(
            Cell("pvalue", by_gd[g].restriction_p) if g in by_gd and
            by_gd[g].restriction_p is not None else Cell("text", PLACEHOLDER)
            for g in values))))
    notes = [f"Each column refits every equation with that value of g + \u03b4 (the run uses "
             f"{findings.settings.g_plus_delta:g}), under the {cov} covariance and with every "
             f"economy; {round(s.confidence * 100)}% delta-method intervals below. Wald p: the "
             "restriction's Wald test under that covariance (the key results' verdict uses "
             "the F test). The restriction test can move with g + \u03b4, which is an "
             "assumption, not data."]
    cols = (("quantity",), *((f"g + \u03b4 = {g:g}",) for g in values))
    return Table("g_plus_delta_sensitivity", "Sensitivity to g + \u03b4", "equation / sample",
                 cols, tuple(rows), tuple(notes))
