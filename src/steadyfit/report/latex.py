"""LaTeX rendering of the table model: booktabs tables that drop into a paper.

A table needs ``\\usepackage{booktabs}`` and nothing else (no font-encoding package, no
``array``).  :func:`tex_text` translates the table's Unicode into plain LaTeX: Greek
letters, sub- and superscripts, minus signs, relations and ``ln(...)`` terms as
mathematics; accented Latin letters that LaTeX's default UTF-8 input sets in OT1 as they
are; any other character as ``?``, listed in a comment at the top of the table.

Tables are planned for a 6.5 by 9 inch text block (letter paper, one-inch margins), turned
with ``landscape=True`` (the document then needs ``\\usepackage{pdflscape}`` or
``lscape``).  Widths are estimated from the characters, on the wide side.  A table too
wide is set smaller (``\\small``, ``\\footnotesize``, less room between columns), long
text wrapped in boxes; what still does not fit is split into numbered parts by columns
(row labels repeated, columns under one header kept together), then by rows to fit the
page height, the notes under the last part.
"""

from __future__ import annotations

import functools
import itertools
import re
import unicodedata
from dataclasses import dataclass

from .tables import Cell, Table, format_cell
from .texchars import LOG_TERM, Translator, printable_letter, script_of, tex_text

PT_PER_INCH = 72.27
PORTRAIT_WIDTH_IN = 6.5
LANDSCAPE_WIDTH_IN = PAGE_HEIGHT_IN = 9.0
# Significance levels in percent, smallest first (common practice, no source).
SIGNIFICANCE_LEVELS = (1, 5, 10)
SIGNIFICANCE_LEGEND = (
    "A superscript 1, 5 or 10 on a coefficient gives the smallest of these levels, in "
    "percent, at which it differs from zero in a two-sided test; no superscript: not at 10.")

# ---------------------------------------------------------------- width estimates

_EM = {**dict.fromkeys("il.,:;'!|`[]", 0.28), **dict.fromkeys("ftrjsI()/-*", 0.40),
       **dict.fromkeys("mwMW%@", 1.03), **dict.fromkeys(" \u00a0", 0.34),
       **dict.fromkeys("+=<>−×±÷·", 0.95), **dict.fromkeys("≤≥≠≈→", 1.2), "–": 0.5,
       "—": 1.0, "…": 1.0, "\\": 0.5}


@functools.lru_cache(maxsize=4096)
def _em(text: str) -> float:
    """Width of ``text`` in ems of the roman font, estimated on the wide side."""
    total = 0.0
    for ch in text:
        if ch in _EM:
            total += _EM[ch]
        elif script_of(ch):
            total += 0.42
        elif ch.isdigit() or (ch.isascii() and ch.islower()):
            total += 0.53
        else:
            total += 0.77 if ch.isupper() else 0.62
    return total * 1.03


def _split(text: str, cell: bool = True) -> list[str]:
    """Words of ``text`` for measuring; in a cell a formula ("ln(sₖ) − ln(n + g + δ)") is
    one word, as the boxes that wrap cells never break mathematics (headers break lines
    themselves)."""
    if not cell:
        return text.split() or [""]
    text = LOG_TERM.sub(lambda m: m.group(0).replace(" ", "\u00a0"), text)
    text = re.sub(r" ([−+=×±≤≥<>]) ", "\u00a0\\1\u00a0", text)
    return [w for w in re.split(r"[ \t\n]+", text) if w] or [""]


def _wrap(text: str, width: float, cell: bool = True) -> list[str]:
    """Words of ``text`` in lines no wider than ``width`` ems (a long word alone)."""
    lines: list[str] = []
    for word in _split(text, cell):
        if lines and _em(lines[-1] + " " + word) <= width:
            lines[-1] += " " + word
        else:
            lines.append(word)
    return lines


