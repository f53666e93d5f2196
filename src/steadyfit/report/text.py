"""Plain-text rendering of tables, for the terminal and ``str(findings)``."""

from __future__ import annotations

import textwrap

from ..findings import Findings
from .tables import Table, format_cell


def _lines(table: Table, digits: int) -> list[list[str]]:
    """Header and body lines as lists of cell texts (standard errors on their own line)."""
    header_levels = max((len(c) for c in table.columns), default=1)
    lines: list[list[str]] = []
    for level in range(header_levels):
        stub = table.stub if level == header_levels - 1 else ""
        lines.append([stub] + [c[level] if level < len(c) else "" for c in table.columns])
    for row in table.rows:
        texts = [format_cell(c, table.places(digits)) for c in row.cells]
        lines.append([row.label] + [t for t, _ in texts])
        if any(se is not None for _, se in texts):
            lines.append([""] + [se or "" for _, se in texts])
    return lines


def render_table_text(table: Table, digits: int = 3, width: int = 100) -> str:
    """A table as aligned plain text: text columns to the left, numbers to the right."""
    lines = _lines(table, digits)
    n_head = max((len(c) for c in table.columns), default=1)
    widths = [max(len(line[i]) for line in lines) for i in range(len(lines[0]))]
    left = [True, *table.text_columns()]
    body = []
    for line in lines:
        cells = [t.ljust(w) if lft else t.rjust(w)
                 for t, w, lft in zip(line, widths, left, strict=True)]
        body.append("  ".join(cells).rstrip())
    rule = max(len(b) for b in body)
    out = [table.title, "=" * rule, *body[:n_head], "-" * rule, *body[n_head:]]
    for note in table.notes:
        out += textwrap.wrap(note, max(width, 60))
    return "\n".join(out)


def render_text(findings: Findings, tables: tuple[Table, ...] | None = None) -> str:
    """The compact terminal view: warnings, notes and the key-results table."""
    from .tables import compact_table
    from .verdicts import consistency_lines

    parts = [findings.title]
    for w in findings.warnings:
        parts += textwrap.wrap("warning: " + w, 100, subsequent_indent="  ")
    for r in findings.results:
        if r.problem:
            parts += textwrap.wrap(f"note ({r.column}): {r.problem}.", 100,
                                   subsequent_indent="  ")
        for note in r.notes:
            parts += textwrap.wrap(f"note ({r.column}): {note}", 100, subsequent_indent="  ")
    for table in tables or (compact_table(findings),):
        parts += ["", render_table_text(table, findings.settings.digits)]
    lines = consistency_lines(findings)
    if lines:
        parts += ["", "Levels against growth form:"]
        for line in lines:
            parts += textwrap.wrap(line, 100, initial_indent="- ", subsequent_indent="  ")
    if findings.scorecard:
        met = sum(t.met for t in findings.scorecard)
        parts += ["", f"Replication targets: {met} of {len(findings.scorecard)} met."]
    return "\n".join(parts)
