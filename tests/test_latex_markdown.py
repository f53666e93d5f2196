"""LaTeX and Markdown renderers: golden files on a fixed fixture, escaping, compilation."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

import steadyfit
from steadyfit.report.latex import render_table_latex, tex_escape, tex_label
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


def test_significance_marks_are_off_by_default(demo_findings):
    assert "^{*" not in render_table_latex(journal_table(demo_findings))
    assert "$^{***}$" in render_table_latex(journal_table(demo_findings), stars=True)


def test_latex_escaping():
    assert tex_escape("a_b & 50% #1 {x} ~ ^") == (
        r"a\_b \& 50\% \#1 \{x\} \textasciitilde{} \textasciicircum{}")
    assert tex_label("ln(s_k) - ln(n+g+d)") == r"$\ln(s_k) - \ln(n+g+\delta)$"
    assert tex_label("adjusted R^2") == "adjusted $R^2$"
    t = Table("k", "T_1 & more", "", (("eq_1",),), (Row("a%b", (Cell("text", "x_y"),)),))
    out = render_table_latex(t)
    assert r"T\_1 \& more" in out and r"a\%b" in out and r"x\_y" in out


PDFLATEX = shutil.which("pdflatex")


@pytest.mark.skipif(PDFLATEX is None, reason="pdflatex is not installed")
def test_every_table_file_compiles(demo_findings, tmp_path):
    from steadyfit.report.runfolder import write_run

    run = write_run(demo_findings, tmp_path / "runs")
    files = sorted((run / "tables").glob("*.tex"))
    assert len(files) >= 6
    for tex in files:
        doc = tmp_path / f"doc_{tex.stem}.tex"
        doc.write_text("\\documentclass{article}\n\\usepackage{booktabs}\n\\begin{document}\n"
                       f"\\input{{{tex.as_posix()}}}\n\\end{{document}}\n")
        proc = subprocess.run([PDFLATEX, "-interaction=nonstopmode", "-halt-on-error",
                               doc.name], cwd=tmp_path, capture_output=True, text=True,
                              timeout=120)
        assert proc.returncode == 0, f"{tex.name}:\n{proc.stdout[-2000:]}"
        assert (tmp_path / f"doc_{tex.stem}.pdf").stat().st_size > 1000
