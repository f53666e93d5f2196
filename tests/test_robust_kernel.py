"""The batched least-squares kernel against statsmodels, draw by draw.

Reference: statsmodels OLS (through ``steadyfit.estimators.fit_ols``) on the
resampled rows written out one by one, under every covariance choice; the
implied parameters against the one-fit delta method of ``steadyfit.inference``.
"""

from __future__ import annotations

import numpy as np
import pytest

from conftest import restricted_sample
from steadyfit.equations import FORM_KEYS, get_form
from steadyfit.estimators import COVARIANCES, fit_ols
from steadyfit.inference import implied_parameters
from steadyfit.robust.kernel import combination, fit_batch, fit_pair, implied_batch

TOL = 1e-9


def _design(rng: np.random.Generator, n: int, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Log-scale regressors like the classic data's (means far from zero), and a response."""
    x = np.column_stack([np.ones(n), rng.normal(-2.0, 0.6, size=(n, k - 1))])
    y = x @ rng.normal(1.0, 0.5, size=k) + rng.normal(0, 0.4, n)
    return x, y


def _counts(idx: np.ndarray, size: int) -> np.ndarray:
    out = np.zeros((len(idx), size))
    np.add.at(out, (np.repeat(np.arange(len(idx)), idx.shape[1]), idx.ravel()), 1.0)
    return out


def _close(fit, coef: np.ndarray, cov: np.ndarray) -> None:
    assert np.max(np.abs(fit.coef - coef)) < TOL
    scale = max(np.abs(fit.cov).max(), 1e-300)
    assert np.max(np.abs(fit.cov - cov)) / scale < TOL


@pytest.mark.parametrize("covariance", COVARIANCES)
@pytest.mark.parametrize("k", [2, 3, 4])
def test_resampled_rows_match_statsmodels(covariance, k):
    rng = np.random.default_rng(k * 10 + COVARIANCES.index(covariance))
    n = 60
    x, y = _design(rng, n, k)
    clusters = rng.integers(0, 15, n)
    idx = rng.integers(0, n, size=(40, n))
    batch = fit_batch(x, y, covariance, weights=_counts(idx, n), clusters=clusters)
    names = tuple(f"x{j}" for j in range(k))
    for b in range(len(idx)):
        rows = idx[b]
        ref = fit_ols(y[rows], x[rows], names, names, covariance,
                      clusters[rows] if covariance == "cluster" else None)
        _close(ref, batch.coef[b], batch.cov[b])
        assert batch.ssr[b] == pytest.approx(ref.ssr, rel=1e-10)
        if covariance == "cluster":
            assert batch.n_clusters[b] == ref.n_clusters


@pytest.mark.parametrize("covariance", COVARIANCES)
def test_sample_masks_match_statsmodels_on_the_subsample(covariance):
    rng = np.random.default_rng(7)
    n = 50
    x, y = _design(rng, n, 3)
    clusters = rng.integers(0, 12, n)
    masks = (rng.uniform(size=(25, n)) < 0.75).astype(float)
    batch = fit_batch(x, y, covariance, weights=masks, clusters=clusters)
    for b, m in enumerate(masks.astype(bool)):
        ref = fit_ols(y[m], x[m], ("c", "a", "b"), ("c", "a", "b"), covariance,
                      clusters[m] if covariance == "cluster" else None)
        _close(ref, batch.coef[b], batch.cov[b])
        assert batch.nobs[b] == m.sum()


def test_cluster_draws_count_as_new_clusters():
    """Resampling whole clusters: a cluster drawn twice is two clusters, as statsmodels sees
    the resampled data once the copies are relabelled."""
    rng = np.random.default_rng(11)
    n, groups = 70, 14
    x, y = _design(rng, n, 3)
    codes = rng.integers(0, groups, n)
    draws = rng.integers(0, groups, size=(30, groups))
    counts = _counts(draws, groups)
    batch = fit_batch(x, y, "cluster", clusters=codes, cluster_counts=counts)
    for b in range(len(draws)):
        rows, labels = [], []
        for copy, g in enumerate(draws[b]):
            members = np.flatnonzero(codes == g)
            rows += list(members)
            labels += [copy] * len(members)
        rows_a = np.array(rows)
        ref = fit_ols(y[rows_a], x[rows_a], ("c", "a", "b"), ("c", "a", "b"), "cluster",
                      np.array(labels))
        _close(ref, batch.coef[b], batch.cov[b])
        assert batch.n_clusters[b] == groups


@pytest.mark.parametrize("covariance", ["classical", "HC1", "HC3", "cluster"])
def test_new_responses_match_statsmodels(covariance):
    """The wild bootstrap: the same rows, a new response per draw."""
    rng = np.random.default_rng(3)
    n = 45
    x, y = _design(rng, n, 3)
    clusters = rng.integers(0, 9, n)
    ys = y + rng.choice([-1.0, 1.0], size=(20, n)) * 0.3
    batch = fit_batch(x, y, covariance, responses=ys, clusters=clusters)
    for b in range(len(ys)):
        ref = fit_ols(ys[b], x, ("c", "a", "b"), ("c", "a", "b"), covariance,
                      clusters if covariance == "cluster" else None)
        _close(ref, batch.coef[b], batch.cov[b])


@pytest.mark.parametrize("key", [k for k in FORM_KEYS if not k.startswith("panel")])
def test_implied_parameters_match_the_one_fit_delta_method(key):
    """Every form's maps broadcast over draws: the batch equals steadyfit.inference per draw."""
    form = get_form(key, 25.0)
    rng = np.random.default_rng(5)
    n, k = 80, len(form.restricted) + 1
    x, y = restricted_sample(form, rng, n)
    idx = rng.integers(0, n, size=(15, n))
    batch = fit_batch(x, y, "HC1", weights=_counts(idx, n))
    implied = implied_batch(form, batch)
    names = tuple(f"x{j}" for j in range(k))
    for b in range(len(idx)):
        ref = fit_ols(y[idx[b]], x[idx[b]], names, names, "HC1")
        shares, speed, problem = implied_parameters(form, ref, 0.95, {}, {})
        assert implied.ordinary[b] == (problem is None)
        if problem is not None:
            continue
        for e in (*(v.estimate for v in shares), *speed):
            if e.name == "half_life":
                continue
            i = implied.row(e.name)
            assert implied.value[i, b] == pytest.approx(e.value, rel=1e-9, abs=1e-12)
            assert implied.se[i, b] == pytest.approx(e.se, rel=1e-7)


@pytest.mark.parametrize("covariance", ["classical", "HC1"])
def test_both_fits_of_a_cell_share_their_cross_products(covariance):
    """The restricted design is a combination of the unrestricted one; fitting both from one
    product of the weights gives what statsmodels gives for each."""
    rng = np.random.default_rng(13)
    n = 64
    x_u, y = _design(rng, n, 4)  # constant, ln_sk, ln_ngd, ln_sh
    x_r = np.column_stack([np.ones(n), x_u[:, 1] - x_u[:, 2], x_u[:, 3] - x_u[:, 2]])
    idx = rng.integers(0, n, size=(30, n))
    unres, res = fit_pair(x_u, x_r, y, covariance, weights=_counts(idx, n))
    for b in range(len(idx)):
        for batch, x in ((unres, x_u), (res, x_r)):
            names = tuple(f"x{j}" for j in range(x.shape[1]))
            ref = fit_ols(y[idx[b]], x[idx[b]], names, names, covariance)
            _close(ref, batch.coef[b], batch.cov[b])
    assert combination(x_u, np.column_stack([x_r, x_u[:, 1] ** 2])) is None


def test_too_few_clusters_give_no_covariance():
    """G clusters give a covariance of rank at most G - 1: with G no larger than the number
    of coefficients the kernel returns no number (the one-fit rule of steadyfit.estimators)."""
    rng = np.random.default_rng(21)
    x, y = _design(rng, 40, 4)
    few = fit_batch(x, y, "cluster", weights=np.ones((3, 40)), clusters=rng.integers(0, 4, 40))
    assert np.isnan(few.cov).all() and np.isfinite(few.coef).all()
    enough = fit_batch(x, y, "cluster", weights=np.ones((1, 40)),
                       clusters=rng.integers(0, 12, 40))
    assert np.isfinite(enough.cov).all()
