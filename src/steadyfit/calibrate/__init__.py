"""Calibration: what given shares predict (steady-state ratios, required shares, transition
paths) and what a printed table implies (shares from coefficients and standard errors)."""

from .steady import (
    Economy,
    capital_output,
    convergence_rate,
    half_life,
    income_ratio,
    required_share,
    required_share_grid,
    steady_state_ratios,
)

__all__ = ["Economy", "capital_output", "convergence_rate", "half_life", "income_ratio",
           "required_share", "required_share_grid", "steady_state_ratios"]
