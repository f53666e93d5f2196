"""Builders that fill the table model (:mod:`steadyfit.report.model`) from findings.

Builders read :class:`~steadyfit.findings.Findings` only.  A renderer (text,
Markdown, HTML, LaTeX) turns a :class:`Table` into its format and never looks
at findings itself.  The model's names are re-exported here.
"""

from __future__ import annotations

import math
from dataclasses import replace

from ..estimators import Fit
from ..findings import EquationFindings, Findings, ShareVerdict
from ..labels import (
    ALPHA,
    BETA,
    CHI2,
    DELTA,
    LAMBDA,
    MINUS,
    NGD,
    R2,
    display,
    quantity_label,
    test_display,
)
from .model import (
    EXTRA_DIGITS,
    NOT_AVAILABLE,
    PLACEHOLDER,
    UNBOUNDED,
    Cell,
    CellKind,
    Reasons,
    Row,
    Table,
    estimate_cell,
    format_cell,
    format_number,
    test_cell,
)

# The standard deviation of the residuals, as the fit rows name it.
RESIDUAL_SD = "residual standard deviation"

__all__ = ["EXTRA_DIGITS", "NOT_AVAILABLE", "UNBOUNDED", "Cell", "CellKind", "Reasons", "Row",
           "PLACEHOLDER", "Table", "estimate_cell", "format_cell", "format_number", "test_cell"]


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
    return _coefficient_rows([r.restricted if restricted else r.unrestricted for r in results])


def _coefficient_rows(fits: list[Fit]) -> list[Row]:
    """One row per coefficient label in any of ``fits``; empty where a fit has none."""
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
    return _fit_statistics([r.restricted if restricted else r.unrestricted for r in results])


def _fit_statistics(fits: list[Fit], r_squared: bool = True) -> list[Row]:
    return [
        Row("observations", tuple(Cell("integer", f.nobs) for f in fits), section="fit"),
        *((Row(R2, tuple(Cell("number", f.rsquared) for f in fits)),) if r_squared else ()),
        Row(f"adjusted {R2}", tuple(Cell("number", f.rsquared_adj) for f in fits)),
        Row(RESIDUAL_SD, tuple(Cell("number", f.ser) for f in fits)),
    ]


def _heads(findings: Findings, results: tuple[EquationFindings, ...]
           ) -> list[tuple[str, str]]:
    """Column headers: equation above sample, as the spec labels them."""
    return [(r.equation_label or findings.labels.equation(r.equation),
             r.sample_label or findings.labels.sample(r.sample)) for r in results]


