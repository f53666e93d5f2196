"""LaTeX rendering of the table model: booktabs, one file per table, journal layout.

Coefficients carry their standard errors in parentheses on the line below;
significance marks are off unless asked for.  A file holds one ``table``
environment and needs only ``\\usepackage{booktabs}``.
"""

from __future__ import annotations

import re

from .tables import Cell, Table, format_cell

_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
            "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
            "^": r"\textasciicircum{}", "<": r"\textless{}", ">": r"\textgreater{}"}
_MATH = re.compile(r"ln\([^()]*\)(?:\s*-\s*ln\([^()]*\))*|R\^2")
# Marks at 10%, 5% and 1% (common practice, no source).
STAR_LEVELS = ((0.01, "***"), (0.05, "**"), (0.10, "*"))


def tex_escape(text: str) -> str:
    return "".join(_SPECIAL.get(ch, ch) for ch in text)


def _math(segment: str) -> str:
    inner = segment.replace("ln(", r"\ln(").replace("+d)", r"+\delta)")
    return f"${inner}$"


def tex_label(text: str) -> str:
    """Escape a label, setting log terms and R^2 as mathematics."""
    out, pos = [], 0
    for m in _MATH.finditer(text):
        out.append(tex_escape(text[pos:m.start()]))
        out.append(_math(m.group(0)))
        pos = m.end()
    out.append(tex_escape(text[pos:]))
    return "".join(out)


def _number(text: str) -> str:
    if text == "-":  # a placeholder, not a minus sign
        return "--"
    return text.replace("-", "$-$") if re.fullmatch(r"[-\d.\[\], ()<]+", text) else tex_escape(
        text)


def _stars(cell: Cell) -> str:
    if cell.p is None:
        return ""
    for level, mark in STAR_LEVELS:
        if cell.p < level:
            return f"$^{{{mark}}}$"
    return ""


def _header(table: Table) -> list[str]:
    levels = max((len(c) for c in table.columns), default=1)
    lines = []
    for level in range(levels):
        row = [c[level] if level < len(c) else "" for c in table.columns]
        cells = [tex_escape(table.stub) if level == levels - 1 else ""]
        rules = []
        j = 0
        while j < len(row):
            span = 1
            while level < levels - 1 and j + span < len(row) and row[j + span] == row[j]:
                span += 1
            text = tex_escape(row[j])
            cells.append(f"\\multicolumn{{{span}}}{{c}}{{{text}}}" if span > 1 else text)
            if level < levels - 1 and row[j]:
                rules.append(f"\\cmidrule(lr){{{j + 2}-{j + span + 1}}}")
            j += span
        lines.append(" & ".join(cells) + r" \\")
        if rules:
            lines.append(" ".join(rules))
    return lines


def render_table_latex(table: Table, digits: int = 3, stars: bool = False) -> str:
    """One ``table`` environment with a booktabs ``tabular`` and its notes."""
    d = table.places(digits)
    text_cols = table.text_columns()
    spec = "l" + "".join("l" if t else "r" for t in text_cols)
    lines = [f"% steadyfit table '{table.key}'", r"\begin{table}[htbp]", r"\centering",
             f"\\caption{{{tex_escape(table.title)}}}",
             f"\\label{{tab:{re.sub(r'[^A-Za-z0-9:_-]', '-', table.key)}}}",
             f"\\begin{{tabular}}{{{spec}}}", r"\toprule", *_header(table), r"\midrule"]
    ncol = len(table.columns) + 1
    for i, row in enumerate(table.rows):
        if row.section:
            if i > 0:
                lines.append(r"\midrule")
            lines.append(f"\\multicolumn{{{ncol}}}{{l}}{{\\emph{{{tex_escape(row.section)}}}}}"
                         r" \\")
        texts = [format_cell(c, d) for c in row.cells]
        cells = [_number(t) + (_stars(c) if stars else "") if t else ""
                 for (t, _), c in zip(texts, row.cells, strict=True)]
        lines.append(" & ".join([tex_label(row.label), *cells]) + r" \\")
        if any(se is not None for _, se in texts):
            lines.append(" & ".join(["", *(_number(se) if se else "" for _, se in texts)])
                         + r" \\")
    lines += [r"\bottomrule", r"\end{tabular}"]
    notes = list(table.notes)
    if stars and any(c.p is not None for r in table.rows for c in r.cells):
        notes.append("Significance: " + ", ".join(
            f"{m} p < {lvl:g}" for lvl, m in STAR_LEVELS) + ".")
    if notes:
        lines += [r"\par\smallskip", r"\begin{minipage}{0.95\linewidth}\footnotesize",
                  *(tex_escape(n) + r"\par" for n in notes), r"\end{minipage}"]
    lines.append(r"\end{table}")
    return "\n".join(lines) + "\n"
