"""Markdown rendering: summary.md of a run folder and tables/*.md."""

from __future__ import annotations

import re

from ..findings import Findings
from ..labels import DELTA
from .tables import Table, all_tables, format_cell
from .verdicts import conclusion, verdict_lines


def _md_escape(text: str) -> str:
    """Escape table pipes, line breaks (a newline would end a table row) and anything a
    Markdown viewer could take for an HTML tag."""
    text = re.sub(r"[\r\n\t\x0b\x0c\x85\u2028\u2029]+", " ", text)
    text = text.replace("&", "&amp;") if re.search(r"&\w+;", text) else text
    return re.sub(r"<(?=[A-Za-z/!?])", "&lt;", text.replace("|", "\\|"))


def render_table_md(table: Table, digits: int = 3) -> str:
    head = [table.stub] + [" / ".join(c) for c in table.columns]
    out = [f"### {table.title}", "", "| " + " | ".join(_md_escape(h) for h in head) + " |",
           "|" + "|".join([":---"] + [":---" if t else "---:" for t in table.text_columns()])
           + "|"]
    for row in table.rows:
        texts = [format_cell(c, table.places(digits)) for c in row.cells]
        if row.section:
            out.append(f"| *{_md_escape(row.section)}* |" + " |" * len(table.columns))
        out.append("| " + " | ".join([_md_escape(row.label)] +
                                     [_md_escape(t) for t, _ in texts]) + " |")
        if any(se is not None for _, se in texts):
            out.append("| " + " | ".join([""] + [_md_escape(se or "") for _, se in texts])
                       + " |")
    if table.notes:
        out.append("")
        out += [f"{_md_escape(n)}  " for n in table.notes]
    return "\n".join(out)


def render_markdown(findings: Findings, run_id: str | None = None) -> str:
    """The run's summary.md: verdicts first, then tables, caveats and provenance."""
    s = findings.settings
    p = findings.provenance
    out = [f"# {_md_escape(findings.title)}", ""]
    if run_id:
        out += [f"Run `{run_id}`.", ""]
    out += [f"**In one sentence.** {_md_escape(conclusion(findings))}", ""]
    out += ["## Verdicts", ""]
    out += [f"- {_md_escape(v)}" for v in verdict_lines(findings)]
    for r in findings.results:
        out += [f"- {_md_escape(r.heading)}: {_md_escape(n)}" for n in r.notes]
    if findings.warnings:
        out += ["", "## Warnings", ""] + [f"- {_md_escape(w)}" for w in findings.warnings]
    for table in all_tables(findings):
        out += ["", render_table_md(table, s.digits)]
    out += ["", "## Caveats", ""] + [f"- {_md_escape(c)}" for c in findings.caveats]
    out += ["", "## Settings and provenance", "",
            f"- g + {DELTA}: {s.g_plus_delta:g}; covariance: {s.covariance}"
            + (f" (clusters: '{s.cluster}')" if s.cluster else "")
            + f"; confidence: {s.confidence:g}; non-positive values: {s.non_positive}",
            f"- spec: `{p.spec_path}` (SHA-256 `{p.spec_sha256}`)",
            f"- data: `{p.data_path}` (SHA-256 `{p.data_sha256}`, {p.data_rows} rows)",
            "- versions: " + ", ".join(f"{k} {v}" for k, v in p.versions.items()), ""]
    return "\n".join(out)
