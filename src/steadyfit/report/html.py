"""The self-contained HTML report (jinja2, inline CSS and SVG, nothing fetched)."""

from __future__ import annotations

import html
from dataclasses import dataclass
from typing import Any

from ..analysis import listing_limit
from ..findings import EquationFindings, Findings, SampleSummary, TestResult
from ..labels import quantity_label
from .figures import Figure
from .tables import (
    Table,
    beside_shares,
    combined_table,
    compact_table,
    consistency_table,
    crosscheck_table,
    dropped_table,
    families,
    format_cell,
    format_number,
    samples_table,
    scorecard_table,
    share_status,
    shares_table,
    structural_table,
)
from .verdicts import anchor_phrase, conclusion, format_p, speed_phrase, verdict_lines


def render_table_html(table: Table, digits: int = 3) -> str:
    """A table as HTML; every string is escaped."""
    e = html.escape
    levels = max((len(c) for c in table.columns), default=1)
    head_rows = []
    for level in range(levels):
        cells = [f"<th scope='col'>{e(table.stub) if level == levels - 1 else ''}</th>"]
        heads = [c[level] if level < len(c) else "" for c in table.columns]
        j = 0
        while j < len(heads):  # merge repeated neighbours on upper levels (equation names)
            span = 1
            while level < levels - 1 and j + span < len(heads) and heads[j + span] == heads[j]:
                span += 1
            attr = f" colspan='{span}'" if span > 1 else ""
            cells.append(f"<th scope='col'{attr}>{e(heads[j])}</th>")
            j += span
        head_rows.append("<tr>" + "".join(cells) + "</tr>")
    text_cols = table.text_columns()
    body = []
    for row in table.rows:
        texts = [format_cell(c, table.places(digits)) for c in row.cells]
        if row.section:
            body.append(f"<tr class='section'><th colspan='{len(texts) + 1}'>{e(row.section)}"
                        "</th></tr>")
        tds = "".join(
            f"<td class='{'text' if t_col else 'num'}'>{e(t)}"
            + (f"<br><span class='se'>{e(se)}</span>" if se else "") + "</td>"
            for (t, se), t_col in zip(texts, text_cols, strict=True))
        body.append(f"<tr><th scope='row'>{e(row.label)}</th>{tds}</tr>")
    notes = "".join(f"<p class='note'>{e(n)}</p>" for n in table.notes)
    return (f"<figure class='table' id='table-{e(table.key)}'><table><caption>{e(table.title)}"
            f"</caption><thead>{''.join(head_rows)}</thead><tbody>{''.join(body)}</tbody>"
            f"</table>{notes}</figure>")


@dataclass(frozen=True)
class ShareLine:
    name: str
    value: str
    interval: str
    band: str
    status: str
    point_p: str
    anchor: str = ""  # against the measured capital share, in words ("" without one)


@dataclass(frozen=True)
class Verdict:
    column: str
    nobs: int
    clusters: int | None
    restriction: str
    outcome: str | None  # "rejected", "not rejected", "not available"; None: nothing to test
    f_p: str
    wald_p: str
    reason: str | None  # why the F test is not available
    problem: str | None
    shares: tuple[ShareLine, ...]
    speed: str | None
    notes: tuple[str, ...]


def _p_text(t: TestResult | None) -> str:
    if t is None:
        return ""
    return format_p(t.pvalue) if t.available else "not available"


