"""Specification sweeps: the grid's counts and labels, every specification against a
statsmodels refit, the run's own specification equal to the run, and the refusals.

References: statsmodels OLS on the specification's rows with its value of g + delta
(through steadyfit's one-fit path) and statsmodels' Wald test (chi-square form).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

import steadyfit
from steadyfit.demo import write_demo
from steadyfit.equations import get_form
from steadyfit.estimators import fit_ols
from steadyfit.inference import implied_parameters

SWEEP = """
[sweep]
equations = ["with_schooling"]
samples = ["all", "no_resource_exporters"]
g_plus_delta = [0.03, 0.05, 0.08]
covariance = ["classical", "HC1"]
drop_each = "region"
"""


@pytest.fixture(scope="module")
def swept(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sweep")
    spec = write_demo(folder)
    text = spec.read_text().split("# Robustness")[0]
    spec.write_text(text + SWEEP)
    return folder, spec, steadyfit.run(spec)


def test_the_grid_has_every_combination_once(swept):
    folder, _, found = swept
    rows = found.sweep.rows
    data = pd.read_csv(folder / "demo_economies.csv")
    regions = sorted(data.region.unique())
    assert len(rows) == 2 * 3 * 2 * (1 + len(regions))
    keys = {(r.sample, r.g_plus_delta, r.covariance, r.dropped) for r in rows}
    assert len(keys) == len(rows)
    assert {r.dropped for r in rows} == {None, *regions}
    assert {r.equation for r in rows} == {"with_schooling"}


def _refit(data: pd.DataFrame, r, form):
    """The specification fitted from the data file alone (pandas and statsmodels)."""
    keep = data if r.sample == "all" else data[data.resource_exporter == 0]
    if r.dropped is not None:
        keep = keep[keep.region != r.dropped]
    sk = np.log(keep.investment_share / 100)
    sh = np.log(keep.secondary_enrolment / 100)
    ngd = np.log(keep.workforce_growth / 100 + r.g_plus_delta)
    y = np.log(keep.output_per_worker_end).to_numpy()
    x_u = np.column_stack([np.ones(len(keep)), sk, ngd, sh])
    x_r = np.column_stack([np.ones(len(keep)), sk - ngd, sh - ngd])
    names = ("c", "k", "h")
    res = fit_ols(y, x_r, names, names, r.covariance)
    shares = {v.estimate.name: v.estimate
              for v in implied_parameters(form, res, 0.95, {}, {})[0]}
    cov_type = "nonrobust" if r.covariance == "classical" else r.covariance
    wald = sm.OLS(y, x_u).fit(cov_type=cov_type).wald_test(
        np.array([0.0, *form.restriction]), scalar=True, use_f=False)
    return shares, float(wald.pvalue), len(keep)


def test_every_specification_matches_a_refit_from_the_file(swept):
    folder, _, found = swept
    data = pd.read_csv(folder / "demo_economies.csv")
    form = get_form("levels:physical+human_rate")
    for r in found.sweep.rows:
        shares, p, n = _refit(data, r, form)
        assert r.nobs == n
        for q in ("alpha", "beta"):
            assert r.values[q] == pytest.approx(shares[q].value, abs=1e-10)
            assert r.intervals[q] == pytest.approx((shares[q].low, shares[q].high), abs=1e-9)
        assert r.restriction_p == pytest.approx(p, rel=1e-7)


def test_the_runs_own_specification_equals_the_run(swept):
    _, _, found = swept
    for sample in ("all", "no_resource_exporters"):
        res = found.result("with_schooling", sample)
        row = next(r for r in found.sweep.rows if r.sample == sample and r.dropped is None
                   and r.g_plus_delta == 0.05 and r.covariance == "HC1")
        assert row.values["alpha"] == pytest.approx(res.share("alpha").estimate.value,
                                                    abs=1e-12)
        assert row.restriction_p == pytest.approx(res.wald_test.pvalue, rel=1e-9)


def test_the_run_folder_shows_the_sweep(swept, tmp_path):
    jsonschema = pytest.importorskip("jsonschema")
    from steadyfit.report.record import results_schema

    _, _, found = swept
    folder = steadyfit.write_run(found, tmp_path / "o")
    record = json.loads((folder / "results.json").read_text())
    jsonschema.validate(record, results_schema())
    assert len(record["sweep"]["specifications"]) == len(found.sweep.rows)
    assert (folder / "figures" / "sweep_with_schooling.svg").exists()
    for table in ("sweep", "g_plus_delta_sensitivity"):
        assert (folder / "tables" / f"{table}.md").exists()
    summary = (folder / "summary.md").read_text()
    assert "specifications of the sweep" in summary
    n_in_band, counted = found.sweep.share_overlapping("with_schooling", "alpha")
    assert f"overlaps its band in {n_in_band} of {counted}" in summary
    terminal = steadyfit.render_text(found, width=200).split("Robustness:")[1]
    assert f"Over the {len(found.sweep)} specifications of the sweep" in terminal
    assert f"overlaps its band in {n_in_band} of {counted}" in terminal


def test_too_few_economies_after_dropping_a_group_is_said(tmp_path):
    spec = write_demo(tmp_path / "d")
    text = spec.read_text().split("# Robustness")[0]
    spec.write_text(text + '\n[sweep]\nequations = ["with_schooling"]\n'
                    'samples = ["large_north_coast"]\ndrop_each = "resource_exporter"\n')
    found = steadyfit.run(spec)
    rows = {r.dropped: r for r in found.sweep.rows}
    # without the non-exporters only the few large exporters of the north and coast remain
    assert rows["0"].nobs < 6 and "fewer than the 6" in rows["0"].reason
    assert all(math.isnan(v) for v in rows["0"].values.values())
    assert rows["0"].restriction_p is None
    assert rows[None].reason is None and rows["1"].reason is None


@pytest.mark.parametrize("text, key, words", [
    ('samples = ["nope"]', "sweep.samples", "unknown sample 'nope'"),
    ("g_plus_delta = [1.5]", "sweep.g_plus_delta", "between 0 and 1"),
    ('covariance = ["cluster"]', "sweep.covariance", "inference.cluster"),
    ('drop_each = "colour"', "sweep.drop_each", "no column 'colour'"),
])
def test_sweep_refusals_name_the_key(tmp_path, text, key, words):
    spec = write_demo(tmp_path / "d")
    spec.write_text(spec.read_text().split("# Robustness")[0] + f"\n[sweep]\n{text}\n")
    with pytest.raises(steadyfit.InputError) as err:
        steadyfit.run(spec)
    assert key in str(err.value) and words in str(err.value)


def test_check_refuses_a_missing_drop_column(tmp_path):
    spec = write_demo(tmp_path / "d")
    spec.write_text(spec.read_text().split("# Robustness")[0]
                    + '\n[sweep]\ndrop_each = "colour"\n')
    with pytest.raises(steadyfit.InputError, match="sweep.drop_each"):
        steadyfit.plan(spec)


def test_economies_without_a_group_are_never_a_group(tmp_path):
    spec = write_demo(tmp_path / "d")
    data = pd.read_csv(spec.parent / "demo_economies.csv")
    data.loc[:4, "region"] = np.nan
    data.to_csv(spec.parent / "demo_economies.csv", index=False)
    spec.write_text(spec.read_text().split("# Robustness")[0]
                    + '\n[sweep]\nequations = ["physical_only"]\ndrop_each = "region"\n')
    found = steadyfit.run(spec)
    assert "nan" not in {r.dropped for r in found.sweep.rows}


def test_a_g_plus_delta_that_makes_n_g_delta_negative_is_refused(tmp_path):
    spec = write_demo(tmp_path / "d")
    spec.write_text(spec.read_text().split("# Robustness")[0]
                    + '\n[sweep]\ng_plus_delta = [0.001]\n')
    data = pd.read_csv(spec.parent / "demo_economies.csv")
    data.loc[0, "workforce_growth"] = -0.5  # percent a year
    data.to_csv(spec.parent / "demo_economies.csv", index=False)
    with pytest.raises(steadyfit.InputError) as err:
        steadyfit.run(spec)
    assert "sweep.g_plus_delta" in str(err.value) and data.economy[0] in str(err.value)
