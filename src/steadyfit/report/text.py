"""Terminal rendering of tables and of the compact run view, through ``rich``.

Tables fit the width they are given: numbers never break, labels and text wrap.
Colour only marks verdict words and is used only when asked for (the command
line asks when standard output is a terminal and ``NO_COLOR`` is not set); the
text without colour is the same.  steadyfit's own look: the title in bold on a
line of its own, a heavy rule under the column headings, dotted column
separators and dotted rules between sections, notes below in a dimmer tone.
"""

from __future__ import annotations

import io
import os
import shutil
import sys
import textwrap
from typing import TYPE_CHECKING, Any

from ..findings import Findings
from .model import Table, format_cell

if TYPE_CHECKING:
    from rich.console import Console

# Plain output (a file, str(findings)) is this wide unless told otherwise.
DEFAULT_WIDTH = 100
_NARROWEST = 40

# Words that carry a verdict, and the colour each is shown in on a terminal.
_VERDICT_COLOURS = {"inside": "green", "not rejected": "green", "met": "green",
                    "overlaps": "yellow", "outside": "red", "rejected": "red",
                    "MISSED": "bold red", "divergence": "magenta", "n/a": "dim"}


def terminal() -> tuple[int, bool]:
    """Width and colour for standard output: the real width when attached to a terminal
    (``COLUMNS`` wins when set), colour only on a terminal and never under ``NO_COLOR``."""
    width = shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns
    colour = sys.stdout.isatty() and not os.environ.get("NO_COLOR")
    return max(_NARROWEST, width), colour


def _console(width: int, colour: bool) -> Console:
    from rich.console import Console

    return Console(file=io.StringIO(), width=max(_NARROWEST, width), force_terminal=colour,
                   color_system="standard" if colour else None, no_color=not colour,
                   highlight=False, emoji=False, markup=False, soft_wrap=False,
                   legacy_windows=False, force_jupyter=False)


def _box() -> Any:
    from rich.box import Box

    # top, head, head row, mid, row, foot row, foot, bottom (the outer edges are not drawn)
    return Box("    \n"
               "  ┆ \n"
               " ━┿ \n"
               "  ┆ \n"
               " ╌┼ \n"
               " ━┿ \n"
               "  ┆ \n"
               "    \n")


def _text(value: str, colour: bool) -> Any:
    from rich.text import Text

    out = Text(value)
    if colour:
        for word, style in _VERDICT_COLOURS.items():
            out.highlight_words([word], style, case_sensitive=True)
    return out


def _rich_table(table: Table, digits: int, width: int, colour: bool) -> Any:
    from rich.table import Table as RichTable

    places = table.places(digits)
    texts = [[format_cell(c, places) for c in row.cells] for row in table.rows]
    two_lines = any(se is not None for row in texts for _, se in row)
    out = RichTable(box=_box(), show_edge=False, pad_edge=False, collapse_padding=True,
                    header_style="bold" if colour else "", expand=False, show_lines=two_lines)
    levels = max((len(c) for c in table.columns), default=1)
    # labels and text wrap, but keep a readable share of the width
    longest = max([len(r.label) for r in table.rows] + [len(table.stub) // 2, 1])
    out.add_column(table.stub, justify="left", overflow="fold",
                   min_width=min(longest, max(10, width // 8)))
    for j, (col, text_col) in enumerate(zip(table.columns, table.text_columns(), strict=True)):
        head = "\n".join(col[i] if i < len(col) else "" for i in range(levels))
        widest = max([len(t[j][0]) for t in texts] + [1])
        out.add_column(head, justify="left" if text_col else "right",
                       no_wrap=not text_col, overflow="fold",
                       min_width=min(widest, max(8, width // 10)) if text_col else None)
    for i, row in enumerate(table.rows):
        if row.section:
            if i > 0:
                out.rows[-1].end_section = True
            out.add_row(_text(row.section, False), *("" for _ in table.columns),
                        style="italic" if colour else None)
        cells = [_text(value + (f"\n{se}" if se else ""), colour) for value, se in texts[i]]
        out.add_row(_text(row.label, False), *cells)
    return out


def _wrap(text: str, width: int, indent: str = "") -> list[str]:
    return textwrap.wrap(text, width, initial_indent=indent,
                         subsequent_indent=" " * len(indent) if indent else "",
                         break_long_words=True, break_on_hyphens=False) or [""]


def render_table_text(table: Table, digits: int = 3, width: int = DEFAULT_WIDTH,
                      colour: bool = False) -> str:
    """A table for the terminal: title, the table, its notes; no line wider than ``width``."""
    width = max(_NARROWEST, width)
    console = _console(width, colour)
    console.print(_text(table.title, False), style="bold" if colour else None)
    console.print(_rich_table(table, digits, width, colour))
    for note in table.notes:
        for line in _wrap(note, width):
            console.print(line, style="dim" if colour else None)
    file = console.file
    assert isinstance(file, io.StringIO)
    return "\n".join(line.rstrip() for line in file.getvalue().rstrip("\n").split("\n"))


def _robustness_lines(findings: Findings, width: int) -> list[str]:
    """The bootstrap, leave-one-out and sweep results in a sentence each (the tables are in
    the report and summary.md)."""
    from .verdicts import bootstrap_phrase, influence_phrase, sweep_clause

    level = 1 - findings.settings.confidence
    lines = []
    for r in findings.results:
        phrases = ([bootstrap_phrase(r, level)] if r.bootstrap is not None else []) + (
            [influence_phrase(r)] if r.influence is not None else [])
        if phrases:
            lines.append(f"{r.heading}:")
            for phrase in phrases:
                lines += _wrap(phrase[0].upper() + phrase[1:] + ".", width, "  - ")
    if findings.sweep is not None:
        text = sweep_clause(findings, level)
        lines += _wrap(text[0].upper() + text[1:] + ".", width)
    return ["", "Robustness:", *lines] if lines else []


def render_text(findings: Findings, tables: tuple[Table, ...] | None = None,
                width: int = DEFAULT_WIDTH, colour: bool = False) -> str:
    """The compact terminal view: warnings, notes, the key-results table, the levels-versus-
    growth comparisons, the robustness analyses in a sentence each and the scorecard's
    count."""
    from .tables import compact_table
    from .verdicts import consistency_lines

    width = max(_NARROWEST, width)
    from .verdicts import conclusion

    parts = [*_wrap(findings.title, width), *_wrap(conclusion(findings), width)]
    for w in findings.warnings:
        parts += _wrap(w, width, "warning: ")
    for r in findings.results:
        if r.problem:
            parts += _wrap(f"{r.problem}.", width, f"note ({r.heading}): ")
        for note in r.notes:
            parts += _wrap(note, width, f"note ({r.heading}): ")
    if tables is None:
        from .panel import panel_key_table

        panels = panel_key_table(findings)
        tables = (compact_table(findings),) + ((panels,) if panels else ())
    for table in tables:
        parts += ["", render_table_text(table, findings.settings.digits, width, colour)]
    lines = consistency_lines(findings)
    if lines:
        parts += ["", "Levels against growth form:"]
        for line in lines:
            parts += _wrap(line, width, "- ")
    parts += _robustness_lines(findings, width)
    if findings.scorecard:
        met = sum(t.met for t in findings.scorecard)
        parts += ["", f"Replication targets: {met} of {len(findings.scorecard)} met."]
    return "\n".join(parts)
