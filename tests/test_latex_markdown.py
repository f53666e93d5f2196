"""LaTeX and Markdown renderers: golden files on a fixed fixture, symbols, marks, layout.

Compiling the LaTeX is tested in test_latex_compile.py."""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest

import steadyfit
from steadyfit.report.latex import SIGNIFICANCE_LEGEND, render_table_latex, tex_text
from steadyfit.report.markdown import render_table_md
from steadyfit.report.tables import Cell, Row, Table, all_tables, journal_table

GOLDEN = Path(__file__).parent / "golden"
UPDATE = os.environ.get("STEADYFIT_UPDATE_GOLDEN") == "1"


@pytest.fixture(scope="module")
def demo_findings():
    from steadyfit.demo import SPEC_FILE, shipped_file

    return steadyfit.run(shipped_file(SPEC_FILE))


def _golden(name: str, text: str) -> None:
    path = GOLDEN / name
    if UPDATE:
        path.write_text(text)
    assert path.exists(), f"missing golden file {name}; run with STEADYFIT_UPDATE_GOLDEN=1"
    assert text == path.read_text(), f"{name} changed; inspect and regenerate if intended"


def _table(findings, key):
    return next(t for t in all_tables(findings) if t.key == key)


@pytest.mark.parametrize("key", ["implied_shares", "regressions", "regressions_growth",
                                 "structural", "consistency"])
def test_markdown_golden(demo_findings, key):
    _golden(f"{key}.md", render_table_md(_table(demo_findings, key), 3) + "\n")


@pytest.mark.parametrize("key, stars", [("regressions", False), ("regressions", True),
                                        ("regressions_growth", False)])
def test_latex_golden(demo_findings, key, stars):
    text = render_table_latex(_table(demo_findings, key), 3, stars)
    _golden(f"{key}{'_stars' if stars else ''}.tex", text)


def test_latex_digits_setting(demo_findings):
    two = render_table_latex(_table(demo_findings, "regressions"), 2)
    assert "0.75" in two and "0.747" not in two


def _coefficients(*ps: float) -> Table:
    cells = tuple(Cell("number", 0.5, 0.1, p) for p in ps)
    return Table("marks", "Marks", "", tuple((f"c{i}",) for i in range(len(ps))),
                 (Row("x", cells),), ("A note.",))


def test_significance_marks_are_off_by_default(demo_findings):
    plain = render_table_latex(journal_table(demo_findings))
    assert r"\rlap{$^" not in plain and SIGNIFICANCE_LEGEND not in plain
    marked = render_table_latex(journal_table(demo_findings), significance_marks=True)
    assert r"\rlap{$^{1}$}" in marked and marked.count(SIGNIFICANCE_LEGEND) == 1
    assert "***" not in marked and "p < 0.01" not in marked


def test_significance_marks_give_the_smallest_level():
    tex = render_table_latex(_coefficients(0.004, 0.03, 0.07, 0.2, 0.0100001), 3, True)
    row = next(line for line in tex.splitlines() if line.startswith("x &"))
    cells = row.rstrip(" \\").split(" & ")[1:]
    marks = [c.split(r"\rlap{$^{")[1].split("}")[0] if r"\rlap" in c else "" for c in cells]
    assert marks == ["1", "5", "10", "", "5"]
    # every number keeps a slot of the same width, marked or not: the column stays aligned
    assert all(c.endswith(r"\phantom{$^{10}$}") for c in cells)


