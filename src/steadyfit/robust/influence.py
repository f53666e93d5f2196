"""Leave one economy out: how far each economy moves the implied parameters and the
restriction test, and its Cook's distance.

Every leave-one-out fit is a fit of the cell's design with that economy's weight set to
zero, so the batched kernel (:func:`steadyfit.robust.kernel.fit_pair`, masks as row weights)
refits all of them under the run's covariance, in blocks of economies that can run on any
executor.  The implied parameters go through the form table's maps
(:func:`~steadyfit.robust.kernel.implied_batch`).

Cook's distance is that of the restricted fit (the one the shares come from):
``D_i = e_i^2 h_i / (k s^2 (1 - h_i)^2)``, with ``h_i`` the leverage and ``k`` the number of
coefficients.  An economy is named when it moves a share by more than the threshold (or the
speed of convergence by more than its own), when its Cook's distance exceeds ``4 / n``
(common practice, no source), or when the fit without it implies no ordinary parameters.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..design import Design
from ..estimators import CovarianceName, Fit, cluster_codes
from ..findings import EquationFindings
from .kernel import fit_pair, implied_batch, one_restriction_p
from .results import InfluenceFindings, InfluentialEconomy

# economies left out per job: about 5 million row weights per block
BLOCK_WEIGHTS = 5_000_000
# Cook's distance above 4/n names an economy (common practice, no source)
COOKS_SCALE = 4.0


@dataclass(frozen=True, eq=False)
class LeaveOut:
    """The leave-one-out fits of one block of economies: implied values (rows ``names``),
    whether each is ordinary, and the restriction's Wald statistic."""

    names: tuple[str, ...]
    value: np.ndarray
    ordinary: np.ndarray
    wald: np.ndarray


def leave_out_block(design: Design, covariance: CovarianceName, start: int, stop: int
                    ) -> LeaveOut:
    """The fits without each economy ``start``..``stop - 1`` of the design."""
    n = len(design.y)
    masks = np.ones((stop - start, n))
    masks[np.arange(stop - start), np.arange(start, stop)] = 0.0
    with np.errstate(all="ignore"):
        unres, res = fit_pair(design.x_unrestricted, design.x_restricted, design.y, covariance,
                              weights=masks, clusters=cluster_codes(design.clusters))
        implied = implied_batch(design.form, res)
        if design.form.restricts:
            r = design.restriction[0]
            value = unres.coef @ r
            var = np.einsum("i,bij,j->b", r, unres.cov, r)
            wald = np.where(var > 0, value ** 2 / var, np.nan)
        else:
            wald = np.full(stop - start, np.nan)
    return LeaveOut(implied.names, implied.value, implied.ordinary, wald)


@dataclass(frozen=True, eq=False)
class _Job:
    design: Design
    covariance: CovarianceName
    start: int
    stop: int

    def __call__(self) -> LeaveOut:
        return leave_out_block(self.design, self.covariance, self.start, self.stop)


def influence_jobs(design: Design, covariance: CovarianceName) -> list[Callable[[], LeaveOut]]:
    """One picklable job per block of economies."""
    n = len(design.y)
    step = max(1, BLOCK_WEIGHTS // max(n, 1))
    return [_Job(design, covariance, s, min(s + step, n)) for s in range(0, n, step)]


def cooks_distance(fit: Fit, x: np.ndarray) -> np.ndarray:
    """``e_i^2 h_i / (k s^2 (1 - h_i)^2)`` of a least-squares fit on design ``x``."""
    k = x.shape[1]
    leverage = np.einsum("ij,ij->i", x @ np.linalg.inv(x.T @ x), x)
    s2 = fit.ssr / fit.df_resid
    with np.errstate(divide="ignore", invalid="ignore"):
        return fit.resid ** 2 * leverage / (k * s2 * (1 - leverage) ** 2)


def summarise_influence(parts: list[LeaveOut], design: Design, found: EquationFindings,
                        threshold: float, speed_threshold: float) -> InfluenceFindings:
    """The findings of one cell from its blocks (see the module docstring)."""
    names = parts[0].names
    value = np.hstack([p.value for p in parts])
    ordinary = np.concatenate([p.ordinary for p in parts])
    wald = np.concatenate([p.wald for p in parts])
    full = {v.estimate.name: v.estimate.value for v in found.shares}
    full.update({e.name: e.value for e in found.speed})
    shown = [q for q in names if q in full and math.isfinite(full[q])
             and (q in ("alpha", "beta", "lam"))]
    shifts = np.vstack([value[names.index(q)] - full[q] for q in shown]) if shown else \
        np.zeros((0, len(ordinary)))
    shifts[:, ~ordinary] = np.nan
    p_without = one_restriction_p(wald)
    cooks = cooks_distance(found.restricted, design.x_restricted)
    n = len(design.y)
    cutoff = COOKS_SCALE / n
    limits = np.array([speed_threshold if q == "lam" else threshold for q in shown])
    # each economy's largest shift as a multiple of its quantity's threshold
    relative = (np.nanmax(np.abs(shifts) / limits[:, None], axis=0, initial=0.0)
                if len(shown) else np.zeros(n))
    flagged_rows = np.flatnonzero((relative > 1) | (cooks > cutoff) | ~ordinary)
    named = []
    for i in sorted(flagged_rows, key=lambda i: (-relative[i], -cooks[i])):
        moved = tuple(q for j, q in enumerate(shown) if abs(shifts[j, i]) > limits[j])
        named.append(InfluentialEconomy(
            str(design.economies[int(i)]), {q: float(shifts[j, i]) for j, q in enumerate(shown)},
            None if math.isnan(p_without[i]) else float(p_without[i]), float(cooks[i]),
            moved, bool(ordinary[i])))
    return InfluenceFindings(threshold, speed_threshold, cutoff, tuple(shown),
                             tuple(design.economies), shifts, p_without, cooks, tuple(named))