def _verdict(r: EquationFindings, level: float, digits: int) -> Verdict:
    lines = []
    for v in r.shares:
        e = v.estimate
        if not e.has_value:
            value, interval = e.missing, ""
        else:
            value = format_number(e.value, digits)
            interval = (f"{format_number(e.low, digits)} to {format_number(e.high, digits)}"
                        if e.has_se else "no interval")
        lines.append(ShareLine(
            quantity_label(e.name), value, interval,
            f"{format_number(v.band[0], 2)} to {format_number(v.band[1], 2)}" if v.band else "",
            share_status(v, r),
            _p_text(v.point_test) if v.point_test else "",
            anchor_phrase(v.anchor, quantity_label(e.name), level) if v.anchor else "",
        ))
    lam, half = r.speed_estimate("lam"), r.speed_estimate("half_life")
    f, w = r.f_test, r.wald_test
    outcome = None
    if f is not None:
        rejects = f.rejects(level)
        outcome = ("not available" if rejects is None else
                   "rejected" if rejects else "not rejected")
    return Verdict(r.heading, r.nobs, r.unrestricted.n_clusters, r.restriction_text, outcome,
                   _p_text(f), _p_text(w), f.reason if f is not None else None, r.problem,
                   tuple(lines), speed_phrase(lam, half) if lam and half else None, r.notes)


def report_tables(findings: Findings) -> list[Table]:
    """The tables of the HTML report's table section, each coefficient shown once: implied
    shares, then per form the unrestricted and restricted fits side by side, then the
    unrestricted cross-check and the structural estimates."""
    out = [shares_table(findings), *beside_shares(findings)]
    out += [combined_table(findings, res, suffix, title)
            for suffix, title, res in families(findings)]
    if any(r.crosscheck for r in findings.results):
        out.append(crosscheck_table(findings))
    structural = structural_table(findings)
    from .panel import panel_tables

    return out + ([structural] if structural else []) + panel_tables(findings)


def render_html_fragment(findings: Findings) -> str:
    """A notebook view: verdicts and the key tables as HTML (no page around them)."""
    items = "".join(f"<li>{html.escape(v)}</li>" for v in verdict_lines(findings))
    digits = findings.settings.digits
    tables = "".join(render_table_html(t, digits) for t in (compact_table(findings),
                                                           shares_table(findings)))
    return f"<div><h4>{html.escape(findings.title)}</h4><ul>{items}</ul>{tables}</div>"


def _environment() -> Any:
    import jinja2

    return jinja2.Environment(
        loader=jinja2.PackageLoader("steadyfit.report", "templates"),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )


def _members(x: SampleSummary, findings: Findings) -> tuple[str, str]:
    """A sample's heading and its economies (once per sample: a result uses the sample's
    economies less those it drops, which its own table lists)."""
    head = f"{findings.labels.sample(x.name)} ({len(x.members):,} economies)"
    if len(x.members) > listing_limit():
        return head, (f"more than {listing_limit():,} economies are not listed one by one; "
                      "results.json keeps the SHA-256 digest of their sorted ids")
    return head, ", ".join(map(str, x.members))


def render_html(findings: Findings, figures: tuple[Figure, ...], run: dict[str, Any]) -> str:
    """The whole report as one HTML document."""
    import markupsafe

    s = findings.settings
    digits = s.digits
    level = 1 - s.confidence
    tables = [markupsafe.Markup(render_table_html(t, digits)) for t in report_tables(findings)]
    from .package import descriptive_tables

    appendix = [markupsafe.Markup(render_table_html(t, digits))
                for t in (samples_table(findings), *descriptive_tables(findings),
                          dropped_table(findings))]
    card = scorecard_table(findings)
    checks = consistency_table(findings)
    return str(_environment().get_template("report.html.j2").render(
        findings=findings,
        settings=s,
        run=run,
        level_pct=f"{level:.0%}",
        conf_pct=f"{s.confidence:.0%}",
        verdicts=[_verdict(r, level, digits) for r in findings.results],
        verdict_text=verdict_lines(findings),
        consistency=markupsafe.Markup(render_table_html(checks, digits)) if checks else None,
        conclusion=conclusion(findings),
        key_table=markupsafe.Markup(render_table_html(compact_table(findings), digits)),
        scorecard=markupsafe.Markup(render_table_html(card, digits)) if card else None,
        targets_met=findings.targets_met,
        tables=tables,
        appendix=appendix,
        figures=[(f, markupsafe.Markup(f.svg)) for f in figures],
        economies=[_members(x, findings) for x in findings.samples],
    ))
