"""The model's transition after a permanent change in s_k, s_h or n, solved numerically.

Per effective worker (DOMAIN.md section 5), with ``y = k^a h^b``::

    dk/dt = s_k y - (n + g + delta) k
    dh/dt = s_h y - (n + g + delta) h        (only when b > 0)

The economy starts at the steady state of the old rates and moves towards the
steady state of the new ones; income per worker is ``y e^(g t)`` (technology
normalised to 1 at the change).  The numerical half-life, the time at which half
of the log gap to the new steady state is closed, is held against the log-linear
one, ``ln 2 / lambda`` with ``lambda = (n + g + delta)(1 - a - b)`` at the new rates.
The log-linear value is exact only in the limit of a small change.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .steady import check_rates, convergence_rate

MAX_YEARS = 5000  # the longest horizon solved (a 0.1% speed closes half its gap in 700)


@dataclass(frozen=True)
class Rates:
    """Investment and workforce-growth rates (fractions); ``s_h`` is ignored when b = 0."""

    s_k: float
    n: float
    s_h: float = 0.0


def log_steady_state(alpha: float, beta: float, rates: Rates, g_delta: float
                     ) -> tuple[float, float, float]:
    """(ln k, ln h, ln y) per effective worker in the steady state; ln h = 0 when beta = 0.
    In logs, so shares near 1 do not overflow."""
    ln_ngd = math.log(rates.n + g_delta)
    d = 1 - alpha - beta
    ln_sk = math.log(rates.s_k)
    if beta == 0:
        lk = (ln_sk - ln_ngd) / (1 - alpha)
        return lk, 0.0, alpha * lk
    ln_sh = math.log(rates.s_h)
    lk = ((1 - beta) * ln_sk + beta * ln_sh - ln_ngd) / d
    lh = (alpha * ln_sk + (1 - alpha) * ln_sh - ln_ngd) / d
    return lk, lh, alpha * lk + beta * lh


def steady_state(alpha: float, beta: float, rates: Rates, g_delta: float
                 ) -> tuple[float, float, float]:
    """(k, h, y) per effective worker in the steady state; h = 1 when beta = 0."""
    lk, lh, ly = log_steady_state(alpha, beta, rates, g_delta)
    return math.exp(lk), math.exp(lh), math.exp(ly)


@dataclass(frozen=True)
class TransitionPath:
    """The solved path: times (years after the change), income, capital and human capital per
    worker, the growth rate of income per worker, and the half-lives."""

    alpha: float
    beta: float
    g: float
    delta: float
    before: Rates
    after: Rates
    years: np.ndarray
    income: np.ndarray  # per worker, technology 1 at the change
    capital: np.ndarray  # per worker
    human: np.ndarray  # per worker (1 when beta = 0)
    growth: np.ndarray  # d ln(income per worker)/dt
    ln_start: float  # ln income per effective worker, the old steady state
    ln_end: float  # ln income per effective worker, the new steady state
    half_life: float  # numerical; NaN with half_life_reason when not reached
    log_linear_half_life: float
    half_life_reason: str | None = None

    @property
    def log_gap(self) -> float:
        """ln of the new steady-state income over the old (per effective worker)."""
        return self.ln_end - self.ln_start


def transition(alpha: float, beta: float, before: Rates, after: Rates, g: float = 0.02,
               delta: float = 0.03, years: float = 200.0, points: int = 401) -> TransitionPath:
    """Solve the path from the old rates' steady state after the change to ``after``."""
    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq

    if not (0 < alpha and 0 <= beta and alpha + beta < 1):
        raise InputError(f"alpha = {alpha:g}, beta = {beta:g}: shares must be positive and sum "
                         "to less than 1 for a steady state to exist", "shares")
    for label, value in (("g", g), ("delta", delta)):
        if not (math.isfinite(value) and 0 <= value <= 0.5):
            raise InputError(f"must be a fraction between 0 and 0.5, not {value:g}", label)
    for label, r in (("before", before), ("after", after)):
        check_rates(label, r.s_k, r.n, r.s_h if beta > 0 else None, g + delta)
    if not (math.isfinite(years) and 1 <= years <= MAX_YEARS and points >= 2):
        raise InputError(f"the horizon must lie between 1 and {MAX_YEARS} years, not {years:g}",
                         "years")
    gd = g + delta
    lk0, lh0, ly0 = log_steady_state(alpha, beta, before, gd)
    _, _, ly1 = log_steady_state(alpha, beta, after, gd)
    ngd = after.n + gd
    human = beta > 0

    def rhs(t: float, z: np.ndarray) -> np.ndarray:
        # in logs: d ln k/dt = s_k y/k - (n + g + delta), which stays positive-definite
        lk, lh = z[0], z[1]
        ly = alpha * lk + beta * lh
        dk = after.s_k * math.exp(ly - lk) - ngd
        dh = after.s_h * math.exp(ly - lh) - ngd if human else 0.0
        return np.array([dk, dh])

    t = np.linspace(0.0, years, points)
    sol = solve_ivp(rhs, (0.0, years), [lk0, lh0], method="LSODA",
                    t_eval=t, dense_output=True, rtol=1e-10, atol=1e-12)
    if not sol.success:  # pragma: no cover - LSODA on this smooth system does not fail
        raise RuntimeError(f"the transition could not be solved: {sol.message}")
    lk, lh = sol.y
    ly = alpha * lk + beta * lh
    growth = g + np.array([rhs(0.0, z) for z in sol.y.T]) @ np.array([alpha, beta])
    trend = g * t
    gap0 = ly1 - ly0
    lam = convergence_rate(alpha, beta, ngd)
    reason = None
    half = math.nan
    if gap0 == 0:
        reason = "the change leaves the steady state where it was: there is no gap to close"
    else:
        def remaining(s: float) -> float:
            z = sol.sol(s)
            return (ly1 - (alpha * z[0] + beta * z[1])) / gap0 - 0.5

        if remaining(years) > 0:
            reason = f"half the gap is not closed within {years:g} years"
        else:
            half = float(brentq(remaining, 0.0, years, xtol=1e-10))
    with np.errstate(over="ignore"):  # a level beyond the float range is infinite
        levels = np.exp(ly + trend), np.exp(lk + trend), np.exp(lh + trend)
    return TransitionPath(alpha, beta, g, delta, before, after, t, levels[0], levels[1],
                          levels[2] if human else np.ones_like(t), growth, ly0, ly1, half,
                          math.log(2) / lam, reason)
