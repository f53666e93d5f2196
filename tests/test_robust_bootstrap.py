"""The bootstrap: intervals against plain computations, coverage on simulated data, the same
bytes for one worker, two workers and a Dask cluster, and the spec's refusals.

References: numpy quantiles and scipy's normal distribution for the interval formulas;
coverage against the nominal level on data simulated from the augmented model with known
shares (a few hundred simulations, so the check allows binomial noise); the draws themselves
rest on the kernel, which tests/test_robust_kernel.py holds against statsmodels.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import steadyfit
from conftest import augmented_sample
from steadyfit.demo import write_demo
from steadyfit.equations import get_form
from steadyfit.estimators import fit_ols
from steadyfit.inference import implied_parameters
from steadyfit.quantities import quantities
from steadyfit.robust.bootstrap import (
    BootstrapSettings,
    Draws,
    bias_corrected_interval,
    draw_jobs,
    percentile_and_bias_corrected,
    percentile_interval,
    run_draws,
    studentised_interval,
)
from steadyfit.robust.execute import Execution, run_jobs


def test_percentile_and_bias_corrected_intervals_by_hand():
    rng = np.random.default_rng(0)
    draws = rng.normal(0.3, 0.05, 4000)
    assert percentile_interval(draws, 0.9) == pytest.approx(
        tuple(np.quantile(draws, [0.05, 0.95])))
    # the estimate at the draws' median: no bias to correct (z0 = 0)
    median = float(np.median(draws))
    assert bias_corrected_interval(draws, median, 0.9) == pytest.approx(
        percentile_interval(draws, 0.9), abs=2e-4)
    # the estimate below most draws: both ends move down, by the normal quantiles of 2 z0 +- z
    est = float(np.quantile(draws, 0.3))
    z0, z = stats.norm.ppf(0.3), stats.norm.ppf(0.95)
    levels = stats.norm.cdf([2 * z0 - z, 2 * z0 + z])
    assert bias_corrected_interval(draws, est, 0.9) == pytest.approx(
        tuple(np.quantile(draws, levels)))
    assert bias_corrected_interval(draws, draws.min() - 1, 0.9) is None
    both = percentile_and_bias_corrected(draws, est, 0.9)
    assert both == (percentile_interval(draws, 0.9), bias_corrected_interval(draws, est, 0.9))


def test_studentised_interval_by_hand():
    rng = np.random.default_rng(1)
    draws = rng.normal(0.3, 0.05, 3000)
    ses = np.full(3000, 0.05)
    t = (draws - 0.31) / 0.05
    lo, hi = np.quantile(t, [0.025, 0.975])
    assert studentised_interval(draws, ses, 0.31, 0.04, 0.95) == pytest.approx(
        (0.31 - hi * 0.04, 0.31 - lo * 0.04))
    assert studentised_interval(draws, ses, 0.31, math.nan, 0.95) is None


def _fits(y, x_u, x_r, covariance):
    """The unrestricted and restricted one-fit references (statsmodels)."""
    names_u, names_r = ("c", "k", "n", "h"), ("c", "k", "h")
    return (fit_ols(y, x_u, names_u, names_u, covariance),
            fit_ols(y, x_r, names_r, names_r, covariance))


class _Design:
    """What the bootstrap reads of a design (no spec or data file needed)."""

    def __init__(self, y, x_u, x_r, form, clusters=None):
        self.y, self.x_unrestricted, self.x_restricted = y, x_u, x_r
        self.form, self.clusters = form, clusters
        self.restriction = np.array([[0.0, *form.restriction]])


@pytest.mark.parametrize("method", ["pairs", "wild"])
def test_percentile_intervals_cover_alpha_near_the_nominal_level(method):
    """300 simulated samples of 120 economies, 199 draws each: the 90% percentile interval of
    alpha covers 0.3 in 84% to 96% of them (the nominal 90% plus binomial noise, about 3.5
    standard errors either side)."""
    form = get_form("levels:physical+human_rate")
    rng = np.random.default_rng(42)
    names_u, names_r = ("c", "k", "n", "h"), ("c", "k", "h")
    hits, sims = 0, 300
    for s in range(sims):
        y, x_u, x_r = augmented_sample(rng, 120)
        unres = fit_ols(y, x_u, names_u, names_u, "HC1")
        res = fit_ols(y, x_r, names_r, names_r, "HC1")
        d = _Design(y, x_u, x_r, form)
        draws = run_draws(d, res, unres, "HC1", BootstrapSettings(method, "rademacher", 199,
                                                                  seed=s, confidence=0.9))
        alpha = draws.value[draws.names.index("alpha")][draws.ordinary]
        lo, hi = percentile_interval(alpha, 0.9)
        hits += lo <= 0.3 <= hi
    assert 0.84 <= hits / sims <= 0.96, hits / sims


def test_wild_draws_give_the_restrictions_null_distribution():
    """Under the restriction (true here), the wild bootstrap's Wald statistics follow a
    chi-square with one degree of freedom: their mean is near 1 and the 95th percentile near
    3.84 (scipy)."""
    form = get_form("levels:physical+human_rate")
    y, x_u, x_r = augmented_sample(np.random.default_rng(5), 150)
    unres, res = _fits(y, x_u, x_r, "HC1")
    draws = run_draws(_Design(y, x_u, x_r, form), res, unres, "HC1",
                      BootstrapSettings("wild", "mammen", 4000, seed=3))
    assert np.mean(draws.wald) == pytest.approx(1.0, abs=0.15)
    assert np.quantile(draws.wald, 0.95) == pytest.approx(stats.chi2.ppf(0.95, 1), rel=0.15)


def test_one_worker_and_two_give_the_same_bytes():
    form = get_form("levels:physical+human_rate")
    y, x_u, x_r = augmented_sample(np.random.default_rng(9), 90)
    names_u, names_r = ("c", "k", "n", "h"), ("c", "k", "h")
    unres = fit_ols(y, x_u, names_u, names_u, "classical")
    res = fit_ols(y, x_r, names_r, names_r, "classical")
    settings = BootstrapSettings("pairs", "rademacher", 60_000, seed=11)  # several chunks
    jobs = draw_jobs(_Design(y, x_u, x_r, form), res, unres, "classical", settings)
    assert len(jobs) > 2
    one = Draws.join(run_jobs(jobs, Execution(workers=1)))
    two = Draws.join(run_jobs(jobs, Execution(workers=2)))
    for field in ("value", "se", "ordinary", "wald"):
        assert getattr(one, field).tobytes() == getattr(two, field).tobytes()


@pytest.fixture(scope="module")
def boot_spec(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("boot")
    spec = write_demo(folder)
    spec.write_text(spec.read_text().split("# Robustness")[0]
                    + '\n[bootstrap]\nreplications = 299\nseed = 5\n'
                    'equations = ["with_schooling", "convergence"]\n')
    return spec


def test_a_run_reports_bootstrap_intervals_everywhere(boot_spec, tmp_path):
    jsonschema = pytest.importorskip("jsonschema")
    from steadyfit.report.record import results_schema

    found = steadyfit.run(boot_spec)
    boots = {r.column: r.bootstrap for r in found.results}
    assert boots["with_schooling / all"] is not None and boots["physical_only / all"] is None
    b = boots["convergence / no_resource_exporters"]
    assert {i.name for i in b.intervals} == {"alpha", "beta", "alpha+beta", "lam", "half_life"}
    # the half-life interval is lambda's mapped through ln 2 / lambda (monotone)
    lam, half = b.interval("lam"), b.interval("half_life")
    assert half.percentile == pytest.approx(
        (math.log(2) / lam.percentile[1], math.log(2) / lam.percentile[0]), rel=1e-2)
    folder = steadyfit.write_run(found, tmp_path / "o")
    record = json.loads((folder / "results.json").read_text())
    jsonschema.validate(record, results_schema())
    assert "bootstrap" in (folder / "report.html").read_text().lower()
    assert (folder / "tables" / "bootstrap.md").exists()
    assert (folder / "tables" / "bootstrap.tex").exists()
    r = found.result("with_schooling", "all")
    assert quantities(r)["alpha_percentile_low"] == r.bootstrap.interval("alpha").percentile[0]
    # the terminal view says it too: each bootstrapped result under its heading
    terminal = steadyfit.render_text(found, width=200)
    lo, hi = r.bootstrap.interval("alpha").percentile
    assert f"{r.heading}:\n  - Pairs bootstrap (299 draws)" in terminal
    assert f"α percentile interval {lo:.3f} to {hi:.3f}" in terminal
    assert f"{found.result('physical_only', 'all').heading}:" not in terminal.split(
        "Robustness:")[1]
    assert quantities(r)["restriction_bootstrap_p"] == r.bootstrap.restriction.pvalue


def test_the_same_seed_gives_the_same_record_on_one_and_two_workers(boot_spec, tmp_path):
    from steadyfit.cli import main

    outs = []
    for workers in ("1", "2"):
        out = tmp_path / workers
        assert main(["run", str(boot_spec), "--out", str(out), "--quiet", "--workers",
                     workers]) == 0
        record = json.loads(next((out / "demo").iterdir()).joinpath("results.json").read_text())
        outs.append([r["bootstrap"] for r in record["results"]])
    assert outs[0] == outs[1]


@pytest.mark.parametrize("text, words", [
    ('equations = ["nope"]', "unknown equation 'nope'"),
    ("replications = 10", "replications"),
    ('method = "jackknife"', "method"),
])
def test_bootstrap_spec_refusals_name_the_key(tmp_path, text, words):
    spec = write_demo(tmp_path / "d")
    spec.write_text(spec.read_text().split("# Robustness")[0] + f"\n[bootstrap]\n{text}\n")
    with pytest.raises(steadyfit.InputError) as err:
        steadyfit.load_spec(spec)
    assert "bootstrap" in str(err.value) and words in str(err.value)


def test_dask_cluster_gives_what_the_local_executor_gives():
    distributed = pytest.importorskip("distributed")
    form = get_form("levels:physical+human_rate")
    y, x_u, x_r = augmented_sample(np.random.default_rng(2), 80)
    unres, res = _fits(y, x_u, x_r, "HC1")
    jobs = draw_jobs(_Design(y, x_u, x_r, form), res, unres, "HC1",
                     BootstrapSettings("pairs", "rademacher", 60_000, seed=4))
    local = Draws.join(run_jobs(jobs, Execution()))
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        remote = Draws.join(run_jobs(jobs, Execution(scheduler=cluster.scheduler_address)))
    for field in ("value", "se", "ordinary", "wald"):
        assert getattr(local, field).tobytes() == getattr(remote, field).tobytes()


def test_implied_alpha_of_the_draws_matches_the_one_fit_path():
    """Draw 0 of a run refitted by the one-fit path gives the same alpha (the batch maps)."""
    form = get_form("levels:physical+human_rate")
    y, x_u, x_r = augmented_sample(np.random.default_rng(8), 60)
    names_r = ("c", "k", "h")
    res = fit_ols(y, x_r, names_r, names_r, "classical")
    shares, _, _ = implied_parameters(form, res, 0.95, {}, {})
    draws = run_draws(_Design(y, x_u, x_r, form), res, fit_ols(y, x_u, ("c", "k", "n", "h"),
                      ("c", "k", "n", "h"), "classical"), "classical",
                      BootstrapSettings("wild", "rademacher", 200, seed=1))
    # the wild draws centre on the restricted fit: their mean alpha is near the estimate
    alpha = draws.value[draws.names.index("alpha")]
    assert np.mean(alpha) == pytest.approx(shares[0].estimate.value, abs=0.02)


def test_a_bootstrap_over_four_clusters_gives_no_interval(tmp_path):
    """Resampling 4 regions gives only a few dozen distinct estimates: no interval is formed,
    and the reason says why."""
    spec = write_demo(tmp_path / "d")
    text = spec.read_text().split("# Robustness")[0].replace(
        'covariance = "HC1"', 'covariance = "cluster"\ncluster = "region"')
    spec.write_text(text + "\n[bootstrap]\nreplications = 499\nseed = 2\n")
    found = steadyfit.run(spec)
    alpha = found.result("with_schooling", "all").bootstrap.interval("alpha")
    assert alpha.percentile is None and "distinct values" in alpha.reason


def test_the_half_life_is_mapped_from_lambda_and_unbounded_past_zero():
    from steadyfit.robust.bootstrap import _half_life
    from steadyfit.robust.results import BootstrapInterval

    lam = BootstrapInterval("lam", 0.01, 0.004, (-0.002, 0.02), (0.001, 0.021), None)
    half = _half_life(lam)
    assert half.estimate == pytest.approx(math.log(2) / 0.01)
    assert half.percentile == (pytest.approx(math.log(2) / 0.02), math.inf)
    assert half.bias_corrected == pytest.approx((math.log(2) / 0.021, math.log(2) / 0.001))
    assert half.studentised is None


def test_quantiles_from_one_sort_equal_numpys():
    """The intervals' quantiles are numpy's own (np.quantile, linear method), to the bit."""
    from steadyfit.robust.bootstrap import quantiles

    rng = np.random.default_rng(3)
    for n in (2, 3, 10, 999, 10_000):
        v = rng.standard_t(3, size=n)
        p = np.concatenate([[0.0, 1.0, 0.5, 0.025, 0.975], rng.uniform(size=40)])
        assert np.array_equal(quantiles(v, p), np.quantile(v, p))
