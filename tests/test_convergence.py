"""Growth form, speed of convergence, structural estimates and cross-equation consistency."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

import steadyfit
from conftest import simulated_data_section, write_spec
from steadyfit.calibrate import convergence_rate, half_life, income_ratio, required_share
from steadyfit.errors import EstimationError, InputError

# --- formulas: Mankiw, Romer and Weil (1992, QJE), p. 423 -------------------------------------

def test_worked_example_of_the_convergence_rate():
    """MRW (1992, QJE, p. 423): alpha = beta = 1/3 and n + g + delta = 0.06 give lambda = 0.02,
    a half-life of about 35 years; with beta = 0, lambda = 0.04."""
    lam = convergence_rate(1 / 3, 1 / 3, 0.06)
    assert lam == pytest.approx(0.02)
    assert half_life(lam) == pytest.approx(35, abs=0.5)
    assert convergence_rate(1 / 3, 0.0, 0.06) == pytest.approx(0.04)


def test_saving_gap_rules_of_thumb():
    """Common practice, no source: a fourfold saving gap with a = 1/3 gives a twofold income
    gap; with a = 2/3 it gives 16; and the share that turns 4 into 2 is 1/3."""
    assert income_ratio(1 / 3, 0.0, 4.0) == pytest.approx(2.0)
    assert income_ratio(2 / 3, 0.0, 4.0) == pytest.approx(16.0)
    assert required_share(2.0, 4.0).share == pytest.approx(1 / 3)
    with pytest.raises(ValueError):
        half_life(0.0)


# --- the classic data: structural estimates against the linear mapping -------------------------

def test_nonlinear_least_squares_matches_the_linear_mapping(mrw_findings):
    """NLS of (alpha, beta, lambda) agrees with the restricted linear fit mapped through the
    form to 1e-6, and its classical standard errors equal the delta method's (the model is a
    reparameterisation of the restricted regression)."""
    r = mrw_findings.result("augmented_growth", "non_oil")
    mapped = {v.estimate.name: v.estimate for v in r.shares} | {e.name: e for e in r.speed}
    assert r.nonlinear is not None
    for e in r.nonlinear.estimates:
        assert e.value == pytest.approx(mapped[e.name].value, abs=1e-6), e.name
        assert e.se == pytest.approx(mapped[e.name].se, rel=1e-4), e.name
    assert r.nonlinear.robust_covariance == "HC1"
    assert r.nonlinear.intercept == pytest.approx(r.restricted.coef[0], abs=1e-6)
    assert r.nonlinear.ssr == pytest.approx(r.restricted.ssr, rel=1e-9)


@pytest.mark.parametrize("equation", ["textbook", "augmented", "conditional",
                                      "augmented_growth"])
def test_minimum_distance_statistic_equals_the_wald_test(mrw_findings, equation):
    """With the inverse covariance of the slopes as weight, the minimum-distance statistic of a
    linear restriction is the Wald statistic (textbook result for linear restrictions)."""
    r = mrw_findings.result(equation, "non_oil")
    md = r.minimum_distance
    assert md is not None and md.overid.df == (1.0,)
    assert md.overid.statistic == pytest.approx(r.wald_test.statistic, rel=1e-6)
    assert md.overid.pvalue == pytest.approx(r.wald_test.pvalue, rel=1e-5)


def test_unconditional_convergence_is_absent_in_the_classic_data(mrw_findings):
    """MRW (1992, QJE) Table III, non-oil: income growth does not fall with initial income."""
    r = mrw_findings.result("unconditional", "non_oil")
    assert r.unrestricted.coef[1] > 0 and not r.steady_state
    assert "no convergence" in r.problem
    assert r.f_test is None and r.crosscheck is None and r.minimum_distance is None


def test_levels_and_growth_speeds_disagree_in_the_classic_data(mrw_findings):
    """MRW (1992) note that the levels estimates predict faster convergence than the growth
    regressions find; with schooling on the non-oil sample the gap is significant."""
    (check,) = [c for c in mrw_findings.consistency
                if c.quantity == "lam" and c.growth_equation == "augmented_growth"]
    assert check.levels_equation == "augmented"
    assert check.joint_covariance
    assert check.from_levels.value > check.from_growth.value
    assert check.test.pvalue < 0.01


# --- the joint covariance behind the consistency test -----------------------------------------

def test_cross_covariance_equals_a_stacked_cluster_regression(demo_dir):
    """The cross-equation covariance block equals the off-diagonal block of a stacked
    regression clustered by economy (statsmodels, no small-sample correction), under HC0."""
    import statsmodels.api as sm

    from steadyfit.consistency import _cross_cov

    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text().replace('covariance = "HC1"', 'covariance = "HC0"'))
    f = steadyfit.run(spec)
    lv = f.result("with_schooling", "no_resource_exporters")
    g = f.result("convergence", "no_resource_exporters")
    xa, xb = lv.observations.x_restricted, g.observations.x_restricted
    n, ka, kb = len(xa), xa.shape[1], xb.shape[1]
    x = np.zeros((2 * n, ka + kb))
    x[:n, :ka], x[n:, ka:] = xa, xb
    y = np.concatenate([lv.observations.y, g.observations.y])
    groups = np.concatenate([np.arange(n), np.arange(n)])
    ref = sm.OLS(y, x).fit(cov_type="cluster",
                           cov_kwds={"groups": groups, "use_correction": False})
    np.testing.assert_allclose(_cross_cov(lv, g, "HC0"), ref.cov_params()[:ka, ka:],
                               rtol=1e-8, atol=1e-14)
    np.testing.assert_allclose(lv.restricted.cov, ref.cov_params()[:ka, :ka], rtol=1e-8)


# --- simulation recovery of a known speed of convergence ---------------------------------------

def _simulate_growth(rng, n, a, b, span, noise):
    sk = np.exp(rng.normal(np.log(0.18), 0.4, n))
    sh = np.exp(rng.normal(np.log(0.05), 0.6, n))
    growth = rng.uniform(0.0, 0.03, n)
    ngd = growth + 0.05
    ln_ystar = (8 + a / (1 - a - b) * np.log(sk) + b / (1 - a - b) * np.log(sh)
                - (a + b) / (1 - a - b) * np.log(ngd))
    ln_y0 = ln_ystar + rng.normal(-0.3, 0.5, n)
    lam = 0.03  # one speed for every economy, so the growth form is exact
    theta = 1 - math.exp(-lam * span)
    ln_y = ln_y0 + 0.02 * span + theta * (ln_ystar - ln_y0) + rng.normal(0, noise, n)
    return pd.DataFrame({"economy": [f"E{i:04d}" for i in range(n)], "y": np.exp(ln_y),
                         "y0": np.exp(ln_y0), "sk": sk, "sh": sh, "n": growth}), lam


GROWTH_SPEC = simulated_data_section(start=True) + """
[assumptions]
span_years = 25
[[equation]]
name = "growth"
form = "growth"
capital = ["physical", "human_rate"]
structural = true
"""


def test_known_speed_of_convergence_is_recovered(tmp_path):
    rng = np.random.RandomState(21)
    data, lam = _simulate_growth(rng, 3000, 0.3, 0.25, 25, 0.05)
    data.to_csv(tmp_path / "sim.csv", index=False)
    r = steadyfit.run(write_spec(tmp_path, GROWTH_SPEC)).result("growth", "all")
    est = r.speed_estimate("lam")
    assert est.value == pytest.approx(lam, abs=0.0015)
    assert est.low <= lam <= est.high
    assert r.share("alpha").estimate.value == pytest.approx(0.3, abs=0.02)
    assert r.share("beta").estimate.value == pytest.approx(0.25, abs=0.02)
    assert r.speed_estimate("half_life").value == pytest.approx(math.log(2) / lam, rel=0.06)


# --- failure paths ------------------------------------------------------------------------------

def test_nonlinear_least_squares_reports_non_convergence(mrw_findings, mrw_spec):
    """From a distant start and one evaluation, the optimiser stops and says so."""
    from steadyfit.pipeline import plan
    from steadyfit.structural import nonlinear_least_squares

    cell = next(c for c in plan(mrw_spec).cells if c.design.equation == "augmented_growth")
    with pytest.raises(EstimationError, match="did not converge after"):
        nonlinear_least_squares(cell.design, np.array([0.1, 0.1, 0.1]), 0.0, "classical", 0.95,
                                max_evaluations=1)


def test_structural_estimation_that_cannot_start_exits_2(mrw_spec, tmp_path):
    spec = mrw_spec.parent / "no_start.toml"
    spec.write_text(mrw_spec.read_text().replace(
        'name = "unconditional"\nform = "growth"\ncapital = []',
        'name = "unconditional"\nform = "growth"\ncapital = []\nstructural = true'))
    out = tmp_path / "runs"
    proc = subprocess.run([sys.executable, "-m", "steadyfit", "run", str(spec), "--out",
                           str(out)], capture_output=True, text=True, timeout=180)
    assert proc.returncode == 2, proc.stderr
    line = proc.stderr.strip()
    assert line.count("\n") == 0 and "cannot start nonlinear least squares" in line
    assert "no convergence" in line and "unconditional" in line
    assert not out.exists()


def test_growth_forms_need_the_span_and_initial_income(tmp_path):
    text = GROWTH_SPEC.replace("[assumptions]\nspan_years = 25\n", "")
    with pytest.raises(InputError, match="needs assumptions.span_years"):
        steadyfit.load_spec(write_spec(tmp_path, text))
    text = GROWTH_SPEC.replace('income_start = "y0"\n', "")
    with pytest.raises(InputError, match="data.columns.income_start"):
        steadyfit.load_spec(write_spec(tmp_path, text))


def test_growth_results_reach_every_output(demo_dir, tmp_path):
    from steadyfit.report.runfolder import write_run

    run = write_run(steadyfit.run(demo_dir / "demo.toml"), tmp_path)
    assert (run / "figures" / "convergence_convergence_no_resource_exporters.svg").exists()
    assert (run / "tables" / "regressions_growth.tex").exists()
    assert (run / "tables" / "consistency.tex").exists()
    html = (run / "report.html").read_text()
    assert "Levels against growth form" in html and "half-life" in html
    import json

    record = json.loads((run / "results.json").read_text())
    res = next(r for r in record["results"] if r["equation"] == "convergence")
    assert {"lam", "half_life", "nls_alpha", "md_overid"} <= set(res["quantities"])
    assert res["nonlinear_least_squares"]["evaluations"] >= 1
    assert {c["quantity"] for c in record["consistency"]} == {"lam", "alpha", "beta"}


def _add_groups(csv, groups):
    import pandas as pd

    d = pd.read_csv(csv)
    d["group"] = [f"g{i % groups}" for i in range(len(d))]
    d.to_csv(csv, index=False)


@pytest.mark.parametrize("covariance", ["HC0", "HC2", "HC3", "cluster"])
def test_robust_nls_errors_equal_the_robust_delta_method(demo_dir, covariance):
    """NLS is a reparameterisation of the restricted regression, so its sandwich standard
    errors equal the delta method applied to statsmodels' robust covariance of that fit."""
    spec = demo_dir / "demo.toml"
    new = f'covariance = "{covariance}"' + ('\ncluster = "group"' if covariance == "cluster"
                                            else "")
    spec.write_text(spec.read_text().replace('covariance = "HC1"', new))
    # 15 groups: the four regions would give fewer clusters than the growth fit has
    # coefficients, where the cluster-robust covariance is singular
    _add_groups(demo_dir / "demo_economies.csv", 15)
    r = steadyfit.run(spec).result("convergence", "no_resource_exporters")
    mapped = {v.estimate.name: v.estimate for v in r.shares} | {e.name: e for e in r.speed}
    assert r.nonlinear.robust_covariance == covariance
    for e in r.nonlinear.robust:
        assert e.se == pytest.approx(mapped[e.name].se, rel=1e-4), e.name