def _two_lines(text: str) -> float:
    """The narrowest width that sets ``text`` in at most two lines."""
    w = _split(text, False)
    return min(max(_em(" ".join(w[:k])), _em(" ".join(w[k:]))) for k in range(len(w) + 1))


def _breakable(text: str) -> str:
    """Long identifiers get break points after ``_ / : . =`` (zero-width spaces)."""
    return " ".join(re.sub(r"([_/:.=])(?=.)", "\\1\u200b", w) if len(w) > 14 and "ln(" not in w
                    else w for w in text.split(" "))


def _unbroken(text: str) -> str:  # break points as spaces, for measuring
    return _breakable(text).replace("\u200b", " ")


def _hard(text: str, breaks: bool = True) -> float:
    """The widest piece of ``text`` that cannot be broken across lines."""
    return max(_em(w) for w in _split(_unbroken(text) if breaks else text, breaks))


@dataclass(frozen=True)
class _Size:
    command: str
    pt: float  # font size
    widen: float  # smaller optical sizes are wider per point
    sep: float  # \tabcolsep in points
    leading: float  # \baselineskip in points


_SIZES = (_Size("", 10.0, 1.0, 6.0, 12.0), _Size(r"\small", 9.0, 1.03, 5.0, 11.0),
          _Size(r"\footnotesize", 8.0, 1.07, 4.0, 9.5))
MARK_SLOT_EM = 0.8  # room kept right of each number for a superscript "10"


@dataclass
class _Plan:
    size: _Size
    widths: list[float]  # ems: the stub, then each column of the part
    cols: list[int]
    rows: list[int] | None = None  # the rows of this part (None: every row with content)


def _spans(table: Table, cols: list[int], level: int) -> list[tuple[int, int, str]]:
    """Runs of equal header text at an upper ``level``: (position in part, span, text)."""
    out, pos = [], 0
    for text, run in itertools.groupby(table.columns[j][level] if level < len(table.columns[j])
                                       else "" for j in cols):
        out.append((pos, n := len(list(run)), text))
        pos += n
    return out


def _partition(units: list[list[int]], k: int) -> list[list[int]]:
    """``units`` (runs of columns) in at most ``k`` contiguous parts, the largest part as
    small as it can be."""
    parts: list[list[int]] = []
    for target in range(max(map(len, units)), sum(map(len, units)) + 1):
        parts = [[]]
        for u in units:
            if parts[-1] and len(parts[-1]) + len(u) > target:
                parts.append([])
            parts[-1] += u
        if len(parts) <= k:
            break
    return parts


def _key(table: Table) -> str:
    return re.sub(r"[^A-Za-z0-9:_-]", "-", table.key)


def _significance(cell: Cell) -> str:
    """The superscript of a coefficient: the smallest level (percent) at which p is below."""
    if cell.p is None:
        return ""
    return next((str(lvl) for lvl in SIGNIFICANCE_LEVELS if cell.p < lvl / 100), "")


