"""Cross-equation consistency: do the levels and growth forms tell the same story?

For every sample on which a levels equation and a growth equation with the
same capital both run, compare

- the speed of convergence estimated from the growth form,
  ``lambda = -ln(1 + b_0)/T``, with the speed the levels-form shares predict,
  ``(mean n + g + delta)(1 - alpha - beta)`` (DOMAIN.md section 3);
- the shares each form implies.

The two fits share their economies, so their estimates are correlated: when
the economies are identical the joint covariance of the two restricted
coefficient vectors is estimated from both fits' scores (the cross term
``(X1'X1)^-1 X1' diag(e1 e2) X2 (X2'X2)^-1``; with classical covariance the
homoskedastic form ``s12 (X1'X1)^-1 X1'X2 (X2'X2)^-1``, ``s12 = e1'e2/n``).
When the economies differ, the two are treated as independent and the check
says so.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from .equations import get_form
from .findings import ConsistencyCheck, EquationFindings, Settings
from .inference import normal_estimate, z_test
from .structural import numeric_jacobian


def _pairs(results: tuple[EquationFindings, ...]
           ) -> list[tuple[EquationFindings, EquationFindings]]:
    out = []
    for g in results:
        if not g.form_key.startswith("growth:") or g.form_key == "growth:unconditional":
            continue
        capital = g.form_key.split(":", 1)[1]
        for lv in results:
            if lv.form_key == f"levels:{capital}" and lv.sample == g.sample:
                out.append((lv, g))
    return out


def _cross_cov(a: EquationFindings, b: EquationFindings, covariance: str) -> np.ndarray:
    xa, xb = a.observations.x_restricted, b.observations.x_restricted
    ea, eb = a.restricted.resid, b.restricted.resid
    ia, ib = np.linalg.inv(xa.T @ xa), np.linalg.inv(xb.T @ xb)
    if covariance == "classical":
        middle = (ea @ eb / len(ea)) * (xa.T @ xb)
    else:
        middle = (xa.T * (ea * eb)) @ xb
    return ia @ middle @ ib


def consistency_checks(results: tuple[EquationFindings, ...],
                       settings: Settings) -> tuple[ConsistencyCheck, ...]:
    """Every levels-versus-growth comparison the run's equations allow."""
    span = settings.span_years
    out: list[ConsistencyCheck] = []
    for lv, g in _pairs(results):
        if lv.steady_state and g.steady_state and span:
            out += _checks_for_pair(lv, g, span, settings)
    return tuple(out)


def _checks_for_pair(lv: EquationFindings, g: EquationFindings, span: float,
                     settings: Settings) -> list[ConsistencyCheck]:
    ca, cb = lv.restricted.coef, g.restricted.coef
    joint = lv.economies == g.economies
    cross = _cross_cov(lv, g, settings.covariance) if joint else np.zeros((len(ca), len(cb)))
    cov = np.block([[lv.restricted.cov, cross], [cross.T, g.restricted.cov]])
    theta = np.concatenate([ca, cb])
    na = len(ca)
    lv_map, g_map = _parameters(lv, span), _parameters(g, span)
    ngd = _mean_ngd(lv)

    def lam_levels(t: np.ndarray) -> float:
        shares = lv_map(t[1:na])
        return ngd * (1 - sum(v for k, v in shares.items() if k in ("alpha", "beta")))

    def lam_growth(t: np.ndarray) -> float:
        return -math.log1p(t[na + 1]) / span

    quantities: list[tuple[str, Callable[[np.ndarray], float],
                           Callable[[np.ndarray], float]]] = [("lam", lam_levels, lam_growth)]
    for name in ("alpha", "beta"):
        if name in lv_map(ca[1:]) and name in g_map(cb[1:]):
            quantities.append((name, _pick(lv_map, name, 1, na),
                               _pick(g_map, name, na + 1, len(theta))))
    return [_compare(lv, g, name, f_lv, f_g, theta, cov, joint, settings.confidence)
            for name, f_lv, f_g in quantities]


def _parameters(r: EquationFindings, span: float) -> Callable[[np.ndarray], dict[str, float]]:
    """Restricted slopes -> named parameters of the result's form."""
    form = get_form(r.form_key, span if r.form_key.startswith("growth:") else None)
    return lambda c: dict(zip(form.parameters.names, form.parameters.forward.value(c),
                              strict=True))


def _pick(params: Callable[[np.ndarray], dict[str, float]], name: str, lo: int, hi: int
          ) -> Callable[[np.ndarray], float]:
    """One named parameter as a function of the joint coefficient vector."""
    return lambda t: params(t[lo:hi])[name]


def _as_vector(fn: Callable[[np.ndarray], float]) -> Callable[[np.ndarray], np.ndarray]:
    return lambda t: np.array([fn(t)])


def _mean_ngd(r: EquationFindings) -> float:
    """Sample mean of n + g + delta (in levels) from the regressor ln(n+g+d)."""
    i = r.unrestricted.names.index("ln_ngd")
    return float(np.exp(r.observations.x[:, i]).mean())


def _compare(lv: EquationFindings, g: EquationFindings, name: str,
             f_lv: Callable[[np.ndarray], float], f_g: Callable[[np.ndarray], float],
             theta: np.ndarray, cov: np.ndarray, joint: bool, confidence: float
             ) -> ConsistencyCheck:
    estimates = []
    def difference(t: np.ndarray) -> float:
        return f_g(t) - f_lv(t)

    for fn in (f_lv, f_g, difference):
        grad = numeric_jacobian(_as_vector(fn), theta)[0]
        estimates.append(normal_estimate(name, fn(theta), float(np.sqrt(grad @ cov @ grad)),
                                         confidence))
    diff = estimates[2]
    z = diff.value / diff.se if diff.se > 0 else math.inf
    what = "speed of convergence" if name == "lam" else name
    test = z_test(f"z test that both forms give the same {what}", z,
                  f"{what} from the growth form = {what} from the levels form")
    return ConsistencyCheck(lv.sample, lv.equation, g.equation, name, estimates[0],
                            estimates[1], diff, test, joint)
