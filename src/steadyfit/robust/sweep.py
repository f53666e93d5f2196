"""Specification sweeps: every combination of samples, values of g + delta, covariance
choices and one group of a column left out at a time, fitted in batches.

For one equation on one sample the regressors are rebuilt for each value of g + delta from
the canonical columns through the form's regressors (only ``ln(n + g + delta)`` changes);
the groups left out are row masks.  Under the classical covariance every value of
g + delta and every group of one equation and sample is solved in one batch from the
cross-products (:func:`steadyfit.robust.kernel.classical_pairs`); other covariances go
through :func:`~steadyfit.robust.kernel.fit_pair` per value.  Each equation, sample and
covariance choice is one job for the executor; the results come back column by column.

A specification whose rows are too few for its regressors (after a group is left out, or
where n + g + delta is not positive), or whose fit implies no ordinary parameters, stays in
the grid with the reason.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from scipy.special import ndtri

from ..data import LOG_COLUMNS
from ..design import Design, design_arrays, regressor_matrix, selected_columns
from ..errors import InputError, quote
from ..estimators import CovarianceName, cluster_codes
from .kernel import (
    BatchFit,
    classical_pairs,
    fit_pair,
    implied_batch,
    one_restriction_p,
)
from .results import SweepFindings

if TYPE_CHECKING:
    from ..findings import Settings
    from ..pipeline import Plan

NGD = LOG_COLUMNS["workforce_growth"]
SHOWN = ("alpha", "beta", "lam")


@dataclass(frozen=True, eq=False)
class _Job:
    """One equation on one sample under one covariance choice: every value of g + delta and
    every group left out."""

    design: Design
    columns: dict[str, np.ndarray]  # canonical columns of the design's rows
    base_gd: float  # g + delta of the columns' ln(n + g + delta)
    values: tuple[float, ...]
    covariance: CovarianceName
    masks: np.ndarray
    labels: tuple[str | None, ...]
    confidence: float

    def __call__(self) -> SweepFindings:
        with np.errstate(all="ignore"):
            return fit_grid(self)


def _designs(job: _Job) -> list[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """For each value of g + delta: both regressor matrices and the masks (economies whose
    n + g + delta is not positive masked out)."""
    form, n = job.design.form, len(job.design.y)
    if NGD not in job.columns:
        same = (job.design.x_unrestricted, job.design.x_restricted, job.masks)
        return [same for _ in job.values]
    workforce = np.exp(job.columns[NGD]) - job.base_gd  # n, the workforce growth
    out = []
    for gd in job.values:
        level = workforce + gd
        ok = level > 0
        cols = dict(job.columns, **{NGD: np.log(np.where(ok, level, 1.0))})
        out.append((regressor_matrix(cols, form.unrestricted, n),
                    regressor_matrix(cols, form.restricted, n),
                    job.masks if ok.all() else job.masks * ok[None, :]))
    return out


def _concat(fits: list[BatchFit]) -> BatchFit:
    return BatchFit(np.vstack([f.coef for f in fits]), np.concatenate([f.cov for f in fits]),
                    np.concatenate([f.ssr for f in fits]), np.concatenate([f.nobs for f in fits]),
                    fits[0].covariance)


def fit_grid(job: _Job) -> SweepFindings:
    """Every specification of one job (bands and the drop column are filled in when the
    jobs' findings are joined)."""
    d = job.design
    k = d.x_unrestricted.shape[1]
    designs = _designs(job)
    masks = np.concatenate([m for _, _, m in designs])
    fitted = (classical_pairs([(xu, xr, m) for xu, xr, m in designs], d.y)
              if job.covariance == "classical" else None)
    if fitted is None:
        codes = cluster_codes(d.clusters)
        pairs = [fit_pair(xu, xr, d.y, job.covariance, weights=m, clusters=codes)
                 for xu, xr, m in designs]
        fitted = (_concat([u for u, _ in pairs]), _concat([r for _, r in pairs]))
    unres, res = fitted
    implied = implied_batch(d.form, res)
    nobs = masks.sum(axis=1)
    if d.form.restricts:
        r = d.restriction[0]
        by_entry = np.moveaxis(unres.cov, 0, -1)  # (k, k, B)
        var = np.tensordot(r, np.tensordot(r, by_entry, axes=(0, 0)), axes=(0, 0))
        p = one_restriction_p(np.where(var > 0, (unres.coef @ r) ** 2 / var, np.nan))
    else:
        p = np.full(len(nobs), np.nan)
    few = nobs < k + 2
    bad = few | ~implied.ordinary
    shown = tuple(q for q in SHOWN if q in implied.names)
    rows = [implied.row(q) for q in shown]
    value = np.where(bad, np.nan, implied.value[rows])
    z = float(ndtri(0.5 + job.confidence / 2))
    half = z * implied.se[rows]
    reasons: list[str | None] = [None] * len(nobs)
    for b in np.flatnonzero(bad):
        reasons[b] = (f"{int(nobs[b])} economies left, fewer than the {k + 2} the unrestricted "
                      "equation needs" if few[b] else
                      "the estimates imply no steady state or no convergence")
    for b in np.flatnonzero(~bad & ~np.isfinite(half).all(axis=0)):
        reasons[b] = ("no interval or test: the covariance cannot be computed here (under "
                      "cluster covariance, too few clusters for the coefficients)")
    count = len(nobs)
    return SweepFindings(
        (d.equation,) * count, (d.sample,) * count,
        np.repeat(np.asarray(job.values, dtype=float), len(job.labels)),
        (job.covariance,) * count, job.labels * len(job.values), nobs, shown, value,
        value - half, value + half, np.where(bad, np.nan, p), tuple(reasons),
        {d.equation: shown}, {}, job.confidence)


def sweep_jobs(plan: Plan, settings: Settings) -> list[Callable[[], SweepFindings]]:
    """One job per equation, sample and covariance choice of ``[sweep]``."""
    sweep = plan.spec.body.sweep
    assert sweep is not None
    values = tuple(float(v) for v in (sweep.g_plus_delta or (settings.g_plus_delta,)))
    covariances = sweep.covariance or (settings.covariance,)
    refuse = plan.spec.body.data.non_positive == "error"
    jobs: list[Callable[[], SweepFindings]] = []
    for cell in plan.cells:
        if (sweep.equations and cell.equation not in sweep.equations) or (
                sweep.samples and cell.selection.sample not in sweep.samples):
            continue
        columns = selected_columns(cell.selection)
        d = design_arrays(cell.selection, cell.form, cell.equation, cell.symbols, columns)
        labels: tuple[str | None, ...] = (None,)
        masks = np.ones((1, len(d.y)))
        if refuse and NGD in columns:
            _refuse_non_positive(columns[NGD], settings.g_plus_delta, values, d)
        if sweep.drop_each is not None:
            groups = cell.selection.column(sweep.drop_each)
            present = pd.notna(groups)  # an economy without a group is never left out
            codes, names = pd.factorize(groups[present].astype(str), sort=True)
            full = np.full(len(groups), -1)
            full[present] = codes
            labels += tuple(map(str, names.tolist()))
            masks = np.vstack([masks, (full[None, :] != np.arange(len(names))[:, None])
                               .astype(float)])
        jobs += [_Job(d, columns, settings.g_plus_delta, values, cov, masks, labels,
                      settings.confidence) for cov in covariances]
    return jobs


def _refuse_non_positive(ln_ngd: np.ndarray, base: float, values: tuple[float, ...],
                         design: Design) -> None:
    """With data.non_positive = "error": a value of g + delta at which an economy's
    n + g + delta is not positive stops the run, naming both."""
    workforce = np.exp(ln_ngd) - base
    for gd in values:
        bad = np.flatnonzero(workforce + gd <= 0)
        if len(bad):
            raise InputError(
                f"at g + delta = {gd:g}, economy '{quote(design.economies[bad[0]])}' has "
                f"n + g + delta = {workforce[bad[0]] + gd:.4g} <= 0 in {design.where}; "
                "choose larger values or set data.non_positive = \"drop\"",
                "sweep.g_plus_delta")


def summarise_sweep(parts: list[SweepFindings], settings: Settings, drop_each: str | None
                    ) -> SweepFindings:
    """Every job's specifications in one set of columns, with the run's bands."""
    return SweepFindings.join(parts, dict(settings.bands), settings.confidence, drop_each)