class _Renderer:
    """Plans the parts of one table (columns, rows, font size) and writes them."""

    def __init__(self, table: Table, digits: int, marks: bool, line_pt: float,
                 page_pt: float) -> None:
        self.table, self.tex, self.line_pt, self.page_pt = table, Translator(), line_pt, page_pt
        self.texts = [[format_cell(c, table.places(digits)) for c in r.cells] for r in table.rows]
        self.marks = [marks and any(r.cells[j].p is not None for r in table.rows)
                      for j in range(len(table.columns))]
        self.text_cols = table.text_columns()
        self.levels = max((len(c) for c in table.columns), default=1)
        labels = [r.label for r in table.rows] or [""]
        self.stub = (max(_hard(table.stub, False), *(_hard(x) for x in labels)),
                     max(max(_em(x) for x in labels), _two_lines(table.stub)))
        self.sections = max((_em(r.section) * 1.1 for r in table.rows if r.section), default=0.0)
        self.cols = []  # (hard, soft) width of each column
        for j in range(len(table.columns)):
            fixed, hard, soft = 0.0, _hard(self.bottom(j), False), _two_lines(self.bottom(j))
            for r, (a, b) in zip(table.rows, (t[j] for t in self.texts), strict=True):
                if r.cells[j].kind == "text":
                    hard, soft = max(hard, _hard(a)), max(soft, _em(a))
                else:
                    slot = MARK_SLOT_EM if self.marks[j] else 0.0
                    fixed = max(fixed, max(_em(a), _em(b or "")) + slot)
            self.cols.append((max(fixed, hard), max(fixed, hard, soft)))
        self.cache: dict[tuple[int | None, int], tuple[int, ...]] = {}
        self.hangs: dict[tuple[int, ...], dict[int, int]] = {}

    def bottom(self, j: int) -> str:
        head = self.table.columns[j]
        return head[self.levels - 1] if self.levels - 1 < len(head) else ""

    # ------------------------------------------------------------ planning

    def plan(self, cols: list[int], size: _Size) -> _Plan | None:
        """Widths for ``cols`` at ``size`` within the line, or None when they do not fit."""
        scale = size.pt * size.widen
        avail = (self.line_pt - 2 * size.sep * len(cols)) / scale
        hard = [self.stub[0]] + [self.cols[j][0] for j in cols]
        soft = [self.stub[1]] + [self.cols[j][1] for j in cols]
        gap = 2 * size.sep / scale
        for level in range(self.levels - 1):  # a spanning header needs its longest word
            for start, span, text in _spans(self.table, cols, level):
                have = sum(hard[start + 1:start + 1 + span]) + gap * (span - 1)
                for k in range(start + 1, start + 1 + span):
                    hard[k] += max(0.0, (_hard(text, False) - have) / span)
                    soft[k] = max(soft[k], hard[k])
        # a section heading spans the table; one longer than the line wraps
        hard[0] += max(0.0, min(self.sections, avail) - sum(hard) - gap * len(cols))
        soft[0] = max(soft[0], hard[0])
        if sum(hard) > avail:
            return None
        if sum(soft) <= avail:
            return _Plan(size, soft, cols)
        t = (avail - sum(hard)) / (sum(soft) - sum(hard))  # then moved where it saves lines
        even = [h + t * (x - h) for h, x in zip(hard, soft, strict=True)]
        return _Plan(size, self.improve(cols, even, hard, soft), cols)

    def visible(self, cols: list[int]) -> list[int]:
        """Rows with something in ``cols`` (all rows when the part has every column)."""
        every = len(cols) == len(self.table.columns)
        return [i for i, t in enumerate(self.texts)
                if every or any(t[j][0] or t[j][1] for j in cols)]

    def lines(self, j: int | None, width: float) -> tuple[int, ...]:
        """Lines of each row's cell in column ``j`` (None: the stub) at ``width`` ems."""
        key = (j, round(width * 4))
        if key not in self.cache:
            self.cache[key] = tuple(
                len(_wrap(_unbroken(r.label if j is None else t[j][0]), width))
                if j is None or r.cells[j].kind == "text" else 1
                for r, t in zip(self.table.rows, self.texts, strict=True))
        return self.cache[key]

    def hang(self, cols: list[int]) -> dict[int, int]:
        """Per row: the lines under its first one that a long row label may hang into (its
        own second line and the rows below with no label)."""
        if (key := tuple(cols)) not in self.hangs:
            room, below = {}, 0
            for i in reversed(self.visible(cols)):
                second = any(self.texts[i][j][1] for j in cols)
                room[i] = second + below
                below = 0 if self.table.rows[i].label or self.table.rows[i].section else (
                    below + 1 + second)
            self.hangs[key] = room
        return self.hangs[key]

    def row_lines(self, i: int, cols: list[int], widths: list[float]) -> tuple[int, bool]:
        """The lines row ``i`` takes, and whether its label hangs into the lines below."""
        others = max([1] + [self.lines(j, w)[i] for j, w in zip(cols, widths[1:], strict=True)])
        label = self.lines(None, widths[0])[i]
        hangs = label - self.hang(cols)[i] <= others
        second = any(self.texts[i][j][1] for j in cols)
        return (others if hangs else max(others, label)) + second + 2 * bool(
            self.table.rows[i].section), hangs

    def total_lines(self, cols: list[int], widths: list[float]) -> int:
        """Lines of the body and of the deepest header."""
        head = max([1] + [len(_wrap(self.bottom(j), w, False)) for j, w in zip(cols, widths[1:],
                                                                       strict=True)])
        return head + sum(self.row_lines(i, cols, widths)[0] for i in self.visible(cols))

    def improve(self, cols: list[int], w: list[float], hard: list[float],
                soft: list[float]) -> list[float]:
        """Moves width between wrapped columns while that saves lines."""
        free = [k for k in range(len(w)) if soft[k] > hard[k] + 1e-9]
        best = self.total_lines(cols, w)
        for step in (4.0, 2.0, 1.0, 0.5):
            better = True
            while better:
                better = False
                for a, b in itertools.permutations(free, 2):
                    if (d := min(step, w[a] - hard[a], soft[b] - w[b])) > 1e-6:
                        trial = [x - d if k == a else x + d if k == b else x
                                 for k, x in enumerate(w)]
                        if (t := self.total_lines(cols, trial)) < best:
                            w, best, better = trial, t, True
        return w

    def layout(self, max_columns: int | None, notes: list[str]) -> list[_Plan]:
        """The parts: the fewest column parts that fit the line (at most ``max_columns``
        columns each), each cut by rows to fit the page; at the size that gives the fewest
        parts, the largest of those costing at most a tenth more lines."""
        n = len(self.table.columns)
        if n == 0:
            return [_Plan(_SIZES[0], [self.stub[1]], [])]
        singles = [[j] for j in range(n)]
        groups = [list(range(s, s + c)) for s, c, _ in _spans(self.table, list(range(n)), 0)]
        for units in ([singles] if self.levels < 2 else [groups, singles]):
            for k in range(1, len(units) + 1):
                parts = _partition(units, k)
                if max(len(p) for p in parts) > (max_columns or n):
                    continue
                options = []
                for size in _SIZES:
                    plans = [p for p in (self.plan(c, size) for c in parts) if p is not None]
                    if len(plans) == len(parts):
                        cut = [c for i, p in enumerate(plans, start=1)
                               for c in self.chunks(p, notes if i == len(plans) else [])]
                        lines = sum(self.total_lines(p.cols, p.widths) for p in plans)
                        options.append((len(cut), lines, cut))
                if options:
                    least = min(o[0] for o in options)
                    fewest = min(o[1] for o in options if o[0] == least)
                    return next(o[2] for o in options if o[0] == least and o[1] <= 1.1 * fewest)
        small = _SIZES[-1]  # nothing fits: one column a part, as narrow as it goes
        return [_Plan(small, [self.stub[0], self.cols[j][0]], [j]) for j in range(n)]

    def chunks(self, plan: _Plan, notes: list[str]) -> list[_Plan]:
        """``plan`` cut by rows so that each part fits the page height; rows with an empty
        label stay with the row above them; the notes (\\footnotesize) go with the last."""
        size, cols, w, rows = plan.size, plan.cols, plan.widths, self.visible(plan.cols)
        heights = [float(self.row_lines(i, cols, w)[0]) for i in rows]
        room = ((self.page_pt - 40) / size.leading - self.levels - 2
                - self.total_lines(cols, w) + sum(heights))  # less the header
        if rows:
            heights[-1] += sum(_em(n) * 8.56 / self.line_pt + 1 for n in notes) * 9.5 / (
                size.leading)
        starts = [k for k, i in enumerate(rows)
                  if k == 0 or self.table.rows[i].label or self.table.rows[i].section]
        parts: list[list[int]] = [[]]
        used = 0.0
        bounds = [*starts, len(rows)]
        for a, b in zip(bounds, bounds[1:], strict=False):
            if parts[-1] and used + sum(heights[a:b]) > room:
                parts.append([])
                used = 0.0
            parts[-1] += rows[a:b]
            used += sum(heights[a:b])
        return [_Plan(size, w, cols, part) for part in parts]

    # ------------------------------------------------------------ writing

    def cell(self, text: str, width_pt: float, align: str, em: float) -> str:
        """A cell's LaTeX, wrapped in a box ``width_pt`` wide when wider than ``em`` ems."""
        wrap = _em(text) > em + 1e-9
        tex = self.tex(_breakable(text) if wrap else text)
        if tex[:1] in "[*":  # not an argument of the \\ before it
            tex = "{}" + tex
        keep = r"\binoppenalty=10000 \relpenalty=10000"  # no line break inside a formula
        return f"\\parbox[t]{{{width_pt:.1f}pt}}{{{align}{keep} {tex}\\strut}}" if wrap else tex

    def header_cell(self, text: str, em: float, align: str) -> str:
        lines = _wrap(text, em, False)
        if len(lines) == 1:
            return self.tex(text)
        body = r" \\ ".join(self.tex(x) for x in lines)
        return f"\\begin{{tabular}}[b]{{@{{}}{align}@{{}}}}{body}\\end{{tabular}}"

    def header(self, plan: _Plan) -> list[str]:
        cols, w = plan.cols, plan.widths
        gap = 2 * plan.size.sep / (plan.size.pt * plan.size.widen)
        lines = []
        for level in range(self.levels):
            bottom = level == self.levels - 1
            cells = [self.header_cell(self.table.stub, w[0], "l") if bottom else ""]
            rules = []
            spans = ([(k, 1, self.bottom(j)) for k, j in enumerate(cols)] if bottom
                     else _spans(self.table, cols, level))
            for start, span, text in spans:
                left = span == 1 and self.text_cols[cols[start]]
                width = sum(w[start + 1:start + 1 + span]) + gap * (span - 1)
                body = self.header_cell(text, width, "l" if left else "c")
                cells.append(f"\\multicolumn{{{span}}}{{{'l' if left else 'c'}}}{{{body}}}")
                if not bottom and text:
                    rules.append(f"\\cmidrule(lr){{{start + 2}-{start + span + 1}}}")
            lines.append(" & ".join(cells) + r" \\")
            if rules:
                lines.append(" ".join(rules))
        return lines

    def number(self, text: str, j: int, mark: str) -> str:
        """A number; in a column with significance marks, the mark (if any) in a slot of
        fixed width to its right, so that the numbers stay aligned."""
        tex = self.tex(text)
        if self.marks[j]:
            tex += (f"\\rlap{{$^{{{mark}}}$}}" if mark else "") + r"\phantom{$^{10}$}"
        return tex

    def body(self, plan: _Plan) -> list[str]:
        cols, w, scale = plan.cols, plan.widths, plan.size.pt * plan.size.widen
        lines: list[str] = []
        for i in plan.rows if plan.rows is not None else self.visible(cols):
            row, texts = self.table.rows[i], self.texts[i]
            if row.section:
                if lines:
                    lines.append(r"\midrule")
                span = sum(w) + 2 * plan.size.sep * len(cols) / scale
                heading = self.cell(row.section, span * scale, r"\raggedright\em", span / 1.1)
                lines.append(f"\\multicolumn{{{len(cols) + 1}}}{{l}}{{\\emph{{{heading}}}}} \\\\")
            first = [self.cell(row.label, w[0] * scale, r"\raggedright", w[0])]
            if first[0].startswith(r"\parbox") and self.row_lines(i, cols, w)[1]:
                first[0] = f"\\raisebox{{0pt}}[\\height][0pt]{{{first[0]}}}"  # hangs below
            second = [""]
            for k, j in enumerate(cols, start=1):
                (a, b), c = texts[j], row.cells[j]
                if c.kind == "text":
                    align = r"\raggedright" if self.text_cols[j] else r"\raggedleft"
                    first.append(self.cell(a, w[k] * scale, align, w[k]))
                else:
                    first.append(self.number(a, j, _significance(c)) if a else "")
                second.append(self.number(b, j, "") if b else "")
            lines.append(" & ".join(first) + r" \\")
            if any(second):
                lines.append(" & ".join(second) + r" \\")
        return lines

    def part(self, plan: _Plan, number: int, count: int, notes: list[str]) -> list[str]:
        t, size = self.table, plan.size
        title = t.title + (f" (part {number} of {count})" if count > 1 else "")
        label = f"tab:{_key(t)}" + (f"-part{number}" if number > 1 else "")
        spec = "@{}l" + "".join("l" if self.text_cols[j] else "r" for j in plan.cols) + "@{}"
        lines = [r"\begin{table}[htbp]", r"\centering", f"\\caption{{{self.tex(title)}}}",
                 f"\\label{{{label}}}"]
        if size.command:
            lines.append(size.command)
        if size.sep != _SIZES[0].sep:
            lines.append(f"\\setlength{{\\tabcolsep}}{{{size.sep:g}pt}}")
        lines += [f"\\begin{{tabular}}{{{spec}}}", r"\toprule", *self.header(plan), r"\midrule",
                  *self.body(plan), r"\bottomrule", r"\end{tabular}"]
        if notes:
            lines += [r"\par\medskip", r"\begin{minipage}{\linewidth}\footnotesize",
                      *(self.tex(n) + r"\par" for n in notes), r"\end{minipage}"]
        return [*lines, r"\end{table}"]


