"""Run folders: contents, JSON record, determinism, atomic writes, renderers."""

from __future__ import annotations

import json

import pytest

import steadyfit
from steadyfit.report.markdown import render_markdown, render_table_md
from steadyfit.report.runfolder import write_run
from steadyfit.report.tables import Cell, Row, Table, all_tables, format_cell
from steadyfit.report.text import render_table_text


@pytest.fixture(scope="module")
def demo_findings(tmp_path_factory):
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("demo")
    return steadyfit.run(write_demo(folder))


def test_run_folder_contents(demo_findings, tmp_path):
    folder = write_run(demo_findings, tmp_path, command=["steadyfit", "run", "x"])
    assert folder.parent == tmp_path / "demo"
    names = {p.name for p in folder.iterdir()}
    assert names == {"report.html", "summary.md", "results.json", "tables", "figures", "inputs",
                     "data", "README.md", "references.txt", "references.bib"}
    assert {p.name for p in (folder / "inputs").iterdir()} == {"demo.toml", "demo_economies.csv"}
    assert (folder / "tables" / "implied_shares.md").exists()
    assert (folder / "tables" / "regressions.tex").exists()
    assert (folder / "figures" / "implied_shares.svg").exists()
    assert len(list((folder / "figures").glob("fit_*.svg"))) == len(demo_findings.results)
    assert not [p for p in folder.parent.iterdir() if p.name.startswith(".partial")]


def test_results_json_holds_the_numbers_and_provenance(demo_findings, tmp_path):
    record = json.loads((write_run(demo_findings, tmp_path) / "results.json").read_text())
    assert record["format"] == "steadyfit-results"
    prov = record["provenance"]
    assert len(prov["spec_sha256"]) == 64 and len(prov["data_sha256"]) == 64
    assert {"numpy", "statsmodels", "python"} <= set(prov["versions"])
    res = {(r["equation"], r["sample"]): r for r in record["results"]}
    r = res[("with_schooling", "no_resource_exporters")]
    ours = demo_findings.result("with_schooling", "no_resource_exporters")
    alpha = next(s for s in r["implied_shares"] if s["name"] == "alpha")
    assert alpha["value"] == ours.share("alpha").estimate.value
    assert r["restriction_tests"]["f"]["p"] == ours.f_test.pvalue
    sample = next(x for x in record["samples"] if x["name"] == "no_resource_exporters")
    dropped = {d["economy"] for d in r["dropped"]}
    assert r["observations"] == 80
    assert [e for e in sample["members"] if e not in dropped] == list(ours.economies)
    assert [c["name"] for c in r["unrestricted"]["coefficients"]] == [
        "const", "ln_sk", "ln_ngd", "ln_sh"]


def test_same_spec_twice_differs_only_in_run_id_and_time(demo_findings, tmp_path, demo_dir):
    a = write_run(steadyfit.run(demo_dir / "demo.toml"), tmp_path, command=["c"])
    b = write_run(steadyfit.run(demo_dir / "demo.toml"), tmp_path, command=["c"])
    assert a != b  # never overwritten
    ra, rb = (json.loads((p / "results.json").read_text()) for p in (a, b))
    assert set(ra["run"]) == {"id", "created", "command", "folder"}
    ra.pop("run"), rb.pop("run")
    assert ra == rb


def test_failed_write_leaves_nothing(demo_findings, tmp_path, monkeypatch):
    import steadyfit.report.runfolder as rf

    def boom(*_a, **_k):
        raise OSError("disk full")

    monkeypatch.setattr(rf, "to_record", boom)
    with pytest.raises(OSError):
        write_run(demo_findings, tmp_path)
    assert list(tmp_path.iterdir()) == []


def test_summary_puts_verdicts_first(demo_findings):
    md = render_markdown(demo_findings, "RUN")
    assert md.index("## Verdicts") < md.index("### Implied capital shares")
    assert md.index("### Implied capital shares") < md.index("## Caveats")
    assert "g + δ is an assumption" in md
    assert "physical only / all (90 economies)" in md


def test_every_table_renders(demo_findings):
    for table in all_tables(demo_findings):
        assert table.title in render_table_md(table)
        assert table.title in render_table_text(table)


def test_table_model_formats():
    assert format_cell(Cell("number", 1.23456, 0.01234)) == ("1.235", "(0.012)")
    assert format_cell(Cell("pvalue", 0.0001)) == ("<0.001", None)
    assert format_cell(Cell("interval", (0.1, 0.25))) == ("[0.100, 0.250]", None)
    assert format_cell(Cell("number", -0.0001)) == ("0.000", None)
    assert format_cell(Cell("integer", 98)) == ("98", None)


def test_markdown_escapes_data_strings():
    t = Table("k", "T", "", (("a|b",),), (Row("<script>x</script>", (Cell("text", "p<q"),)),))
    md = render_table_md(t)
    assert "<script>" not in md and "a\\|b" in md and "p&lt;q" in md


def test_notebook_views(demo_findings):
    html = demo_findings._repr_html_()
    assert html.startswith("<div>") and "Implied capital shares" in html
    assert "Key results" in str(demo_findings)


def test_tables_render_in_notebooks(demo_findings):
    from steadyfit.report.tables import compact_table

    t = compact_table(demo_findings)
    assert t._repr_html_().startswith("<figure class='table'")
    assert str(t).startswith("Key results")


@pytest.mark.parametrize("choice, expected", [("none", set()), ("key", {"implied_shares"})])
def test_figure_choice(demo_dir, tmp_path, choice, expected):
    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text() + f'\n[report]\nfigures = "{choice}"\n')
    folder = write_run(steadyfit.run(spec), tmp_path)
    stems = {p.stem for p in (folder / "figures").iterdir()}
    assert {s for s in stems if not s.startswith("convergence_")} == expected
    assert any(s.startswith("convergence_") for s in stems) == (choice == "key")


def test_findings_as_a_data_frame(demo_findings):
    frame = demo_findings.to_frame()
    assert frame.loc[("with_schooling", "all"), "alpha"] == (
        demo_findings.result("with_schooling", "all").share("alpha").estimate.value)
    assert frame.loc[("convergence", "no_resource_exporters"), "lam"] > 0
    assert len(frame) == len(demo_findings.results)


def test_figure_files_follow_the_formats_setting(demo_dir, tmp_path):
    import steadyfit

    spec = demo_dir / "demo.toml"
    base = spec.read_text()
    assert not list((write_run(steadyfit.run(spec), tmp_path / "svg") / "figures").glob("*.pdf"))
    spec.write_text(base + '\n[report]\nfigure_formats = ["svg", "pdf"]\n')
    both = write_run(steadyfit.run(spec), tmp_path / "a")
    svg = {p.stem for p in (both / "figures").glob("*.svg")}
    assert svg and svg == {p.stem for p in (both / "figures").glob("*.pdf")}
    assert all(p.read_bytes().startswith(b"%PDF") for p in (both / "figures").glob("*.pdf"))
    spec.write_text(base + '\n[report]\nfigure_formats = ["pdf"]\n')
    only_pdf = write_run(steadyfit.run(spec), tmp_path / "b")
    assert not list((only_pdf / "figures").glob("*.svg"))
    assert {p.stem for p in (only_pdf / "figures").glob("*.pdf")} == svg
    assert "<svg" in (only_pdf / "report.html").read_text()  # the report still inlines them
