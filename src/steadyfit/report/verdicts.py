"""Plain-language verdicts from findings, for the top of every report.

The words are deliberately careful: a restriction is "not rejected" or
"rejected at the x% level", never "holds"; a test that could not be computed
is "not available" with its reason, never a verdict; a speed of convergence is
shown as the number it is, with "divergence" when it is negative.
"""

from __future__ import annotations

from ..findings import (
    AnchorCheck,
    EquationFindings,
    Estimate,
    Findings,
    ShareVerdict,
    TestResult,
)
from ..labels import LAMBDA, quantity_label
from .tables import format_number


def format_p(p: float) -> str:
    """A p-value for prose: three decimals, or '< 0.001'."""
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def p_phrase(p: float) -> str:
    """'p < 0.001' or 'p = 0.123'."""
    text = format_p(p)
    return f"p {text}" if text.startswith("<") else f"p = {text}"


def restriction_phrase(t: TestResult, level: float) -> str:
    """'not rejected at the 5% level (F p = 0.38)', or why the test is not available."""
    rejects = t.rejects(level)
    if rejects is None:
        return f"not tested: the F test is not available ({t.reason})"
    word = "rejected" if rejects else "not rejected"
    return f"{word} at the {level:.0%} level (F {p_phrase(t.pvalue)})"


def _share_phrase(v: ShareVerdict, r: EquationFindings) -> str:
    e = v.estimate
    pct = round(e.confidence * 100)
    name = quantity_label(e.name)
    if not e.has_value:
        return f"{name}: {e.missing} ({e.reason})" if e.reason else f"{name}: {e.missing}"
    if not e.has_se:
        return (f"{name} = {format_number(e.value)}, with no standard error or interval "
                f"({e.reason}), so no band verdict or test")
    text = (f"{name} = {format_number(e.value)} ({pct}% interval "
            f"{format_number(e.low)} to {format_number(e.high)})")
    if v.band and v.band_status:
        where = {"inside": "inside", "overlaps": "overlapping", "outside": "outside"}
        text += (f", {where[v.band_status]} the plausible band {format_number(v.band[0], 2)}"
                 f" to {format_number(v.band[1], 2)}")
    if v.point_test and v.point is not None and v.point_test.available:
        text += f"; test of {name} = {v.point:.3g}: {p_phrase(v.point_test.pvalue)}"
    if v.interval_reaches_one:
        text += "; the interval reaches 1, where no steady state exists"
    if v.anchor is not None:
        text += "; " + anchor_phrase(v.anchor, name, 1 - e.confidence)
    return text


def measured_words(a: AnchorCheck) -> str:
    """'the measured capital share 0.378 (one minus the labour share, mean of 76 of 80
    economies)', or why there is none."""
    m = a.measured
    if not m.available:
        return f"the measured capital share is not available ({m.reason})"
    years = f", {m.years[0]}–{m.years[1]}" if m.years else ""
    return (f"the measured capital share {format_number(m.value)} (one minus the labour "
            f"share, mean of {m.n} of {m.n_sample} economies{years})")


def anchor_phrase(a: AnchorCheck, name: str, level: float) -> str:
    """The implied share against the measured capital share, in words; no verdict where the
    test is not available."""
    measured = measured_words(a)
    if not a.measured.available:
        return measured
    rejects = a.test.rejects(level)
    if rejects is None:
        return f"against {measured}: no test ({a.test.reason})"
    gap = a.gap.value
    side = "above" if gap > 0 else "below"
    word = "significant" if rejects else "not significant"
    return (f"{name} lies {format_number(abs(gap))} {side} {measured}, a difference "
            f"{word} at the {level:.0%} level counting sampling error only "
            f"({p_phrase(a.test.pvalue)})")


def bootstrap_phrase(r: EquationFindings, level: float) -> str:
    """The bootstrap in words: its kind, the restriction's bootstrap verdict and each share's
    percentile interval (or why there is none)."""
    b = r.bootstrap
    assert b is not None
    words = [f"{b.method} bootstrap ({b.replications} draws)"]
    t = b.restriction
    if t is not None:
        rejects = t.rejects(level)
        words.append(f"restriction not tested ({t.reason})" if rejects is None else
                     f"restriction {'rejected' if rejects else 'not rejected'} at the "
                     f"{level:.0%} level (bootstrap {p_phrase(t.pvalue)})")
    for i in b.intervals:
        if i.name not in ("alpha", "beta", "lam"):
            continue
        name = quantity_label(i.name)
        digits = 4 if i.name == "lam" else 3
        words.append(f"{name} percentile interval {format_number(i.percentile[0], digits)} to "
                     f"{format_number(i.percentile[1], digits)}" if i.percentile is not None
                     else f"no bootstrap interval for {name} ({i.reason})")
    return words[0] + ": " + ", ".join(words[1:]) if len(words) > 1 else words[0]