def test_unicode_becomes_latex():
    assert tex_text("a_b & 50% #1 {x} ~ ^") == (
        r"a\_b \& 50\% \#1 \{x\} \textasciitilde{} \textasciicircum{}")
    assert tex_text("ln(sₖ) − ln(n + g + δ)") == r"$\ln(s_{k}) - \ln(n + g + \delta)$"
    assert tex_text("adjusted R²") == "adjusted $R^{2}$"
    assert tex_text("restriction Wald (χ²)") == r"restriction Wald ($\chi^{2}$)"
    assert tex_text("ln(y₀)") == r"$\ln(y_{0})$"
    assert tex_text("−0.123") == "$-$0.123"
    assert tex_text("<0.001") == "$<$0.001"  # not an inverted exclamation mark
    assert tex_text("|ours − published| ≤ tolerance") == (
        r"$|$ours $-$ published$| \leq{}$ tolerance")
    assert tex_text("implied α + β") == r"implied $\alpha + \beta$"
    assert tex_text("1 – 2 — 3") == r"1 \textendash{} 2 \textemdash{} 3"
    assert tex_text("x--y") == "x-{}-y"  # no ligature into a dash
    assert tex_text("'inside' \"q\"") == "`inside' ``q''"
    assert tex_text("Curaçao Škoda") == "Curaçao Škoda"
    assert tex_text("ln(income per worker)") == "ln(income per worker)"  # words stay text
    assert tex_text("price € ą") == "price ? ?"


def test_latex_escaping_in_tables():
    t = Table("k", "T_1 & more", "", (("eq_1",),), (Row("a%b", (Cell("text", "x_y"),)),))
    out = render_table_latex(t)
    assert r"T\_1 \& more" in out and r"a\%b" in out and r"x\_y" in out
    odd = Table("k", "Euro €", "", (("a",),), (Row("🙂", (Cell("text", "x"),)),))
    out = render_table_latex(odd)
    assert "U+20AC EURO SIGN" in out and "U+1F642" in out and "Euro ?" in out
    assert all(" " <= c <= "~" or c == "\n" for c in out)


def _wide(n: int, notes: tuple[str, ...] = ("Only under the last part.",)) -> Table:
    cols = tuple((f"column {j}",) for j in range(n))
    rows = tuple(Row(f"row {i}", tuple(Cell("number", 1000.0 * i + j, 1.0) for j in range(n)))
                 for i in range(3))
    return Table("wide_key", "Wide", "stub", cols, rows, notes)


def _parts(tex: str) -> list[str]:
    return tex.split(r"\begin{table}")[1:]


def test_wide_tables_split_into_numbered_parts():
    tex = render_table_latex(_wide(12), max_columns=5)
    parts = _parts(tex)
    assert len(parts) == 3
    assert [p.count("column ") for p in parts] == [4, 4, 4]
    for k, p in enumerate(parts, start=1):
        assert f"Wide (part {k} of 3)" in p
        assert all(f"row {i}" in p for i in range(3))  # the stub is repeated
    labels = re.findall(r"\\label\{([^}]*)\}", tex)
    assert labels == ["tab:wide_key", "tab:wide_key-part2", "tab:wide_key-part3"]
    assert [p.count("Only under the last part.") for p in parts] == [0, 0, 1]
    # without a cap the line decides: 12 such columns do not fit 6.5 inches, 4 do
    assert len(_parts(render_table_latex(_wide(12)))) > 1
    assert len(_parts(render_table_latex(_wide(4)))) == 1


def test_columns_under_one_header_stay_together():
    heads = tuple((f"equation {j}", kind) for j in range(4)
                  for kind in ("unrestricted", "restricted"))
    t = Table("pairs", "Pairs", "", heads,
              (Row("x", tuple(Cell("number", 0.5, 0.1) for _ in heads)),))
    parts = _parts(render_table_latex(t, max_columns=3))
    assert len(parts) == 4
    for p in parts:
        assert p.count("{unrestricted}") == p.count("{restricted}") == 1


def test_long_text_wraps_and_tall_tables_split_by_rows():
    long = "a source of many words " * 12
    t = Table("long", "Long", "", (("what",), ("source",)),
              tuple(Row(f"row {i}", (Cell("number", 1.0), Cell("text", long))) for i in range(80)))
    tex = render_table_latex(t)
    assert r"\parbox[t]" in tex
    parts = _parts(tex)
    assert len(parts) > 1 and "(part 1 of" in parts[0]
    assert sum(p.count("row ") for p in parts) == 80  # every row once


def test_landscape_option():
    tex = render_table_latex(_wide(12), landscape=True)
    assert tex.index(r"\begin{landscape}") < tex.index(r"\begin{table}")
    assert r"\end{landscape}" in tex and "pdflscape" in tex.splitlines()[0]
    assert len(_parts(tex)) < len(_parts(render_table_latex(_wide(12))))
