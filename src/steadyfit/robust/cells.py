"""The robustness analyses of a run's estimated cells: what ``[bootstrap]`` asks for.

Every chunk of every cell's bootstrap is one job for :func:`steadyfit.robust.execute.run_jobs`
(one progress bar over the whole run; the same results on any number of workers); each
cell's draws are then joined and summarised onto its findings.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

from ..findings import EquationFindings, Settings
from .bootstrap import BootstrapSettings, Draws, draw_jobs, summarise
from .execute import Execution, run_jobs

if TYPE_CHECKING:
    from ..pipeline import Plan


def bootstrap_settings(plan: Plan, settings: Settings) -> BootstrapSettings | None:
    b = plan.spec.body.bootstrap
    if b is None:
        return None
    return BootstrapSettings(b.method, b.wild_weights, b.replications, b.seed,
                             settings.confidence)


def bootstrap_cells(plan: Plan, results: tuple[EquationFindings, ...], settings: Settings,
                    execution: Execution) -> tuple[EquationFindings, ...]:
    """``results`` with the bootstrap of each chosen cell (all cross-section equations, or
    ``bootstrap.equations``)."""
    chosen_settings = bootstrap_settings(plan, settings)
    body = plan.spec.body.bootstrap
    if chosen_settings is None or body is None:
        return results
    names = set(body.equations) if body.equations else None
    picked = [i for i, r in enumerate(results) if names is None or r.equation in names]
    jobs, owners = [], []
    for i in picked:
        cell, found = plan.cells[i], results[i]
        for job in draw_jobs(cell.design, found.restricted, found.unrestricted,
                             settings.covariance, chosen_settings):
            jobs.append(job)
            owners.append(i)
    drawn = run_jobs(jobs, execution, f"bootstrap ({chosen_settings.replications} draws a cell)")
    out = list(results)
    for i in picked:
        parts = [d for d, owner in zip(drawn, owners, strict=True) if owner == i]
        draws = Draws.join(parts)
        out[i] = replace(out[i], bootstrap=summarise(
            draws, out[i], chosen_settings, plan.cells[i].design.clusters is not None))
    return tuple(out)
