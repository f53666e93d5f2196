"""Leave one economy out: against statsmodels refits and its influence measures, and on a
planted outlier.

References: statsmodels OLS refitted without each economy (through steadyfit's one-fit path)
for the shifts and the restriction's Wald p-value; statsmodels ``OLSInfluence`` for Cook's
distance.
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from statsmodels.stats.outliers_influence import OLSInfluence

import steadyfit
from conftest import augmented_sample
from steadyfit.demo import write_demo
from steadyfit.equations import get_form
from steadyfit.estimators import fit_ols
from steadyfit.inference import implied_parameters
from steadyfit.robust.influence import cooks_distance, influence_jobs, summarise_influence


class _Design:
    """What the analysis reads of a design (no spec or data file needed)."""

    def __init__(self, y, x_u, x_r, form, economies):
        self.y, self.x_unrestricted, self.x_restricted = y, x_u, x_r
        self.form, self.clusters, self.economies = form, None, economies
        self.restriction = np.array([[0.0, *form.restriction]])


class _Found:
    def __init__(self, shares, speed, restricted):
        self.shares, self.speed, self.restricted = shares, speed, restricted


def _analyse(y, x_u, x_r, covariance, threshold=0.02):
    form = get_form("levels:physical+human_rate")
    names_r = ("c", "k", "h")
    economies = tuple(f"E{i:02d}" for i in range(len(y)))
    design = _Design(y, x_u, x_r, form, economies)
    res = fit_ols(y, x_r, names_r, names_r, covariance)
    shares, speed, _ = implied_parameters(form, res, 0.95, {}, {})
    parts = [job() for job in influence_jobs(design, covariance)]
    return summarise_influence(parts, design, _Found(shares, speed, res), threshold, 0.002), \
        shares, form


@pytest.mark.parametrize("covariance", ["classical", "HC1"])
def test_every_shift_and_p_value_matches_a_refit_without_the_economy(covariance):
    rng = np.random.default_rng(4)
    y, x_u, x_r = augmented_sample(rng, 40, 0.3)
    inf, shares, form = _analyse(y, x_u, x_r, covariance, threshold=1e-12)
    full = {v.estimate.name: v.estimate.value for v in shares}
    names_r = ("c", "k", "h")
    r = np.array([0.0, *form.restriction])
    for i in range(len(y)):
        keep = np.arange(len(y)) != i
        res = fit_ols(y[keep], x_r[keep], names_r, names_r, covariance)
        refit = {v.estimate.name: v.estimate.value
                 for v in implied_parameters(form, res, 0.95, {}, {})[0]}
        for j, q in enumerate(inf.quantities):
            assert inf.shifts[j, i] == pytest.approx(refit[q] - full[q], abs=1e-10)
        wald = sm.OLS(y[keep], x_u[keep]).fit(cov_type="nonrobust" if covariance == "classical"
                                               else covariance).wald_test(r, scalar=True,
                                                                          use_f=False)
        assert inf.restriction_p[i] == pytest.approx(float(wald.pvalue), rel=1e-7)


def test_cooks_distance_matches_statsmodels():
    rng = np.random.default_rng(6)
    y, _, x_r = augmented_sample(rng, 50, 0.3)
    fit = fit_ols(y, x_r, ("c", "k", "h"), ("c", "k", "h"), "classical")
    reference = OLSInfluence(sm.OLS(y, x_r).fit()).cooks_distance[0]
    assert cooks_distance(fit, x_r) == pytest.approx(reference, rel=1e-9)


def test_a_planted_outlier_is_named_first():
    """One economy with a far-off investment rate and income: the analysis names it first,
    with the share it moves, and the run's verdict says so."""
    rng = np.random.default_rng(12)
    y, x_u, x_r = augmented_sample(rng, 60, 0.3)
    x_u[7, 1] = np.log(0.9)  # investment share of 90%
    x_r[7, 1] = x_u[7, 1] - x_u[7, 2]
    y[7] -= 2.5  # and far poorer than the model says
    inf, _, _ = _analyse(y, x_u, x_r, "HC1")
    top = inf.named[0]
    assert top.economy == "E07" and "alpha" in top.moves
    assert abs(top.shifts["alpha"]) > 0.05
    assert top.cooks_distance > inf.cooks_cutoff == pytest.approx(4 / 60)


def test_a_run_names_its_influential_economies(tmp_path):
    jsonschema = pytest.importorskip("jsonschema")
    from steadyfit.report.record import results_schema

    spec = write_demo(tmp_path / "d")
    found = steadyfit.run(spec)
    r = found.result("with_schooling", "large_north_coast")
    assert r.influence is not None and r.influence.named
    folder = steadyfit.write_run(found, tmp_path / "o")
    import json

    record = json.loads((folder / "results.json").read_text())
    jsonschema.validate(record, results_schema())
    text = (folder / "tables" / "influence.md").read_text()
    assert r.influence.named[0].economy in text
    assert "leaving out" in (folder / "summary.md").read_text()
    terminal = steadyfit.render_text(found, width=200).split("Robustness:")[1]
    assert f"Leaving out '{r.influence.named[0].economy}' moves" in terminal


@pytest.mark.parametrize("text, words", [
    ("[influence]\nequations = [\"nope\"]", "unknown equation 'nope'"),
    ("[influence]\nthreshold = 0", "threshold"),
])
def test_influence_spec_refusals_name_the_key(tmp_path, text, words):
    spec = write_demo(tmp_path / "d")
    body = spec.read_text().split("[influence]")[0]
    spec.write_text(body + text + "\n")
    with pytest.raises(steadyfit.InputError) as err:
        steadyfit.load_spec(spec)
    assert "influence" in str(err.value) and words in str(err.value)