def render_table_latex(table: Table, digits: int = 3, significance_marks: bool = False,
                       max_columns: int | None = None, landscape: bool = False) -> str:
    """The table as LaTeX: one ``table`` environment, or numbered parts one after the other
    when it does not fit the page ("Title (part 1 of 2)"; labels ``tab:KEY``,
    ``tab:KEY-part2``, ...; the notes under the last part).

    ``significance_marks``: a superscript 1, 5 or 10 on each coefficient (see
    :data:`SIGNIFICANCE_LEGEND`).  ``max_columns``: at most this many data columns a part
    (default: as many as fit).  ``landscape``: in a ``landscape`` environment, planned for a
    9-inch line; the document then needs ``\\usepackage{pdflscape}`` (or ``lscape``).
    """
    line, page = ((LANDSCAPE_WIDTH_IN, PORTRAIT_WIDTH_IN) if landscape
                  else (PORTRAIT_WIDTH_IN, PAGE_HEIGHT_IN))
    r = _Renderer(table, digits, significance_marks, line * PT_PER_INCH * 0.97,
                  page * PT_PER_INCH)
    notes = list(table.notes) + ([SIGNIFICANCE_LEGEND] if any(r.marks) else [])
    plans = r.layout(max_columns, notes)
    body: list[str] = []
    for i, plan in enumerate(plans, start=1):
        body += r.part(plan, i, len(plans), notes if i == len(plans) else [])
    head = [f"% steadyfit table '{_key(table)}': needs \\usepackage{{booktabs}}"
            + (" and \\usepackage{pdflscape} (or lscape)" if landscape else "")]
    if r.tex.missing:
        head.append("% characters LaTeX cannot set here, shown as '?': " + ", ".join(
            f"U+{ord(c):04X} {unicodedata.name(c, 'unnamed')}" for c in r.tex.missing))
    if landscape:
        body = [r"\begin{landscape}", *body, r"\end{landscape}"]
    return "\n".join(head + body) + "\n"


__all__ = ["LANDSCAPE_WIDTH_IN", "PORTRAIT_WIDTH_IN", "SIGNIFICANCE_LEGEND",
           "SIGNIFICANCE_LEVELS", "printable_letter", "render_table_latex", "tex_text"]
