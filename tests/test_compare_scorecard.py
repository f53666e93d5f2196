"""Replication targets (scorecard, --strict) and run comparison, on runs that differ in
known ways."""

from __future__ import annotations

import json
import re
import subprocess
import sys

import pandas as pd
import pytest

import steadyfit
from steadyfit.compare import compare_runs, render_comparison_html, render_comparison_text
from steadyfit.errors import InputError
from steadyfit.report.runfolder import write_run


def cli(*args):
    return subprocess.run([sys.executable, "-m", "steadyfit", *map(str, args)],
                          capture_output=True, text=True, timeout=180)


def _with_targets(demo_dir, targets: str):
    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text() + targets)
    return spec


def test_scorecard_met_and_missed(demo_dir):
    """Targets taken from the truth the demo was generated with (steadyfit.demo)."""
    from steadyfit.demo import TRUE_ALPHA

    spec = _with_targets(demo_dir, f"""
[[target]]
equation = "with_schooling"
sample = "no_resource_exporters"
quantity = "alpha"
value = {TRUE_ALPHA}
tolerance = 0.05
source = "generator truth"

[[target]]
equation = "physical_only"
sample = "all"
quantity = "nobs"
value = 91
tolerance = 0.5
source = "a wrong count"
""")
    f = steadyfit.run(spec)
    met, missed = f.scorecard
    assert met.met and met.ours == f.result("with_schooling",
                                            "no_resource_exporters").share("alpha").estimate.value
    assert not missed.met and missed.ours == 90 and missed.difference == -1
    assert not f.targets_met


def test_strict_exit_status(demo_dir, tmp_path):
    spec = _with_targets(demo_dir, """
[[target]]
equation = "physical_only"
sample = "all"
quantity = "nobs"
value = 91
tolerance = 0.5
""")
    loose = cli("run", spec, "--out", tmp_path / "a", "--quiet")
    assert loose.returncode == 0 and "1 of 1 replication targets missed" in loose.stderr
    strict = cli("run", spec, "--out", tmp_path / "b", "--quiet", "--strict")
    assert strict.returncode == 3
    (run,) = (tmp_path / "b" / "demo").iterdir()  # the report is still written
    record = json.loads((run / "results.json").read_text())
    assert record["targets_met"] is False and record["scorecard"][0]["met"] is False
    assert "Some targets are missed." in (run / "report.html").read_text()


@pytest.mark.parametrize("block, fragment", [
    ('equation = "physical_only"\nsample = "all"\nquantity = "alpa"',
     "target[1].quantity: 'alpa' is not a quantity of equation 'physical_only'; did you mean "
     "'alpha'?"),
    ('equation = "physical_only"\nsample = "large_north_coast"\nquantity = "alpha"',
     "does not run on sample 'large_north_coast'"),
    ('equation = "physical"\nsample = "all"\nquantity = "alpha"', "unknown equation"),
])
def test_bad_targets_are_input_errors(demo_dir, block, fragment):
    spec = _with_targets(demo_dir, f"\n[[target]]\n{block}\nvalue = 1\ntolerance = 0.1\n")
    with pytest.raises(InputError) as exc:
        steadyfit.load_spec(spec)
    assert fragment in str(exc.value)


@pytest.fixture(scope="module")
def two_runs(tmp_path_factory):
    """The demo spec run with g + delta = 0.05 and with 0.06."""
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("cmp")
    spec = write_demo(folder)
    spec.write_text(spec.read_text() + '\n[report]\nfigures = "none"\n')
    a = write_run(steadyfit.run(spec), folder / "runs")
    spec.write_text(spec.read_text().replace("g_plus_delta = 0.05", "g_plus_delta = 0.06"))
    b = write_run(steadyfit.run(spec), folder / "runs")
    return folder, a, b


def test_compare_lists_what_g_plus_delta_moves_and_nothing_else(two_runs):
    _, a, b = two_runs
    c = compare_runs(a, b)
    assert c.settings == (("g_plus_delta", 0.05, 0.06),)
    assert c.inputs == () and c.only_in_a == () and c.only_in_b == () and c.economies == ()
    changed = {(ch.equation, ch.sample, ch.quantity) for ch in c.changes}
    assert ("physical_only", "all", "coef:ln_ngd") in changed
    assert ("with_schooling", "all", "alpha") in changed
    assert not [q for q in changed if q[2] == "observations"]  # the samples did not change
    # every listed change is real, and every real change is listed
    ra, rb = (json.loads((p / "results.json").read_text()) for p in (a, b))
    real = {(x["equation"], x["sample"], k)
            for x, y in zip(ra["results"], rb["results"], strict=True)
            for k in x["quantities"]
            if (x["quantities"][k] is None) != (y["quantities"][k] is None)
            or (x["quantities"][k] is not None
                and abs(x["quantities"][k] - y["quantities"][k]) > 1e-9)}
    assert {q for q in changed if " vs " not in q[0]} == real