def influence_phrase(r: EquationFindings) -> str:
    """The leave-one-out analysis in words: the economies that move a share (or the speed of
    convergence) beyond the threshold, the largest first."""
    inf = r.influence
    assert inf is not None
    movers = [e for e in inf.named if e.moves or not e.ordinary]
    if not movers:
        limits = ([f"no share by more than {inf.threshold:g}"]
                  if any(q != "lam" for q in inf.quantities) else [])
        if "lam" in inf.quantities:
            limits.append(f"{LAMBDA} by no more than {inf.speed_threshold:g}")
        return "leaving out any one economy moves " + " and ".join(limits or ["nothing"])
    top = movers[0]
    what = ("implies no steady state or convergence" if not top.ordinary else ", ".join(
        f"{quantity_label(q)} by {'+' if top.shifts[q] > 0 else ''}"
        f"{format_number(top.shifts[q], 4 if q == 'lam' else 3)}" for q in top.moves))
    more = (f" ({len(movers)} economies move a quantity beyond its threshold)"
            if len(movers) > 1 else "")
    verb = "" if not top.ordinary else "moves "
    return f"leaving out '{top.economy}' {verb}{what}{more}"


def speed_phrase(lam: Estimate, half: Estimate) -> str:
    """The speed of convergence and half-life in words (divergence said as such)."""
    if not lam.has_value:
        return f"{LAMBDA} {lam.missing} ({lam.reason})"
    word = "divergence" if lam.value < 0 else "convergence"
    text = f"{word} {format_number(lam.value, 4)} a year"
    if lam.has_se:
        text += (f" ({round(lam.confidence * 100)}% interval {format_number(lam.low, 4)} to "
                 f"{format_number(lam.high, 4)})")
    if not half.has_value:
        return f"{text}; half-life {half.missing} ({half.reason})"
    text += f", a half-life of {half.value:.0f} years"
    if half.has_se:
        high = "unbounded" if half.high == float("inf") else f"{half.high:.0f}"
        text += f" (interval {half.low:.0f} to {high})"
    return text


def verdict_lines(findings: Findings) -> tuple[str, ...]:
    """One plain-language verdict per equation and sample, for the top of every report."""
    level = 1 - findings.settings.confidence
    out = []
    for r in findings.results:
        f = r.f_test
        size = f"{r.nobs} economies" + (f" in {r.unrestricted.n_clusters} clusters"
                                        if r.unrestricted.n_clusters is not None else "")
        if f is None:
            head = f"{r.heading} ({size}): no restriction to test."
        else:
            head = (f"{r.heading} ({size}): the constant-returns restriction is "
                    f"{restriction_phrase(f, level)}.")
        parts = []
        if r.problem is not None:
            parts.append(r.problem)
        parts += [_share_phrase(v, r) for v in r.shares
                  if (v.band is not None or "+" in v.name) and v.estimate.has_value]
        lam, half = r.speed_estimate("lam"), r.speed_estimate("half_life")
        if lam is not None and half is not None:
            parts.append(speed_phrase(lam, half))
        if r.bootstrap is not None:
            parts.append(bootstrap_phrase(r, level))
        if r.influence is not None:
            parts.append(influence_phrase(r))
        text = "; ".join(parts)
        first = text[:1].upper() if text[:1].isascii() else text[:1]  # never 'Α' for 'α'
        out.append(f"{head} {first}{text[1:]}." if parts else head)
    return (*out, *consistency_lines(findings))


def _count(n: int, word: str, plural: str | None = None) -> str:
    return f"{n} {word if n == 1 else plural or word + 's'}"


def conclusion(findings: Findings) -> str:
    """One sentence over every result: restrictions rejected, shares against their bands,
    and whether the levels and growth forms agree."""
    level = 1 - findings.settings.confidence
    tests = [r.f_test for r in findings.results if r.f_test is not None]
    outcomes = [t.rejects(level) for t in tests]
    parts = []
    if tests:
        text = (f"the constant-returns restriction is rejected at the {level:.0%} level in "
                f"{sum(o is True for o in outcomes)} of {_count(len(tests), 'test')}")
        if None in outcomes:
            text += f" ({outcomes.count(None)} not available)"
        parts.append(text)
    verdicts = [v for r in findings.results for v in r.shares if v.band is not None]
    if verdicts:
        status = [v.band_status for v in verdicts]
        text = (f"of {_count(len(verdicts), 'implied share')} with a plausibility band, "
                f"{status.count('inside')} lie inside it, {status.count('overlaps')} overlap it "
                f"and {status.count('outside')} lie outside it")
        if None in status:
            text += f" ({status.count(None)} without a verdict)"
        parts.append(text)
    anchors = anchor_clause([v for r in findings.results for v in r.shares], level)
    if anchors:
        parts.append(anchors)
    if findings.consistency:
        agree = [c.test.rejects(level) for c in findings.consistency]
        testable = len(agree) - agree.count(None)
        if testable:
            text = (f"the levels and growth forms differ significantly on "
                    f"{sum(a is True for a in agree)} of "
                    f"{_count(testable, 'compared quantity', 'compared quantities')}")
        else:
            text = "the levels and growth forms cannot be compared (no test is available)"
        if None in agree and testable:
            text += f" ({agree.count(None)} more cannot be compared)"
        parts.append(text)
    if findings.sweep is not None:
        parts.append(sweep_clause(findings, level))
    n = len(findings.results)
    head = f"Across {_count(n, 'result')} (equations \u00d7 samples)"
    panels = _panel_clause(findings, level)
    if not parts:
        if panels:
            return f"In the dynamic panels, {panels}."
        return f"{head}, there is nothing to test or judge."
    tail = f"; in the dynamic panels, {panels}" if panels else ""
    return f"{head}: " + "; ".join(parts) + tail + "."


