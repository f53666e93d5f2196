"""Output a researcher can use as it is: display labels, symbols, terminal width and colour,
the Python surface (dir, short reprs, --version), and steadyfit's own wording."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

import steadyfit
from steadyfit.errors import InputError
from steadyfit.report.tables import all_tables, combined_table, families
from steadyfit.report.text import render_table_text, render_text
from steadyfit.report.verdicts import conclusion

ANSI = re.compile(r"\x1b\[")


def _cli(*args, cwd, env=None):
    import os

    full = {k: v for k, v in os.environ.items() if k != "NO_COLOR"}
    full.update(env or {})
    return subprocess.run([sys.executable, "-m", "steadyfit", *map(str, args)],
                          capture_output=True, text=True, timeout=180, cwd=cwd, env=full)


@pytest.fixture(scope="module")
def demo_findings(tmp_path_factory):
    from steadyfit.demo import write_demo

    return steadyfit.run(write_demo(tmp_path_factory.mktemp("demo")))


@pytest.mark.parametrize("width", [80, 100])
def test_demo_fits_the_terminal_width(tmp_path, width):
    proc = _cli("demo", "--out", "d", cwd=tmp_path, env={"COLUMNS": str(width)})
    assert proc.returncode == 0, proc.stderr
    lines = proc.stdout.splitlines()
    assert "Key results" in proc.stdout
    too_long = [line for line in lines if len(line) > width]
    assert not too_long, too_long[:3]
    assert not ANSI.search(proc.stdout)  # not a terminal: no colour


@pytest.mark.parametrize("width", [60, 80, 100, 140])
def test_every_table_fits_and_keeps_its_numbers(demo_findings, width):
    for table in all_tables(demo_findings):
        text = render_table_text(table, 3, width)
        assert max(len(line) for line in text.splitlines()) <= width, table.key
    # numbers never break across lines: every interval of the key table survives whole
    text = render_text(demo_findings, width=width)
    r = demo_findings.result("with_schooling", "all")
    e = r.share("alpha").estimate
    assert f"[{e.low:.3f}, {e.high:.3f}]" in text


def test_colour_only_when_asked(demo_findings):
    assert ANSI.search(render_text(demo_findings, colour=True))
    plain = render_text(demo_findings, colour=False)
    assert not ANSI.search(plain)
    # colour changes the look only: the words are the same
    coloured = re.sub(r"\x1b\[[0-9;]*m", "", render_text(demo_findings, colour=True))
    assert [line.rstrip() for line in coloured.splitlines()] == plain.splitlines()


def test_no_color_is_honoured_on_a_terminal(monkeypatch):
    from steadyfit.report import text

    monkeypatch.setattr(sys.stdout, "isatty", lambda: True, raising=False)
    monkeypatch.delenv("NO_COLOR", raising=False)
    assert text.terminal()[1] is True
    monkeypatch.setenv("NO_COLOR", "1")
    assert text.terminal()[1] is False


def test_symbols_not_code_names(demo_findings):
    text = "\n".join(render_table_text(t) for t in all_tables(demo_findings))
    for symbol in ("α", "β", "λ", "R²", "ln(sₖ)", "ln(n + g + δ)", "−"):
        assert symbol in text, symbol
    for code in ("lam ", "half_life", "R^2", "ln(s_k)", "n+g+d", "no_resource_exporters",
                 "alpha", "lambda"):
        assert code not in text, code


def _labelled_spec(demo_dir: Path, extra: str) -> Path:
    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text() + extra, encoding="utf-8")
    return spec


def test_display_labels_reach_every_renderer(demo_dir, tmp_path):
    spec = _labelled_spec(demo_dir, '\n[labels]\nequations = { with_schooling = "Augmented" }\n'
                          'samples = { no_resource_exporters = "Non-exporters" }\n'
                          'variables = { invest = "I/Y" }\n')
    findings = steadyfit.run(spec)
    folder = steadyfit.write_run(findings, tmp_path / "runs")
    html = (folder / "report.html").read_text()
    md = (folder / "summary.md").read_text()
    # every LaTeX table but the samples table, which quotes the filters as written
    tex = "".join(p.read_text() for p in (folder / "tables").glob("*.tex")
                  if p.stem != "samples")
    text = render_text(findings)
    for out in (html, md, text):
        assert "Augmented" in out and "Non-exporters" in out
        assert "no resource exporters" not in out
    assert "ln(I/Y)" in md and "ln(I/Y) − ln(n + g + δ)" in md
    assert "Augmented" in tex and "Non-exporters" in tex
    assert "\\_" not in tex  # no escaped identifier anywhere in the LaTeX


def test_unknown_label_key_is_refused(demo_dir):
    spec = _labelled_spec(demo_dir, '\n[labels]\nequations = { with_schoolin = "A" }\n')
    with pytest.raises(InputError) as err:
        steadyfit.load_spec(spec)
    assert "labels.equations" in str(err.value) and "with_schooling" in str(err.value)


def test_combined_table_shows_each_coefficient_once(demo_findings):
    for suffix, title, results in families(demo_findings):
        table = combined_table(demo_findings, results, suffix, title)
        assert len(table.columns) == 2 * len(results)
        r = results[0]
        cells = {row.label: row.cells for row in table.rows}
        # the unrestricted slope sits under the first column, the restricted one beside it
        b = r.unrestricted
        first = cells[b.labels[1]][0]
        assert first.value == pytest.approx(float(b.coef[1]))
        restricted_label = r.restricted.labels[-1]
        assert cells[restricted_label][1].value == pytest.approx(float(r.restricted.coef[-1]))
        assert cells[restricted_label][0].kind == "empty"
        assert sum(lab == b.labels[1] for lab in cells) == 1


def test_conclusion_counts_match_the_results(demo_findings):
    level = 1 - demo_findings.settings.confidence
    tests = [r.f_test for r in demo_findings.results if r.f_test is not None]
    rejected = sum(bool(t.rejects(level)) for t in tests)
    inside = sum(v.band_status == "inside" for r in demo_findings.results for v in r.shares)
    sentence = conclusion(demo_findings)
    assert f"rejected at the 5% level in {rejected} of {len(tests)} tests" in sentence
    assert f"{inside} lie inside" in sentence
    assert sentence.count(".") >= 1 and "\n" not in sentence


def test_python_surface(demo_findings):
    names = dir(steadyfit)
    for name in ("run", "load_spec", "write_run", "Findings", "Estimate", "compare_runs",
                 "__version__"):
        assert name in names
    assert len(repr(demo_findings)) < 300
    for r in demo_findings.results:
        assert len(repr(r)) < 400 and "\n" not in repr(r)
        assert len(repr(r.unrestricted)) < 200
        for v in r.shares:
            assert len(repr(v)) < 200
    e = demo_findings.result("with_schooling", "all").share("alpha").estimate
    assert e.low < e.value < e.high and e.se > 0


def test_version_option(tmp_path):
    proc = _cli("--version", cwd=tmp_path)
    assert proc.returncode == 0 and proc.stdout.startswith("steadyfit ")
    assert proc.stdout.split()[1] == steadyfit.__version__


def test_quantities_named_as_printed(demo_dir):
    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text() + '\n[[target]]\nequation = "convergence"\n'
                    'sample = "no_resource_exporters"\nquantity = "lambda"\nvalue = 0.0253\n'
                    'tolerance = 0.001\nsource = "the demo itself (invented)"\n',
                    encoding="utf-8")
    findings = steadyfit.run(spec)
    (card,) = findings.scorecard
    assert card.quantity == "lam" and card.met


def test_braces_quote_odd_column_names_and_backticks_still_work(demo_dir):
    import pandas as pd

    csv = demo_dir / "demo_economies.csv"
    frame = pd.read_csv(csv)
    frame["resource exporter"] = frame["resource_exporter"]
    frame.to_csv(csv, index=False)
    spec = demo_dir / "demo.toml"
    base = spec.read_text()
    spec.write_text(base.replace('"resource_exporter == 0"', '"{resource exporter} == 0"'))
    new = steadyfit.run(spec)
    assert not any("backticks" in w for w in new.warnings)
    spec.write_text(base.replace('"resource_exporter == 0"', '"`resource exporter` == 0"'))
    old = steadyfit.run(spec)
    assert any("backticks" in w and "{column name}" in w for w in old.warnings)
    assert [r.nobs for r in new.results] == [r.nobs for r in old.results]


def test_renamed_report_key_still_works_with_a_notice(demo_dir):
    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text().replace("[report]", "[report]\nstars = true", 1)
                    if "[report]" in spec.read_text() else
                    spec.read_text() + "\n[report]\nstars = true\n")
    loaded = steadyfit.load_spec(spec)
    assert loaded.body.report.significance_marks is True
    assert any("significance_marks" in n for n in loaded.notices)


BORROWED = ("s.e. of regression", "chi2(", "b[", "***", '"nobs"', '"df_resid"', '"ssr"')


def test_none_of_the_borrowed_labels_remains(demo_findings, tmp_path):
    folder = steadyfit.write_run(demo_findings, tmp_path / "runs")
    for path in folder.rglob("*"):
        if path.suffix not in (".html", ".md", ".tex", ".json", ".txt"):
            continue
        text = path.read_text(encoding="utf-8")
        if path.suffix == ".html":
            text = re.sub(r"<svg.*?</svg>", "", text, flags=re.S)  # figure internals
        for label in BORROWED:
            assert label not in text, (path.name, label)
    shown = render_text(demo_findings)
    assert not any(label in shown for label in BORROWED)


def test_compare_fits_the_terminal_width(demo_dir, tmp_path):
    spec = demo_dir / "demo.toml"
    runs = tmp_path / "runs"
    first = steadyfit.write_run(steadyfit.run(spec), runs)
    text = spec.read_text()
    assert "g_plus_delta = 0.05" in text
    spec.write_text(text.replace("g_plus_delta = 0.05", "g_plus_delta = 0.07"))
    second = steadyfit.write_run(steadyfit.run(spec), runs)
    for width in (80, 100):
        proc = _cli("compare", first, second, cwd=tmp_path, env={"COLUMNS": str(width)})
        assert proc.returncode == 0, proc.stderr
        assert "verdict" in proc.stdout and "g_plus_delta" in proc.stdout
        assert max(len(line) for line in proc.stdout.splitlines()) <= width
