"""The robustness analyses of a run's estimated cells: what ``[bootstrap]``,
``[influence]`` and ``[sweep]`` ask for.

Every chunk of every cell's bootstrap, every block of its leave-one-out fits and every
design of the sweep is one job for :func:`steadyfit.robust.execute.run_jobs` (one progress
bar over the whole run; the same results on any number of workers); each cell's parts are
then joined and summarised onto its findings.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import TYPE_CHECKING, Any

from ..findings import EquationFindings, Settings
from .bootstrap import BootstrapSettings, Draws, draw_jobs, summarise
from .execute import Execution, run_jobs
from .influence import influence_jobs, summarise_influence
from .results import SweepFindings
from .sweep import summarise_sweep, sweep_jobs

if TYPE_CHECKING:
    from ..pipeline import Plan


def _chosen(results: tuple[EquationFindings, ...], names: tuple[str, ...] | None) -> list[int]:
    return [i for i, r in enumerate(results) if names is None or r.equation in names]


def robustness_cells(plan: Plan, results: tuple[EquationFindings, ...], settings: Settings,
                     execution: Execution
                     ) -> tuple[tuple[EquationFindings, ...], SweepFindings | None]:
    """``results`` with the bootstrap and the leave-one-out analysis of each chosen cell, and
    the sweep's findings."""
    body = plan.spec.body
    jobs: list[Callable[[], Any]] = []
    owners: list[tuple[str, int]] = []
    boot = None
    if body.bootstrap is not None:
        b = body.bootstrap
        boot = BootstrapSettings(b.method, b.wild_weights, b.replications, b.seed,
                                 settings.confidence)
        for i in _chosen(results, b.equations):
            found = results[i]
            for job in draw_jobs(plan.cells[i].design, found.restricted, found.unrestricted,
                                 settings.covariance, boot):
                jobs.append(job)
                owners.append(("bootstrap", i))
    if body.influence is not None:
        for i in _chosen(results, body.influence.equations):
            for block in influence_jobs(plan.cells[i].design, settings.covariance):
                jobs.append(block)
                owners.append(("influence", i))
    if body.sweep is not None:
        for grid in sweep_jobs(plan, settings):
            jobs.append(grid)
            owners.append(("sweep", -1))
    if not jobs:
        return results, None
    done = run_jobs(jobs, execution, "robustness")
    out = list(results)
    sweep = None
    if body.sweep is not None:
        sweep = summarise_sweep([d for d, owner in zip(done, owners, strict=True)
                                 if owner[0] == "sweep"], settings, body.sweep.drop_each)
    for kind, i in dict.fromkeys(owners):
        parts = [d for d, owner in zip(done, owners, strict=True) if owner == (kind, i)]
        design = plan.cells[i].design
        if kind == "bootstrap" and boot is not None:
            out[i] = replace(out[i], bootstrap=summarise(Draws.join(parts), out[i], boot,
                                                         design.clusters is not None))
        elif kind == "influence" and body.influence is not None:
            out[i] = replace(out[i], influence=summarise_influence(
                parts, design, out[i], body.influence.threshold,
                body.influence.speed_threshold))
    return tuple(out), sweep
