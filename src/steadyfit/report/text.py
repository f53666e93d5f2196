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
        texts = [format_cell(c, digits) for c in row.cells]
        lines.append([row.label] + [t for t, _ in texts])
        if any(se is not None for _, se in texts):
            lines.append([""] + [se or "" for _, se in texts])
    return lines


def render_table_text(table: Table, digits: int = 3, width: int = 100) -> str:
    lines = _lines(table, digits)
    n_head = max((len(c) for c in table.columns), default=1)
    widths = [max(len(line[i]) for line in lines) for i in range(len(lines[0]))]
    out = [table.title, "=" * min(width, max(len(table.title), sum(widths) + 2 * len(widths)))]
    for k, line in enumerate(lines):
        cells = [line[0].ljust(widths[0])] + [t.rjust(w) for t, w in zip(line[1:], widths[1:],
                                                                         strict=True)]
        out.append("  ".join(cells).rstrip())
        if k == n_head - 1:
            out.append("-" * len(out[-2 if len(out) > 2 else -1]))
    for note in table.notes:
        out += textwrap.wrap(note, width)
    return "\n".join(out)


def render_text(findings: Findings, tables: tuple[Table, ...] | None = None) -> str:
    """The compact terminal view: verdicts, then the key tables."""
    from .tables import coefficient_table, shares_table, verdict_lines

    parts = [findings.title, ""]
    for line in verdict_lines(findings):
        parts += textwrap.wrap(line, 100, subsequent_indent="  ")
    for w in findings.warnings:
        parts += textwrap.wrap("warning: " + w, 100, subsequent_indent="  ")
    for table in tables or (coefficient_table(findings, restricted=False), shares_table(findings)):
        parts += ["", render_table_text(table)]
    return "\n".join(parts)
