"""The LaTeX tables compile in a plain article and fit its line.

Each document is ``article`` with only ``booktabs`` (no font-encoding package), a
6.5 by 9 inch text block on letter paper (one-inch margins, set with lengths: no
geometry package), ``\\tracinglostchars=3`` so that a character missing from a font is an
error, and ``glyphtounicode`` so that the PDF's text can be read back.  A document fails
on any error, any overfull box wider than 1 pt, a float taller than the page, or text
that does not come out as written (checked on the PDF's text with pypdf).
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

import steadyfit
from steadyfit.report.latex import printable_letter, render_table_latex
from steadyfit.report.tables import Cell, Row, Table, all_tables, combined_table, families

PDFLATEX = shutil.which("pdflatex")
pytestmark = pytest.mark.skipif(PDFLATEX is None, reason="pdflatex is not installed")

PREAMBLE = r"""\documentclass[letterpaper]{article}
\usepackage{booktabs}
%s
\pdfpagewidth=8.5in \pdfpageheight=11in
\setlength{\textwidth}{6.5in}\setlength{\textheight}{9in}
\setlength{\oddsidemargin}{0pt}\setlength{\evensidemargin}{0pt}
\setlength{\topmargin}{0pt}\setlength{\headheight}{0pt}\setlength{\headsep}{0pt}
\pdfgentounicode=1 \input{glyphtounicode}
\tracinglostchars=3
\begin{document}
"""
# what the tables' typography may bring into the PDF's text beyond printable ASCII:
# Greek letters, minus, relations, dashes, curly quotes, and accents (pypdf gives an
# accented letter as the accent beside the letter)
TYPOGRAPHIC = set("αβγδλχσμ−≤≥×±–‘’“”") | set("´`¨^˜¸ˇ˘˙¯˚˝")


def _compile(folder: Path, name: str, tables: list[str], packages: str = "",
             allowed: str = "") -> str:
    """Compile the tables (one page each) and return the PDF's text; fail on any problem."""
    tex = folder / f"{name}.tex"
    tex.write_text(PREAMBLE % packages + "\n\\clearpage\n".join(tables) + "\n\\end{document}\n",
                   encoding="utf-8")
    proc = subprocess.run([PDFLATEX, "-interaction=nonstopmode", "-halt-on-error", tex.name],
                          cwd=folder, capture_output=True, timeout=120)
    log = (folder / f"{name}.log").read_text(encoding="utf-8", errors="replace")
    errors = re.findall(r"^! .*", log, re.M)
    assert proc.returncode == 0 and not errors, f"{name}: {errors or log[-2000:]}"
    overfull = [float(x) for x in re.findall(r"Overfull \\hbox \(([\d.]+)pt too wide", log)]
    assert all(x <= 1.0 for x in overfull), f"{name}: overfull boxes {overfull}"
    assert "Missing character" not in log, name
    assert "Float too large" not in log, f"{name}: a table is taller than the page"
    pypdf = pytest.importorskip("pypdf", reason="pypdf reads the PDF's text back")
    text = "\n".join(page.extract_text() for page in pypdf.PdfReader(folder / f"{name}.pdf").pages)
    stray = sorted({c for c in text
                    if not (" " <= c <= "~" or c == "\n" or c in TYPOGRAPHIC or c in allowed)})
    assert not stray, f"{name}: characters the tables do not contain: {stray}"
    return text


def _safe(tex: str) -> None:
    """Only printable ASCII and the accented letters LaTeX's UTF-8 input sets in OT1."""
    bad = {c for c in tex if not (" " <= c <= "~" or c == "\n" or printable_letter(c))}
    assert not bad, f"characters outside the safe set: {sorted(bad)}"


def _rendered(tables: list[Table], **options: object) -> list[str]:
    out = [render_table_latex(t, 3, **options) for t in tables]  # type: ignore[arg-type]
    for tex in out:
        _safe(tex)
        assert "shown as '?'" not in tex, tex[:300]
    return out


@pytest.fixture(scope="module")
def demo_findings(tmp_path_factory):
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("demo")
    write_demo(folder)
    return steadyfit.run(next(folder.glob("*.toml")))


