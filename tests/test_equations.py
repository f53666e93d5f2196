"""The model-form table: round trips and analytic Jacobians (checked numerically)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import approx_fprime

from steadyfit.equations import FORM_KEYS, find_form, get_form

SPAN = 25.0
shares = st.tuples(st.floats(0.05, 0.6), st.floats(0.05, 0.35), st.floats(0.004, 0.12)).filter(
    lambda abl: abl[0] + abl[1] < 0.9)
WITH_CROSSCHECK = [k for k in FORM_KEYS if get_form(k, SPAN).crosscheck is not None]


def _params(form, a, b, lam):
    """Parameter vector in the form's own order: shares, then lam for growth forms."""
    values = {"alpha": a, "beta": b, "lam": lam}
    return np.array([values[n] for n in form.parameters.names])


@pytest.mark.parametrize("key", FORM_KEYS)
@given(abl=shares)
@settings(max_examples=60, deadline=None)
def test_parameters_round_trip(key, abl):
    form = get_form(key, SPAN)
    p = _params(form, *abl)
    c = form.parameters.inverse(p)
    np.testing.assert_allclose(form.parameters.forward.value(c), p, rtol=1e-10, atol=1e-12)
    assert form.parameters.domain(c) > 0
    assert form.parameters.problem(c) is None


def _numeric_jacobian(vmap, c):
    return np.vstack([approx_fprime(c, lambda x, i=i: vmap.value(x)[i], 1e-7)
                      for i in range(len(vmap.names))])


def _maps(form):
    out = [("parameters", form.parameters.forward, len(form.restricted))]
    cc = form.crosscheck
    if cc is not None:
        out += [("shares", cc.shares, len(form.unrestricted)),
                ("from_rates", cc.from_rates, len(form.unrestricted)),
                ("from_growth", cc.from_growth, len(form.unrestricted))]
    return out


@pytest.mark.parametrize("key", FORM_KEYS)
@given(abl=shares)
@settings(max_examples=40, deadline=None)
def test_analytic_jacobians_match_numerical(key, abl):
    form = get_form(key, SPAN)
    c_res = form.parameters.inverse(_params(form, *abl))
    c_unres = form.unrestricted_from_restricted(c_res)
    for _name, vmap, size in _maps(form):
        c = c_res if size == len(c_res) else c_unres
        np.testing.assert_allclose(np.atleast_2d(vmap.jacobian(c)), _numeric_jacobian(vmap, c),
                                   rtol=1e-5, atol=1e-6)


@pytest.mark.parametrize("key", WITH_CROSSCHECK)
@given(abl=shares)
@settings(max_examples=40, deadline=None)
def test_both_ways_agree_when_the_restriction_holds(key, abl):
    """Under constant returns the unrestricted slopes imply the same share both ways."""
    form = get_form(key, SPAN)
    p = _params(form, *abl)
    c_unres = form.unrestricted_from_restricted(form.parameters.inverse(p))
    assert np.dot(form.restriction, c_unres) == pytest.approx(0, abs=1e-12)
    cc = form.crosscheck
    np.testing.assert_allclose(cc.from_rates.value(c_unres), cc.from_growth.value(c_unres),
                               rtol=1e-10)
    np.testing.assert_allclose(cc.shares.value(c_unres), p, rtol=1e-10)


def test_growth_form_maps_match_the_published_worked_numbers():
    """MRW (1992, QJE) Table VI, non-oil: restricted slopes -0.299 (initial income), 0.500 and
    0.238 imply lambda 0.0142, alpha 0.48 and beta 0.23 (span 25 years)."""
    form = find_form("growth", ["physical", "human_rate"], span=25)
    a, b, lam = form.parameters.forward.value(np.array([-0.299, 0.500, 0.238]))
    assert lam == pytest.approx(0.0142, abs=0.0001)
    assert a == pytest.approx(0.48, abs=0.005) and b == pytest.approx(0.23, abs=0.005)


def test_growth_problems_are_named():
    form = find_form("growth", ["physical"], span=25)
    assert "no convergence" in form.parameters.problem(np.array([0.05, 0.5]))
    assert "not defined" in form.parameters.problem(np.array([-1.2, 0.5]))
    assert "no steady state" in form.parameters.problem(np.array([-0.3, -0.4]))
    assert form.parameters.problem(np.array([-0.3, 0.4])) is None


def test_textbook_closed_forms():
    """a = c/(1+c), se(a) = se(c)/(1+c)^2 (DOMAIN.md section 2)."""
    form = find_form("levels", ["physical"])
    c = np.array([1.48])
    assert form.parameters.forward.value(c)[0] == pytest.approx(1.48 / 2.48)
    assert form.parameters.forward.jacobian(c)[0, 0] == pytest.approx(1 / 2.48**2)


def test_a_third_gives_half_on_saving():
    """With a = 1/3 the income elasticity of saving is 1/2 (a/(1-a)); common practice, no source:
    a fourfold saving gap then gives a twofold income gap."""
    form = find_form("levels", ["physical"])
    c = form.parameters.inverse(np.array([1 / 3]))[0]
    assert c == pytest.approx(0.5)
    assert 4**c == pytest.approx(2.0)


def test_unknown_forms_are_refused_with_the_options():
    with pytest.raises(ValueError, match="did you mean 'levels'"):
        find_form("level", ["physical"])
    with pytest.raises(ValueError, match="takes capital"):
        find_form("levels", ["physical", "human_rate", "human_stock"])
    assert find_form("levels", ["human_rate", "physical"]).key == "levels:physical+human_rate"
    assert find_form("growth", []).key == "growth:unconditional"
    with pytest.raises(ValueError, match="takes capital"):
        find_form("levels", [])
