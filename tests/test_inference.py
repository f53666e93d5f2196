"""Restriction tests and the delta method against statsmodels' own routines."""

from __future__ import annotations

import numpy as np
import pytest

from steadyfit.equations import find_form
from steadyfit.estimators import fit_ols
from steadyfit.inference import band_status, delta_method, normal_estimate, point_test


@pytest.fixture(scope="module")
def regression():
    rng = np.random.RandomState(7)
    n = 60
    x = np.column_stack([np.ones(n), rng.normal(size=n), rng.normal(size=n), rng.normal(size=n)])
    y = x @ np.array([1.0, 0.5, -0.7, 0.3]) + rng.normal(scale=0.4 + 0.3 * np.abs(x[:, 1]),
                                                         size=n)
    return y, x


@pytest.mark.parametrize("cov", ["classical", "HC0", "HC1", "HC2", "HC3"])
def test_fit_matches_statsmodels(regression, cov):
    import statsmodels.api as sm

    y, x = regression
    ours = fit_ols(y, x, ("c", "a", "b", "h"), ("c", "a", "b", "h"), cov)
    ref = sm.OLS(y, x).fit(**({} if cov == "classical" else {"cov_type": cov}))
    np.testing.assert_allclose(ours.coef, ref.params, rtol=1e-12)
    np.testing.assert_allclose(ours.se, ref.bse, rtol=1e-12)
    np.testing.assert_allclose(ours.pvalues, ref.pvalues, rtol=1e-10)
    np.testing.assert_allclose(ours.conf_int(0.9), ref.conf_int(0.1), rtol=1e-10)