def _common_checks(text: str) -> None:
    assert "¡" not in text and "¿" not in text
    assert "−" in text  # a true minus sign, from the font's minus
    assert "α" in text and "β" in text
    assert "<0.001" in text.replace(" ", "")
    assert "ln(sk)" in text.replace(" ", "")  # ln(sₖ): a subscript, not "s_k"
    assert "R2" in text.replace(" ", "")  # R²


def test_demo_tables_compile_and_fit(demo_findings, tmp_path):
    text = _compile(tmp_path, "demo", _rendered(list(all_tables(demo_findings))))
    _common_checks(text)
    assert "λ" in text


def test_replication_tables_compile_and_fit(mrw_findings, tmp_path):
    tables = list(all_tables(mrw_findings))
    assert any(t.key == "scorecard" for t in tables)
    text = _compile(tmp_path, "mrw", _rendered(tables))
    _common_checks(text)
    # the scorecard's |ours − published|: bars, not dashes from the text font
    assert "|ours" in text.replace(" ", "")


def test_wide_tables_split_marks_and_landscape(demo_findings, mrw_findings, tmp_path):
    """Every coefficient once, two columns a fit, is the widest table: split into parts,
    with significance marks; and turned in landscape."""
    wide = [combined_table(f, res, suffix, title) for f in (demo_findings, mrw_findings)
            for suffix, title, res in families(f)]
    assert max(len(t.columns) for t in wide) >= 10
    portrait = _rendered(wide, significance_marks=True)
    assert any("(part 2 of" in tex for tex in portrait)
    text = _compile(tmp_path, "wide", portrait)
    assert "A superscript 1, 5 or 10" in text.replace("\n", " ")
    capped = _rendered(wide[:1], max_columns=3)
    assert "(part 3 of" in capped[0] or "(part 4 of" in capped[0]
    turned = _rendered(wide, landscape=True)
    assert all(r"\begin{landscape}" in tex for tex in turned)
    _compile(tmp_path, "turned", turned + capped, packages=r"\usepackage{pdflscape}")


def test_hostile_text_compiles(tmp_path):
    """Labels with every kind of character a user might give still compile; what LaTeX
    cannot set shows as '?' and is listed in a comment."""
    odd = ("price € 5 & 50% #1 {x} ~ ^ \\ $ _ < > | -- --- ``q'' \"q\" 'q' !` ?` "
           "Curaçao Škoda Łódź Gdańsk ą 🙂 \u0007 tab\there x²₁ Δy ≠ ≈ → ∞ ° … · •")
    table = Table("odd_key_ü", f"Odd title {odd}", odd,
                  ((odd[:40], "a"), (odd[:40], "b")),
                  (Row(odd, (Cell("text", odd), Cell("number", -1.5, 0.25, 0.003))),
                   Row("ln(sₖ) − ln(n + g + δ)", (Cell("number", 0.5), Cell("pvalue", 1e-6))),
                   Row("", (Cell("text", "–"), Cell("empty")), section=odd)),
                  (odd, "χ² and R² and λ"))
    tex = render_table_latex(table, 3, True)
    _safe(tex)
    assert "shown as '?'" in tex and "U+20AC" in tex and "U+1F642" in tex
    text = _compile(tmp_path, "odd", [tex], allowed="Δ∆≠\u0338≈→∞°◦·•…ˆ")
    assert "¡" not in text and "¿" not in text
    flat = text.replace(" ", "").replace("\n", "")
    for expected in ("50%#1{x}", "<>|", "-----", "−1.500", "<0.001", "χ2andR2andλ"):
        assert expected in flat, expected
    assert "∆y" in flat or "Δy" in flat


def test_run_folder_table_files_compile(demo_findings, tmp_path):
    """The files a run writes (every table, the descriptive statistics among them)."""
    from steadyfit.report.runfolder import write_run

    run = write_run(demo_findings, tmp_path / "runs")
    files = sorted((run / "tables").glob("*.tex"))
    assert len(files) >= 6
    for f in files:
        _safe(f.read_text(encoding="utf-8"))
    _compile(tmp_path, "files", [f"\\input{{{f.as_posix()}}}" for f in files])
