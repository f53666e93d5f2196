"""Calibration formulas of the steady-state model (DOMAIN.md sections 3 and 5).

Plain functions of the structural parameters; no data.
"""

from __future__ import annotations

import math


def convergence_rate(alpha: float, beta: float, n_g_delta: float) -> float:
    """Speed of convergence near the steady state, ``(n + g + delta)(1 - alpha - beta)``."""
    return n_g_delta * (1 - alpha - beta)


def half_life(lam: float) -> float:
    """Years to close half the gap to the steady state: ``ln 2 / lambda``."""
    if lam <= 0:
        raise ValueError("a half-life needs a positive speed of convergence")
    return math.log(2) / lam


def income_ratio(alpha: float, beta: float, saving_ratio: float,
                 schooling_ratio: float = 1.0, ngd_ratio: float = 1.0) -> float:
    """Steady-state income ratio of two economies with the same technology.

    ``saving_ratio`` = s_k of the richer over the poorer; ``ngd_ratio`` =
    (n + g + delta) of the poorer over the richer.
    """
    d = 1 - alpha - beta
    if d <= 0:
        raise ValueError("no steady state: alpha + beta must be below 1")
    return (saving_ratio ** (alpha / d) * schooling_ratio ** (beta / d)
            * ngd_ratio ** ((alpha + beta) / d))


def required_share(income_ratio_: float, saving_ratio: float) -> float:
    """The capital share that makes a saving ratio produce an income ratio (no human capital).

    Solves ``a/(1-a) = ln R / ln S``.
    """
    x = math.log(income_ratio_) / math.log(saving_ratio)
    return x / (1 + x)
