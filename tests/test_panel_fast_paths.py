"""The shortcuts the panel estimators take when every economy has the same rows (batched
products over equal blocks) against plain computations written out row by row here: the
one-step weight from an explicit H matrix, economy sums by loops, the lagged rows of the
serial-correlation test by search.  Each is checked on a balanced panel (the shortcut)
and on the same panel with gaps (the general path)."""

from __future__ import annotations

import numpy as np
import pytest

from steadyfit.panel.design import DynamicPanel, gmm_design
from steadyfit.panel.gmm import band_weight


def _panel(gaps: bool) -> DynamicPanel:
    rng = np.random.default_rng(7)
    n, T = 12, 7
    y = np.cumsum(rng.normal(0.0, 1.0, (n, T)), axis=1) + 5.0
    x = rng.normal(0.0, 1.0, (n, T, 2))
    if gaps:
        y[1, 3] = np.nan
        x[4, 5, 0] = np.nan
        y[7, 0] = np.nan
    return DynamicPanel(tuple(f"E{i}" for i in range(n)), tuple(range(T)), "y", y, 1,
                        ("a", "b"), x)


def _explicit_h(d) -> np.ndarray:
    """H over all rows: 2 on the diagonal of differenced rows, 1 for rows in levels, -1
    between differenced rows of one economy in consecutive periods (found by search)."""
    n = d.nobs
    H = np.diag(np.where(d.block == 0, 2.0, 1.0))
    for i in range(n):
        for j in range(n):
            if (d.economy[i] == d.economy[j] and d.block[i] == 0 and d.block[j] == 0
                    and abs(int(d.period[i]) - int(d.period[j])) == 1):
                H[i, j] = -1.0
    return H


@pytest.mark.parametrize("gaps", [False, True])
@pytest.mark.parametrize("system", [False, True])
def test_band_weight_equals_the_explicit_matrix(gaps, system):
    d = gmm_design(_panel(gaps), system=system)
    assert (d.uniform is None) == gaps
    expected = np.linalg.pinv(d.Z.T @ _explicit_h(d) @ d.Z)
    np.testing.assert_allclose(band_weight(d), expected, rtol=1e-9, atol=1e-10)


@pytest.mark.parametrize("gaps", [False, True])
def test_economy_sums_equal_loops(gaps):
    d = gmm_design(_panel(gaps), system=True)
    w = np.arange(d.nobs, dtype=float) / d.nobs - 0.3
    expected = np.array([(d.Z[d.economy == e] * w[d.economy == e][:, None]).sum(axis=0)
                         for e in np.unique(d.economy)])
    np.testing.assert_allclose(d.sums(d.Z, w), expected, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(d.sums(w), [w[d.economy == e].sum() for e in np.unique(d.economy)],
                               rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("gaps", [False, True])
@pytest.mark.parametrize("order", [1, 2, 3])
def test_earlier_rows_found_by_search(gaps, order):
    d = gmm_design(_panel(gaps), system=True)
    expected = [next((j for j in range(d.nobs) if d.economy[j] == d.economy[i]
                      and d.block[j] == d.block[i] and d.period[j] == d.period[i] - order), -1)
                for i in range(d.nobs)]
    assert d.earlier(order).tolist() == expected