@pytest.mark.parametrize("cov", ["classical", "HC0", "HC1", "HC2", "HC3", "cluster"])
@pytest.mark.parametrize("design", ["ordinary", "ill_conditioned", "no_constant"])
def test_every_number_of_a_fit_matches_statsmodels(cov, design):
    """The numpy computation against statsmodels' OLS itself: coefficients, covariance,
    residuals, fit statistics and the distribution, on an ordinary design, a nearly collinear
    one (condition number about 1e6) and one without a constant."""
    import statsmodels.api as sm

    rng = np.random.RandomState(11)
    n = 80
    a, b = rng.normal(size=n), rng.normal(size=n)
    c = a + (1e-5 if design == "ill_conditioned" else 1.0) * rng.normal(size=n)
    x = np.column_stack([np.ones(n), a, b, c])
    if design == "no_constant":
        x = x[:, 1:]
    y = x @ np.linspace(0.5, -0.4, x.shape[1]) + rng.normal(scale=0.3 + 0.4 * np.abs(a))
    groups = np.repeat(np.arange(16), n // 16).astype(str)
    names = tuple(f"x{j}" for j in range(x.shape[1]))
    ours = fit_ols(y, x, names, names, cov, groups if cov == "cluster" else None)
    kw = ({} if cov == "classical" else {"cov_type": "cluster", "cov_kwds": {
        "groups": np.repeat(np.arange(16), n // 16)}} if cov == "cluster" else {"cov_type": cov})
    ref = sm.OLS(y, x).fit(**kw)
    tight = 1e-7 if design == "ill_conditioned" else 1e-11
    np.testing.assert_allclose(ours.coef, ref.params, rtol=tight)
    np.testing.assert_allclose(ours.cov, ref.cov_params(), rtol=tight, atol=1e-14)
    np.testing.assert_allclose(ours.resid, ref.resid, rtol=1e-9, atol=1e-12)
    for mine, theirs in ((ours.ssr, ref.ssr), (ours.rsquared, ref.rsquared),
                         (ours.rsquared_adj, ref.rsquared_adj), (ours.df_resid, ref.df_resid)):
        assert mine == pytest.approx(theirs, rel=1e-10)
    assert ours.nobs == ref.nobs and ours.use_t == ref.use_t
    np.testing.assert_allclose(ours.pvalues, ref.pvalues, rtol=1e-6, atol=1e-300)
    assert ours.n_clusters == (16 if cov == "cluster" else None)


def test_wald_test_matches_statsmodels(regression):
    """Our chi-square Wald statistic equals statsmodels' wald_test under HC1."""
    import statsmodels.api as sm

    from steadyfit.design import Design
    from steadyfit.inference import restriction_tests

    y, x = regression
    form = find_form("levels", ["physical", "human_rate"])
    names = ("const", "ln_sk", "ln_ngd", "ln_sh")
    un = fit_ols(y, x, names, names, "HC1")
    xr = np.column_stack([x[:, 0], x[:, 1] - x[:, 2], x[:, 3] - x[:, 2]])
    re = fit_ols(y, xr, names[:3], names[:3], "HC1")
    design = Design("e", "s", form, tuple(map(str, range(len(y)))), y, x, xr, None)
    f, w = restriction_tests(design, un, re)
    ref = sm.OLS(y, x).fit(cov_type="HC1").wald_test(np.array([[0, 1, 1, 1.0]]), use_f=False,
                                                    scalar=True)
    assert w.statistic == pytest.approx(float(ref.statistic), rel=1e-10)
    assert w.pvalue == pytest.approx(float(ref.pvalue), rel=1e-10)
    ref_f = sm.OLS(y, x).fit().f_test(np.array([[0, 1, 1, 1.0]]))
    assert f.statistic == pytest.approx(float(np.squeeze(ref_f.fvalue)), rel=1e-10)


def test_delta_method_matches_statsmodels_nonlinear_delta():
    """Our delta method equals statsmodels' NonlinearDeltaCov for the two-share map."""
    from statsmodels.stats._delta_method import NonlinearDeltaCov

    form = find_form("levels", ["physical", "human_rate"])
    c = np.array([0.9, 0.6])
    v = np.array([[0.010, -0.004], [-0.004, 0.006]])
    values, cov = delta_method(form.parameters.forward, c, v)
    ref = NonlinearDeltaCov(form.parameters.forward.value, c, v)
    np.testing.assert_allclose(values, ref.predicted(), rtol=1e-12)
    np.testing.assert_allclose(cov, ref.cov(), rtol=1e-5)


def test_band_status():
    assert band_status(0.3, 0.35, (0.25, 0.4)) == "inside"
    assert band_status(0.2, 0.3, (0.25, 0.4)) == "overlaps"
    assert band_status(0.5, 0.6, (0.25, 0.4)) == "outside"
    assert band_status(0.1, 0.2, (0.25, 0.4)) == "outside"


def test_point_test_is_a_two_sided_z_test():
    est = normal_estimate("alpha", 0.6, 0.02**2, 0.95)  # the variance
    t = point_test(est, 1 / 3)
    assert t.statistic == pytest.approx((0.6 - 1 / 3) / 0.02)
    assert t.pvalue < 1e-30
    assert est.low == pytest.approx(0.6 - 1.959964 * 0.02, rel=1e-6)


def test_cluster_covariance_through_a_spec_matches_statsmodels(demo_dir):
    """covariance = "cluster" by region gives statsmodels' cluster-robust standard errors."""
    import pandas as pd
    import statsmodels.api as sm

    import steadyfit

    spec = demo_dir / "demo.toml"
    spec.write_text(spec.read_text().replace('covariance = "HC1"',
                                             'covariance = "cluster"\ncluster = "region"'))
    r = steadyfit.run(spec).result("physical_only", "all")
    d = pd.read_csv(demo_dir / "demo_economies.csv").sort_values("economy")
    x = sm.add_constant(np.column_stack([np.log(d.investment_share / 100),
                                         np.log(d.workforce_growth / 100 + 0.05)]))
    ref = sm.OLS(np.log(d.output_per_worker_end.to_numpy()), x).fit(
        cov_type="cluster", cov_kwds={"groups": pd.factorize(d.region)[0]})
    np.testing.assert_allclose(r.unrestricted.se, ref.bse, rtol=1e-10)
    assert r.wald_test.df == (1.0,)
