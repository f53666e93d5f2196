"""A lean run at every size: economies listed once per sample, nothing per economy above the
listing limit, and the digest that stands in for a list.

The limit is lowered here (to 20 economies) so the demo behaves as a run on a large table
does; the digests are checked against hashlib over the ids pandas selects from the file.
"""

from __future__ import annotations

import hashlib
import json

import pandas as pd
import pytest

import steadyfit
import steadyfit.analysis
from steadyfit.demo import write_demo
from steadyfit.report.record import economy_digest, results_schema


def _plain_demo(folder):
    spec = write_demo(folder)
    spec.write_text(spec.read_text().split("# Robustness")[0] + '\n[report]\nfigures = "none"\n')
    return spec


def _members_from_file(spec) -> dict[str, list[str]]:
    """Each demo sample's economies, selected from the CSV by pandas alone."""
    d = pd.read_csv(spec.parent / "demo_economies.csv", dtype={"economy": str})
    return {
        "all": list(d.economy),
        "no_resource_exporters": list(d.economy[d.resource_exporter == 0]),
        "large_north_coast": list(d.economy[(d.population_start >= 5e6)
                                            & d.region.isin(["north", "coast"])]),
    }


def _sha(ids: list[str]) -> str:
    return hashlib.sha256("\n".join(sorted(ids)).encode("utf-8")).hexdigest()


@pytest.fixture(scope="module")
def demo_spec(tmp_path_factory):
    return _plain_demo(tmp_path_factory.mktemp("lean"))


def test_each_sample_lists_its_economies_once(demo_spec, tmp_path):
    found = steadyfit.run(demo_spec)
    folder = steadyfit.write_run(found, tmp_path / "o")
    record = json.loads((folder / "results.json").read_text())
    expected = _members_from_file(demo_spec)
    for x in record["samples"]:
        assert x["members"] == expected[x["name"]]  # in the file's order
        assert x["members_sha256"] == _sha(expected[x["name"]]) and x["members_reason"] is None
    for r in record["results"]:  # no result repeats a list: its sample's less its drops
        assert "economies" not in r
        dropped = {d["economy"] for d in r["dropped"]}
        used = [e for e in expected[r["sample"]] if e not in dropped]
        assert used == list(found.result(r["equation"], r["sample"]).economies)
    html = (folder / "report.html").read_text()
    assert html.count("Economies in sample") == len(record["samples"])
    assert (folder / "data" / "analysis.csv").exists()


def test_above_the_limit_nothing_is_listed_per_economy(demo_spec, tmp_path, monkeypatch):
    jsonschema = pytest.importorskip("jsonschema")
    monkeypatch.setattr(steadyfit.analysis, "LISTED_ECONOMIES", 20)
    found = steadyfit.run(demo_spec)
    folder = steadyfit.write_run(found, tmp_path / "o")
    record = json.loads((folder / "results.json").read_text())
    jsonschema.validate(record, results_schema())
    expected = _members_from_file(demo_spec)
    for x in record["samples"]:
        assert x["members"] is None
        assert "more than the 20 a run folder lists" in x["members_reason"]
        assert x["members_sha256"] == _sha(expected[x["name"]])
        assert x["economies"] == len(expected[x["name"]])
    assert not (folder / "data" / "analysis.csv").exists()
    assert (folder / "data" / "codebook.csv").exists()
    readme = (folder / "README.md").read_text()
    assert "`data/analysis.csv` is not written" in readme
    assert "steadyfit.build_analysis(steadyfit.plan(SPEC)).frame" in readme
    html = (folder / "report.html").read_text()
    assert "are not listed one by one" in html
    assert expected["large_north_coast"][0] not in html.split('id="data"')[1].split("</section>")[0]


def test_the_library_gives_the_analysis_data_the_folder_leaves_out(demo_spec, monkeypatch):
    monkeypatch.setattr(steadyfit.analysis, "LISTED_ECONOMIES", 20)
    data = steadyfit.build_analysis(steadyfit.plan(demo_spec))
    assert len(data.frame) == 90 and list(data.frame["economy"]) == _members_from_file(
        demo_spec)["all"]


def test_compare_tells_unlisted_samples_apart_by_their_digest(tmp_path, monkeypatch):
    monkeypatch.setattr(steadyfit.analysis, "LISTED_ECONOMIES", 20)
    spec = _plain_demo(tmp_path / "a")
    a = steadyfit.write_run(steadyfit.run(spec), tmp_path / "ra")
    same = steadyfit.compare_runs(a, steadyfit.write_run(steadyfit.run(spec), tmp_path / "rb"))
    assert same.economies == ()
    spec.write_text(spec.read_text().replace("population_start >= 5e6", "population_start >= 6e6"))
    b = steadyfit.write_run(steadyfit.run(spec), tmp_path / "rc")
    changed = steadyfit.compare_runs(a, b)
    assert [cell for cell, _, _ in changed.economies] == ["with_schooling / large_north_coast"]
    from steadyfit.compare import comparison_tables
    from steadyfit.report.text import render_table_text

    text = "\n".join(render_table_text(t, width=200) for t in comparison_tables(changed))
    assert "told apart by their SHA-256 digest" in text


def test_the_digest_ignores_order_and_never_joins_everything_at_once():
    ids = [f"E{i:06d}" for i in range(120_000)]
    assert economy_digest(ids) == economy_digest(ids[::-1]) == _sha(ids)
    assert economy_digest(pd.Index(ids[:3])) == _sha(ids[:3])