def test_consistency_without_shared_economies_says_independent(demo_dir):
    """When the growth sample loses an economy (no initial income), the two fits no longer
    share their economies: the comparison treats them as independent and says so."""
    csv = demo_dir / "demo_economies.csv"
    d = pd.read_csv(csv)
    first = d.index[d.resource_exporter == 0][0]
    d.loc[first, "output_per_worker_start"] = float("nan")
    d.to_csv(csv, index=False)
    f = steadyfit.run(demo_dir / "demo.toml")
    g = f.result("convergence", "no_resource_exporters")
    assert g.nobs == 79 and any("income_start" in x.reason for x in g.dropped)
    assert f.consistency and not any(c.joint_covariance for c in f.consistency)
    lv = f.result("with_schooling", "no_resource_exporters")
    lam = next(c for c in f.consistency if c.quantity == "lam")
    var_sum = lam.from_levels.se**2 + lam.from_growth.se**2
    assert lam.difference.se == pytest.approx(math.sqrt(var_sum), rel=1e-6)
    assert lv.nobs == 80


@pytest.mark.parametrize("capital", ['["physical"]', '["physical", "human_rate"]',
                                     '["physical", "human_stock"]'])
def test_structural_levels_forms_match_their_mapping(demo_dir, capital):
    """Nonlinear least squares works for the levels forms too (alpha, beta only)."""
    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text() + f'''
[[equation]]
name = "direct"
capital = {capital}
samples = ["no_resource_exporters"]
structural = true
''')
    r = steadyfit.run(spec).result("direct", "no_resource_exporters")
    for e in r.nonlinear.estimates:
        assert e.value == pytest.approx(r.share(e.name).estimate.value, abs=1e-6)
        assert e.se == pytest.approx(r.share(e.name).estimate.se, rel=0.2)  # HC1 vs classical
    for e in r.nonlinear.robust:
        assert e.se == pytest.approx(r.share(e.name).estimate.se, rel=1e-4)