def test_compare_of_identical_runs_is_empty(two_runs, tmp_path):
    folder, a, _ = two_runs
    spec = folder / "demo.toml"
    spec.write_text(spec.read_text().replace("g_plus_delta = 0.06", "g_plus_delta = 0.05"))
    again = write_run(steadyfit.run(spec), tmp_path)
    c = compare_runs(a, again)
    assert c.identical and c.verdicts == ()
    text = render_comparison_text(c)
    assert "Nothing changed" in text and "no quantity differs by more than 1e-09" in text


def test_compare_sees_a_new_data_vintage(two_runs, tmp_path):
    """Dropping one economy from the data: the hash, the samples and the numbers move."""
    from steadyfit.demo import write_demo

    _, a, _ = two_runs
    spec = write_demo(tmp_path / "v2")
    csv = tmp_path / "v2" / "demo_economies.csv"
    d = pd.read_csv(csv)
    gone = d.economy.iloc[0]
    d.iloc[1:].to_csv(csv, index=False)
    b = write_run(steadyfit.run(spec), tmp_path / "runs")
    c = compare_runs(a, b)
    assert {k for k, _, _ in c.inputs} == {"data_sha256", "data_rows"}
    cells = {cell: removed for cell, _, removed in c.economies}
    assert cells["physical_only / all"] == (gone,)
    assert any(ch.quantity == "observations" for ch in c.changes)


def test_compare_command_line_and_html(two_runs, tmp_path):
    _, a, b = two_runs
    page = tmp_path / "cmp.html"
    proc = cli("compare", a, b, "--html", page)
    assert proc.returncode == 0, proc.stderr
    assert "g_plus_delta" in proc.stdout and "coef:ln_ngd" in proc.stdout
    html = page.read_text()
    assert html.startswith("<!DOCTYPE html>") and "coef:ln_ngd" in html
    c = compare_runs(a, b)
    assert render_comparison_html(c) == html
    # verdicts first, then settings and inputs, then quantities; the count line on top
    assert c.verdicts and c.count_line() in proc.stdout and c.count_line() in html
    for out in (proc.stdout, html):
        assert (out.index("Verdicts that changed") < out.index("g_plus_delta")
                < out.index("Quantities that changed"))


def test_compare_bad_input(tmp_path):
    proc = cli("compare", tmp_path, tmp_path)
    assert proc.returncode == 2 and "no results.json" in proc.stderr
    (tmp_path / "results.json").write_text("{}")
    proc = cli("compare", tmp_path, tmp_path)
    assert proc.returncode == 2 and "not a steadyfit results.json" in proc.stderr


def test_compare_covers_the_consistency_checks(two_runs):
    """The demo's levels-versus-growth comparison moves with g + delta too."""
    _, a, b = two_runs
    changed = {(ch.equation, ch.quantity) for ch in compare_runs(a, b).changes}
    assert ("with_schooling vs convergence", "lam_from_levels") in changed


@pytest.fixture(scope="module")
def verdict_runs(tmp_path_factory):
    """Run A: the demo with a target that is met. Run B: g + delta 0.06, confidence 0.6
    (tests at the 40% level), a narrow alpha band and the target missed."""
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("verdicts")
    spec = write_demo(folder)
    target = ('\n[report]\nfigures = "none"\n\n[[target]]\nequation = "physical_only"\n'
              'sample = "all"\nquantity = "observations"\nvalue = 90\ntolerance = 0.5\n')
    spec.write_text(spec.read_text() + target)
    fa = steadyfit.run(spec)
    spec.write_text(spec.read_text().replace("g_plus_delta = 0.05", "g_plus_delta = 0.06")
                    .replace("confidence = 0.95", "confidence = 0.6")
                    .replace("alpha = [0.25, 0.40]", "alpha = [0.30, 0.33]")
                    .replace("value = 90", "value = 91"))
    fb = steadyfit.run(spec)
    return fa, fb, write_run(fa, folder / "runs"), write_run(fb, folder / "runs")


def _outcomes(f):
    """Each verdict's outcome, straight from the findings."""
    level = 1 - f.settings.confidence
    word = {True: "rejected", False: "not rejected", None: "not available"}
    out = {}
    for r in f.results:
        if r.f_test is not None:
            out[(r.equation, r.sample, "restriction (F test)")] = word[r.f_test.rejects(level)]
        if r.bootstrap is not None and r.bootstrap.restriction is not None:
            out[(r.equation, r.sample, "restriction (bootstrap)")] = word[
                r.bootstrap.restriction.rejects(level)]
        for v in r.shares:
            if v.band is not None:
                out[(r.equation, r.sample, f"{v.name} against its band")] = (
                    v.band_status or "not available")
            if v.anchor is not None:
                out[(r.equation, r.sample, f"{v.name} against the measured capital share")] = {
                    True: "differ", False: "do not differ",
                    None: "not available"}[v.anchor.test.rejects(level)]
    for c in f.consistency:
        out[(f"{c.levels_equation} vs {c.growth_equation}", c.sample,
             f"{c.quantity}, levels against growth")] = {
            True: "differ", False: "do not differ", None: "not available"}[c.test.rejects(level)]
    for t in f.scorecard:
        out[(t.equation, t.sample, f"target {t.quantity}")] = "met" if t.met else "missed"
    return out


