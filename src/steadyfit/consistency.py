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
With cluster-robust covariance the cross term sums the two fits' scores within
clusters, so the joint matrix is the cluster-robust covariance of the stacked
fits.  When the economies differ, the two are treated as independent and the
check says so.  A joint covariance that is singular (from fewer clusters than
the two fits have coefficients, say) gives no standard error and no test.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence

import numpy as np
import pandas as pd

from .equations import get_form
from .estimators import cluster_count, covariance_problem
from .findings import ConsistencyCheck, EquationFindings, Settings
from .inference import normal_estimate, z_test_of
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


def _scaled_residuals(r: EquationFindings, covariance: str) -> np.ndarray:
    """Residuals scaled so that ``X' diag(u u) X`` is the middle of the fit's own sandwich."""
    x = r.observations.x_restricted
    e = r.restricted.resid
    n, k = x.shape
    if covariance in ("HC0", "cluster"):
        return e
    if covariance == "HC1":
        return e * math.sqrt(n / (n - k))
    lever = np.einsum("ij,jk,ik->i", x, np.linalg.inv(x.T @ x), x)
    return e / np.sqrt(1 - lever) if covariance == "HC2" else e / (1 - lever)


def _cross_cov(a: EquationFindings, b: EquationFindings, covariance: str) -> np.ndarray:
    xa, xb = a.observations.x_restricted, b.observations.x_restricted
    ia, ib = np.linalg.inv(xa.T @ xa), np.linalg.inv(xb.T @ xb)
    if covariance == "classical":
        ea, eb = a.restricted.resid, b.restricted.resid
        return ia @ ((ea @ eb / len(ea)) * (xa.T @ xb)) @ ib
    ua, ub = _scaled_residuals(a, covariance), _scaled_residuals(b, covariance)
    if covariance == "cluster":
        labels = np.asarray(a.observations.clusters).astype(str)
        groups = np.unique(labels)
        sa = np.array([xa[labels == g].T @ ua[labels == g] for g in groups])
        sb = np.array([xb[labels == g].T @ ub[labels == g] for g in groups])
        n, m = len(ua), len(groups)
        # the finite-sample factors of the two blocks, G/(G-1) (n-1)/(n-k), as geometric mean
        fa = m / (m - 1) * (n - 1) / (n - xa.shape[1])
        fb = m / (m - 1) * (n - 1) / (n - xb.shape[1])
        return math.sqrt(fa * fb) * ia @ (sa.T @ sb) @ ib
    return ia @ ((xa.T * (ua * ub)) @ xb) @ ib


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
    joint = _same(lv.economies, g.economies)
    cross = _cross_cov(lv, g, settings.covariance) if joint else np.zeros((len(ca), len(cb)))
    cov = np.block([[lv.restricted.cov, cross], [cross.T, g.restricted.cov]])
    n_clusters = (cluster_count(lv.observations.clusters) if settings.covariance == "cluster"
                  else None)
    joint_problem = (covariance_problem(cov, n_clusters) if joint else
                     lv.restricted.cov_problem or g.restricted.cov_problem)
    # each form's own estimate needs only its own fit's covariance; the difference needs both
    reasons = (lv.restricted.cov_problem, g.restricted.cov_problem,
               None if joint_problem is None else
               f"the joint covariance of the two fits is unusable: {joint_problem}")
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
    return [_compare(lv, g, name, f_lv, f_g, theta, cov, joint, settings.confidence, reasons,
                     n_clusters)
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
             theta: np.ndarray, cov: np.ndarray, joint: bool, confidence: float,
             reasons: tuple[str | None, str | None, str | None], n_clusters: int | None
             ) -> ConsistencyCheck:
    estimates = []

    def difference(t: np.ndarray) -> float:
        return f_g(t) - f_lv(t)

    for fn, reason in zip((f_lv, f_g, difference), reasons, strict=True):
        grad = numeric_jacobian(_as_vector(fn), theta)[0]
        estimates.append(normal_estimate(name, fn(theta), float(grad @ cov @ grad), confidence,
                                         reason=reason))
    what = "speed of convergence" if name == "lam" else name
    test = z_test_of(estimates[2], 0.0, f"z test that both forms give the same {what}",
                     f"{what} from the growth form = {what} from the levels form")
    return ConsistencyCheck(lv.sample, lv.equation, g.equation, name, estimates[0],
                            estimates[1], estimates[2], test, joint, n_clusters)


def _same(a: Sequence[str], b: Sequence[str]) -> bool:
    """Whether two results used the same economies in the same order (compared as whole
    arrays)."""
    return len(a) == len(b) and pd.Index(a).equals(pd.Index(b))