def problem_label(r: EquationFindings) -> str:
    """A few words for a result whose estimates imply no ordinary shares."""
    return (r.problem or "").split(":")[0]


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
        rows.append(Row(f"implied {quantity_label(name)}", tuple(
            estimate_cell(v.estimate if (v := r.share(name)) else None, reasons, r.heading)
            for r in results), section=section if not rows else None))
    labels = {"lam": f"implied {LAMBDA}", "half_life": "half-life (years)"}
    for name in dict.fromkeys(e.name for r in results for e in r.speed):
        rows.append(Row(labels.get(name, quantity_label(name)),
                        tuple(estimate_cell(r.speed_estimate(name), reasons, r.heading)
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
    per = ", ".join(f"{r.heading}: {r.unrestricted.n_clusters}" for r in results)
    return f"cluster-robust by '{s.cluster}'; clusters {per}"


def _notes(findings: Findings, results: tuple[EquationFindings, ...]) -> list[str]:
    s = findings.settings
    cov = covariance_words(findings, results)
    dependent = "; ".join(dict.fromkeys(r.dependent_label for r in results))
    notes = [f"Dependent variable: {dependent}. Standard errors ({cov} covariance) in "
             f"parentheses. g + {DELTA} = {s.g_plus_delta:g}."]
    if any(r.speed for r in results):
        notes.append(f"Span {s.span_years:g} years; {LAMBDA} = {MINUS}ln(1 + b)/span with b "
                     "the coefficient on initial income (negative: divergence); half-life "
                     f"ln 2/{LAMBDA}.")
    return notes


def _restriction_rows(results: tuple[EquationFindings, ...], reasons: Reasons) -> list[Row]:
    return [
        Row("restriction F", tuple(test_cell(r.f_test, True, reasons, r.heading)
                                   for r in results), section="restriction test"),
        Row("p-value (F)", tuple(test_cell(r.f_test, False) for r in results)),
        Row(f"restriction Wald ({CHI2})", tuple(test_cell(r.wald_test, True, reasons, r.heading)
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
                 tuple(_heads(findings, results)), tuple(rows),
                 tuple(notes + reasons.notes()))


def journal_table(findings: Findings, results: tuple[EquationFindings, ...] | None = None,
                  suffix: str = "", title: str = "Steady-state income regressions") -> Table:
    """The layout journals print: unrestricted slopes, fit, the restriction's p-value, then the
    restricted slopes and the parameters they imply."""
    results = findings.results if results is None else results
    reasons = Reasons()
    rows = _coef_rows(results, restricted=False)
    rows += _fit_statistics([r.unrestricted for r in results], r_squared=False)
    if any(r.f_test for r in results):
        rows.append(Row("restriction p-value (F)",
                        tuple(test_cell(r.f_test, False, reasons, r.heading) for r in results)))
    restricted = [x for x in _coef_rows(results, restricted=True) if x.label != "constant"]
    if restricted:
        restricted[0] = Row(restricted[0].label, restricted[0].cells, section="restricted")
    rows += restricted
    rows += _parameter_rows(results, None, reasons)
    notes = _notes(findings, results)
    notes.append("Restriction: the unrestricted slopes of the rates sum to zero. Implied "
                 "parameters from the restricted slopes, delta-method standard errors.")
    return Table(f"regressions{suffix}", title, "",
                 tuple(_heads(findings, results)), tuple(rows),
                 tuple(notes + reasons.notes()))


def combined_table(findings: Findings, results: tuple[EquationFindings, ...] | None = None,
                   suffix: str = "", title: str = "Steady-state income regressions") -> Table:
    """Every coefficient once: each equation and sample's unrestricted fit beside its
    restricted fit, the restriction test under the first and the implied parameters under
    the second."""
    results = findings.results if results is None else results
    reasons = Reasons()
    fits = [f for r in results for f in (r.unrestricted, r.restricted)]
    rows = _coefficient_rows(fits) + _fit_statistics(fits)

    tests = [
        ("restriction p-value (F)", lambda r: test_cell(r.f_test, False, reasons, r.heading)),
        (f"restriction p-value (Wald, {CHI2})",
         lambda r: test_cell(r.wald_test, False, reasons, r.heading)),
    ]
    for i, (label, cell) in enumerate(tests):
        rows.append(Row(label, tuple(c for r in results for c in (cell(r), Cell.empty())),
                        section="restriction test" if i == 0 else None))
    params = _parameter_rows(results, "implied parameters (restricted fit)", reasons)
    rows += [Row(p.label, tuple(c for c0 in p.cells for c in (Cell.empty(), c0)),
                 p.section) for p in params]
    heads = [(*h, kind) for h in _heads(findings, results)
             for kind in ("unrestricted", "restricted")]
    notes = _notes(findings, results)
    notes.append("Restriction: the unrestricted slopes of the rates sum to zero (constant "
                 "returns); F uses the classical covariance, Wald the run's. Implied parameters "
                 "from the restricted slopes, delta-method standard errors.")
    return Table(f"combined{suffix}", title, "", tuple(heads), tuple(rows),
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
        return Cell("text", PLACEHOLDER)
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
            reasons.add(e.reason, r.heading)
            if v and v.point_test:
                reasons.add(v.point_test.reason, r.heading)
            if e.has_value:
                value = Cell("number", e.value, extra_digits=x, remark=e.remark)
                se = Cell("number", e.se, extra_digits=x)
                delta = Cell("interval", (e.low, e.high), extra_digits=x)
            else:
                value = Cell("text", e.missing)
                se = delta = Cell("text", PLACEHOLDER)
            cells = (
                Cell("text", quantity_label(e.name)), value, se, delta,
                _interval_cell(e.exact_low, e.exact_high, x),
                Cell("interval", v.band) if v and v.band else Cell("text", PLACEHOLDER),
                Cell("text", share_status(v, r) if v else ""),
                test_cell(v.point_test, False) if v and v.point_test else Cell("text", PLACEHOLDER),
            )
            rows.append(Row(r.heading if first else "", cells))
            first = False
    cols = (("share",), ("estimate",), ("s.e.",), (f"{pct}% interval (delta)",),
            (f"{pct}% interval (endpoints)",), ("plausible band",), ("verdict",),
            ("p (share = point)",))
    pts = ", ".join(f"{quantity_label(k)} = {v:.4g}"
                    for k, v in findings.settings.points.items())
    notes = ["Verdict: 'inside' when the whole interval lies in the band, 'overlaps' when they "
             "share some values, 'outside' when they share none.",
             "Endpoint interval: the coefficient's interval mapped through the share formula "
             "(exact where the share depends on one coefficient).",
             f"Test points: {pts}.",
             f"{LAMBDA}: speed of convergence per year (negative: divergence); half-life: "
             "years to close half the gap to the steady state (growth forms), its intervals "
             f"mapped from {LAMBDA}'s, unbounded where {LAMBDA}'s interval reaches zero."]
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
            f"{quantity_label(e.name)} {format_number(e.value)} "
            f"({format_number(e.se) if e.has_se else NOT_AVAILABLE})"
            for e in r.unrestricted_shares)
        rows.append(Row(r.heading, (
            Cell("text", shares),
            Cell("text", quantity_label(c.quantity)),
            estimate_cell(c.from_rates, reasons, r.heading),
            estimate_cell(c.from_growth, reasons, r.heading),
            estimate_cell(c.gap, reasons, r.heading),
            test_cell(c.test, False, reasons, r.heading),
        )))
    cols = (("shares from investment slopes (s.e.)",), ("quantity",),
            ("from investment slopes",), (f"from {NGD} slope",), ("difference",),
            ("p-value",))
    note = ("The unrestricted slopes imply the same share twice: once from the investment "
            f"slopes and once from the {NGD} slope. A small p-value says the two disagree.")
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
                reasons.add(rob.reason, r.heading)
            rows.append(Row(r.heading if first else "", (
                Cell("text", quantity_label(name)),
                estimate_cell(e, reasons, r.heading),
                estimate_cell(md, reasons, r.heading) if md else Cell("text", PLACEHOLDER),
                estimate_cell(nls, reasons, r.heading) if nls else Cell("text", PLACEHOLDER),
                Cell("number", rob.se if rob.has_se else math.nan,
                     extra_digits=EXTRA_DIGITS.get(name, 0)) if rob else Cell("text", PLACEHOLDER),
            )))
            first = False
        if r.minimum_distance is not None:
            t = r.minimum_distance.overid
            reasons.add(t.reason, r.heading)
            stat = test_display(t) if t.available else NOT_AVAILABLE
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
        lab = findings.labels
        where = (f"{lab.equation(c.levels_equation)} vs {lab.equation(c.growth_equation)} / "
                 f"{lab.sample(c.sample)}")
        cov = "joint" if c.joint_covariance else "independent"
        if c.n_clusters is not None:
            cov += f", {c.n_clusters} clusters"
        rows.append(Row(where, (
            Cell("text", quantity_label(c.quantity)),
            estimate_cell(c.from_levels, reasons, where),
            estimate_cell(c.from_growth, reasons, where),
            estimate_cell(c.difference, reasons, where),
            test_cell(c.test, False, reasons, where),
            Cell("text", cov),
        )))
    return Table("consistency", "Cross-equation consistency: levels against growth",
                 "equations / sample",
                 (("quantity",), ("levels form",), ("growth form",), (f"growth {MINUS} levels",),
                  ("p-value",), ("covariance",)), tuple(rows),
                 (f"{LAMBDA} from the levels form: the sample's mean {NGD} times "
                  f"(1 {MINUS} {ALPHA} {MINUS} {BETA}); from the growth form: {MINUS}ln(1 + b)/"
                  "span. 'joint': the "
                  "two fits' correlation is estimated (same economies); 'independent': it is "
                  "ignored (the samples differ).", *reasons.notes()),
                 digits=findings.settings.digits + 1)


def dropped_table(findings: Findings) -> Table:
    rows = []
    for r in findings.results:
        for d in r.dropped:
            rows.append(Row(r.heading, (Cell("text", d.economy), Cell("text", d.reason))))
    return Table("dropped_economies", "Economies dropped from estimation samples",
                 "equation / sample", (("economy",), ("reason",)), tuple(rows),
                 () if rows else ("No economy was dropped.",))


def samples_table(findings: Findings) -> Table:
    rows = [Row(findings.labels.sample(s.name),
                (Cell("text", s.filter or "(all)"), Cell("integer", s.n_selected)))
            for s in findings.samples]
    for r in findings.results:
        rows.append(Row(r.heading, (Cell("text", f"used ({len(r.dropped)} dropped)"),
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
        cells.append(test_cell(r.f_test, False, reasons, r.heading))
        for name in ("alpha", "beta"):
            v = r.share(name)
            if v is None:
                cells.append(Cell("text", PLACEHOLDER))
                continue
            e = v.estimate
            cell = estimate_cell(e, reasons, r.heading, se=False)
            cells.append(replace(cell, interval=(e.low, e.high)) if e.has_value else cell)
        if speed:
            lam = r.speed_estimate("lam")
            cells.append(estimate_cell(lam, reasons, r.heading, se=False) if lam
                         else Cell("text", PLACEHOLDER))
        status = "; ".join(f"{quantity_label(v.name)} {share_status(v, r)}" for v in r.shares
                           if v.band is not None and v.estimate.has_value)
        cells.append(Cell("text", status if r.steady_state else problem_label(r)))
        rows.append(Row(r.heading, tuple(cells)))
    pct = round(findings.settings.confidence * 100)
    cols = (("N",), *((("clusters",),) if clustered else ()), ("p restr.",), (ALPHA,),
            (BETA,), *(((LAMBDA,),) if speed else ()), ("against the bands",))
    return Table("key_results", "Key results", "equation / sample", cols, tuple(rows),
                 (f"p restr.: F test of the constant-returns restriction. Shares from the "
                  f"restricted fit, {pct}% delta-method intervals below them.",
                  *reasons.notes()))


def _result_of(findings: Findings, equation: str, sample: str) -> EquationFindings | None:
    return next((r for r in findings.results if r.equation == equation and r.sample == sample),
                None)


_ENDS = {"_robust_se": "robust s.e. of {}", "_se": "s.e. of {}",
         "_low": "lower end of {}'s interval", "_high": "upper end of {}'s interval"}


_PREFIXES = {"md_": "{} (minimum distance)", "nls_": "{} (nonlinear LS)",
             "unrestricted_": "{} (unrestricted fit)", "restricted_": "{} (restricted fit)"}
_NAMED = {"observations": "observations", "r_squared": R2, "adjusted_r_squared": f"adjusted {R2}",
          "residual_sd": RESIDUAL_SD, "restriction_f": "restriction F",
          "restriction_p": "restriction p-value (F)", "restriction_wald": "restriction Wald",
          "restriction_wald_p": "restriction p-value (Wald)", "overid": "over-identification",
          "overid_p": "over-identification p-value", "crosscheck_gap": "cross-check difference",
          "crosscheck_gap_se": "s.e. of the cross-check difference",
          "crosscheck_p": "cross-check p-value"}


def target_text(quantity: str, r: EquationFindings | None) -> str:
    """A quantity name as readers see it: 'coefficient on ln(sₖ)', 's.e. of α'."""
    kind, _, name = quantity.partition(":")
    if name and r is not None:
        fit = r.restricted if kind.startswith("restricted") else r.unrestricted
        label = fit.labels[fit.names.index(name)] if name in fit.names else display(name)
        what = ("restricted " if kind.startswith("restricted") else "") + f"coefficient on {label}"
        return f"s.e. of {what}" if kind.endswith("se") else what
    if quantity in _NAMED:
        return _NAMED[quantity]
    for prefix, pattern in _PREFIXES.items():
        if quantity.startswith(prefix) and quantity != prefix.rstrip("_"):
            return pattern.format(target_text(quantity[len(prefix):], r))
    for suffix, pattern in _ENDS.items():
        if quantity.endswith(suffix):
            return pattern.format(quantity_label(quantity[: -len(suffix)]))
    return quantity_label(quantity)


def scorecard_table(findings: Findings) -> Table | None:
    """Published targets against our numbers (None when the spec lists no target)."""
    if not findings.scorecard:
        return None
    reasons = Reasons()
    rows = []
    for t in findings.scorecard:
        where = findings.labels.cell(t.equation, t.sample)
        name = target_text(t.quantity, _result_of(findings, t.equation, t.sample))
        reasons.add(f"{name}: {t.reason}" if t.reason else None, where)
        ours = (Cell("number", t.ours) if t.ours is not None else Cell("text", NOT_AVAILABLE))
        diff = t.difference
        rows.append(Row(where, (
            Cell("text", name),
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
                 (f"{met} of {len(rows)} targets met (|ours {MINUS} published| \u2264 "
                  "tolerance); a quantity that is not available does not meet its target.",
                  *reasons.notes()),
                 digits=findings.settings.digits + 1)


def beside_shares(findings: Findings) -> list[Table]:
    """The tables that follow the implied shares when a run asked for them: the
    national-accounts anchor, bootstrap intervals, influential economies, the specification
    sweep and the sensitivity to g + delta."""
    from .anchor import anchor_table
    from .robustness import (
        bootstrap_restriction_table,
        bootstrap_table,
        influence_table,
        sensitivity_table,
        sweep_table,
    )

    return [t for t in (anchor_table(findings), bootstrap_table(findings),
                        bootstrap_restriction_table(findings), influence_table(findings),
                        sweep_table(findings),
                        sensitivity_table(findings)) if t is not None]


def all_tables(findings: Findings) -> tuple[Table, ...]:
    """Every table of a run, in reading order."""
    card = scorecard_table(findings)
    groups = families(findings)
    out: list[Table] = [*((card,) if card else ()), shares_table(findings),
                        *beside_shares(findings)]
    out += [journal_table(findings, res, suffix, title) for suffix, title, res in groups]
    for restricted in (False, True):
        out += [coefficient_table(findings, restricted, res, suffix) for suffix, _, res in groups]
    if any(r.crosscheck for r in findings.results):
        out.append(crosscheck_table(findings))
    for optional in (structural_table(findings), consistency_table(findings)):
        if optional is not None:
            out.append(optional)
    from .panel import panel_tables

    out += panel_tables(findings)
    out += [samples_table(findings), dropped_table(findings)]
    return tuple(out)