def test_compare_lists_every_changed_verdict(verdict_runs):
    fa, fb, a, b = verdict_runs
    c = compare_runs(a, b)
    oa, ob = _outcomes(fa), _outcomes(fb)
    real = {k for k in oa if oa[k] != ob[k]}
    listed = {(v.equation, v.sample, v.what): v for v in c.verdicts}
    assert set(listed) == real
    for key, v in listed.items():
        assert v.a.startswith(oa[key]) and v.b.startswith(ob[key])
        assert str(v) == f"{key[0]} / {key[1]}: {key[2]}: {v.a} -> {v.b}"
    kinds = {what.split(" ")[-1] for _, _, what in real}
    assert {"test)", "band", "growth"} <= kinds and ("physical_only", "all",
                                                     "target observations") in real
    assert listed[("physical_only", "all", "target observations")].b == "missed"
    rejected = [v for v in c.verdicts if v.what == "restriction (F test)"]
    assert rejected and all(v.b.endswith("at 40%") and v.a.endswith("at 5%") for v in rejected)
    # the same outcome at another level is not a change
    unchanged = {k for k in oa if oa[k] == ob[k] and k[2] == "restriction (F test)"}
    assert unchanged and not unchanged & set(listed)
    assert {k for k, _, _ in c.settings} == {"g_plus_delta", "confidence", "bands.alpha"}
    assert c.count_line() == (f"{len(real)} verdicts changed, 3 settings/inputs, "
                              f"{len(c.changes)} quantities")


def test_compare_verdicts_only(verdict_runs, tmp_path, capsys):
    from steadyfit.cli import main

    *_, a, b = verdict_runs
    page = tmp_path / "v.html"
    assert main(["compare", str(a), str(b), "--verdicts-only", "--html", str(page)]) == 0
    stdout = capsys.readouterr().out
    c = compare_runs(a, b)
    assert c.count_line() in stdout
    # each verdict is one line, wrapped to the width with an indented continuation
    section = stdout.split("Verdicts that changed\n", 1)[1].split("\n\n", 1)[0]
    unwrapped = re.sub(r"\n {4}", " ", section)
    assert [ln.strip() for ln in unwrapped.splitlines()] == [str(v) for v in c.verdicts]
    html = page.read_text()
    for out in (stdout, html):
        assert "Quantities that changed" not in out and "coef:ln_ngd" not in out
        assert "confidence" not in out
    assert "Verdicts that changed" in html and "target observations" in html
    assert main(["compare", str(a), str(b)]) == 0
    full = capsys.readouterr().out
    assert "Quantities that changed" in full and "confidence" in full


def test_compare_reads_a_version_2_record(verdict_runs, tmp_path):
    """A version-2 record written by hand from a version-3 one: nothing changes but what
    version 2 did not record."""
    from test_results_record import _as_version_2

    *_, a, _ = verdict_runs
    record = json.loads((a / "results.json").read_text())
    old = tmp_path / "old" / "run"
    old.mkdir(parents=True)
    (old / "results.json").write_text(json.dumps(_as_version_2(record)))
    assert '"nobs"' in (old / "results.json").read_text()
    for x, y in ((old, a), (a, old)):
        c = compare_runs(x, y)
        assert c.changes == () and c.verdicts == () and c.inputs == () and c.economies == ()
        assert {k for k, _, _ in c.settings} <= {"figure_formats"}


@pytest.mark.parametrize("version, words", [
    (5, "has format_version 5 (written by a newer steadyfit); this steadyfit reads format "
        "versions 2, 3 and 4"),
    (1, "has format_version 1; this steadyfit reads format versions 2, 3 and 4"),
])
def test_compare_refuses_other_format_versions(two_runs, tmp_path, capsys, version, words):
    from steadyfit.cli import main

    _, a, _ = two_runs
    record = json.loads((a / "results.json").read_text())
    (tmp_path / "results.json").write_text(json.dumps(dict(record, format_version=version)))
    assert main(["compare", str(a), str(tmp_path)]) == 2
    assert capsys.readouterr().err.strip() == (
        f"steadyfit: error: '{tmp_path / 'results.json'}' {words}")
    with pytest.raises(InputError):
        compare_runs(tmp_path, a)