def sweep_clause(findings: Findings, level: float) -> str:
    """The sweep in a clause: over how many specifications the share intervals overlap the
    band and the restriction is rejected."""
    s = findings.sweep
    assert s is not None
    overlap = [s.share_overlapping(eq, "alpha") for eq in s.equations()]
    reject = [s.share_rejecting(eq, level) for eq in s.equations()]
    inside, counted = sum(o for o, _ in overlap), sum(c for _, c in overlap)
    rejected, tested = sum(r for r, _ in reject), sum(t for _, t in reject)
    text = f"over the {_count(len(s), 'specification')} of the sweep"
    if counted:
        text += (f", the interval of {quantity_label('alpha')} overlaps its band in {inside} of "
                 f"{counted}")
    if tested:
        text += f" and the restriction is rejected at the {level:.0%} level in {rejected} of " \
                f"{tested}"
    return text


def anchor_clause(shares: list[ShareVerdict], level: float) -> str | None:
    """How many implied alphas differ from the measured capital share, or None when none is
    held against it."""
    outcomes = [v.anchor.test.rejects(level) for v in shares if v.anchor is not None]
    testable = len(outcomes) - outcomes.count(None)
    if not testable:
        return (f"no implied {quantity_label('alpha')} can be held against the measured capital "
                "share (no test is available)") if outcomes else None
    text = (f"{sum(o is True for o in outcomes)} of {testable} implied values of "
            f"{quantity_label('alpha')} differ from the measured capital share at the "
            f"{level:.0%} level")
    if None in outcomes:
        text += f" ({outcomes.count(None)} more cannot be compared)"
    return text


def _panel_clause(findings: Findings, level: float) -> str | None:
    """The panels in a clause: restrictions rejected, GMM estimates outside the
    within-to-pooled bracket, estimators that imply no convergence."""
    fits = [f for p in findings.panels for f in p.estimators]
    if not fits:
        return None
    tests = [f.wald_test.rejects(level) for f in fits if f.wald_test is not None]
    parts = [f"the restriction is rejected at the {level:.0%} level by "
             f"{sum(t is True for t in tests)} of {_count(len(tests), 'estimator')}"]
    brackets = [f.bracket for f in fits if f.bracket is not None]
    if brackets:
        parts.append(f"{sum(not b.inside for b in brackets)} of "
                     f"{_count(len(brackets), 'GMM estimate')} of \u03b3 lie outside the "
                     "within-to-pooled bracket")
    anchors = anchor_clause([v for f in fits for v in f.shares], level)
    if anchors:
        parts.append(anchors)
    troubled = sum(f.problem is not None for f in fits)
    if troubled:
        parts.append(f"{troubled} imply no ordinary steady state or convergence")
    return ", ".join(parts[:-1]) + (" and " if len(parts) > 1 else "") + parts[-1]


def consistency_lines(findings: Findings) -> tuple[str, ...]:
    """One sentence per cross-equation comparison; no verdict where the test is not
    available."""
    level = 1 - findings.settings.confidence
    out = []
    for c in findings.consistency:
        what = "speed of convergence" if c.quantity == "lam" else quantity_label(c.quantity)
        labels = findings.labels
        start = (f"{labels.equation(c.levels_equation)} and "
                 f"{labels.equation(c.growth_equation)} on {labels.sample(c.sample)}: the {what} "
                 f"from the levels form ({format_number(c.from_levels.value, 4)}) and from "
                 f"the growth form ({format_number(c.from_growth.value, 4)})")
        rejects = c.test.rejects(level)
        if rejects is None:
            out.append(f"{start} cannot be compared: the test is not available "
                       f"({c.test.reason}).")
            continue
        held = "differ" if rejects else "do not differ"
        out.append(f"{start} {held} significantly at the {level:.0%} level "
                   f"({p_phrase(c.test.pvalue)}).")
    return tuple(out)


__all__ = ["anchor_phrase", "bootstrap_phrase", "conclusion", "consistency_lines", "format_p",
           "influence_phrase", "measured_words", "p_phrase", "restriction_phrase",
           "speed_phrase", "verdict_lines"]
