"""The run, one direction: spec -> data -> design -> fit -> findings.

:func:`run` is the library entry point (usable in a notebook);
:func:`plan` does everything up to the design matrices without estimating,
for ``steadyfit check``.
"""

from __future__ import annotations

import platform
import warnings
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from importlib import metadata
from pathlib import Path

import numpy as np

from . import equations
from .anchor import MEASURED_SHARE_CAVEAT, anchored, covariance_with_alpha, measured_share
from .consistency import consistency_checks
from .data import SHARE_COLUMN, EconomyTable, Selection, load_data, select
from .design import Design, build_design, cell_name, design_arrays
from .errors import EstimationError, InputError, did_you_mean, quote
from .estimators import fit_ols
from .findings import (
    EquationFindings,
    Findings,
    MeasuredShare,
    Observations,
    Provenance,
    SampleSummary,
    Settings,
    TargetCheck,
)
from .inference import implied_parameters, restriction_tests, unrestricted_shares
from .labels import DisplayLabels
from .panel.results import PanelFindings
from .quantities import panel_quantities, quantities, unavailable
from .robust.execute import Execution
from .spec import Spec, load_spec
from .structural import minimum_distance, nonlinear_least_squares
from .workers import give_back_memory

_VERSIONED = ("steadyfit", "numpy", "scipy", "pandas", "statsmodels", "linearmodels",
              "pydantic")


@dataclass(frozen=True)
class PlannedCell:
    """One equation on one sample, ready to estimate (its design checked when planned)."""

    selection: Selection
    form: equations.ModelForm
    equation: str
    symbols: Mapping[str, str] = field(default_factory=dict)  # the spec's variable labels
    structural: bool = False
    measured: MeasuredShare | None = None  # the national-accounts anchor, where data have one

    @property
    def capital_shares(self) -> np.ndarray | None:
        """One minus the labour share of each economy used (NaN: none), with an anchor."""
        if self.measured is None:
            return None
        return 1.0 - self.selection.column(SHARE_COLUMN).astype(float)

    @property
    def design(self) -> Design:
        """The cell's arrays, made anew on each call, so that a run holds those of the cell it
        is working on only (the table's columns are shared)."""
        return design_arrays(self.selection, self.form, self.equation, self.symbols)

    @property
    def where(self) -> str:
        return cell_name(self.equation, self.selection.sample)


@dataclass(frozen=True)
class PlannedPanel:
    """One panel equation on one sample (estimated by :mod:`steadyfit.panel.cells`)."""

    equation: str
    form: equations.ModelForm
    sample: str


@dataclass(frozen=True)
class Plan:
    spec: Spec
    table: EconomyTable
    cells: tuple[PlannedCell, ...]
    panels: tuple[PlannedPanel, ...] = ()


def span_years(spec: Spec, table: EconomyTable) -> float | None:
    """The growth form's span: the spec's, else the annual data's cross-section span."""
    if spec.body.span_years is not None:
        return spec.body.span_years
    return None if table.span is None else float(table.span[1] - table.span[0])


def _as_spec(spec: Spec | str | Path) -> Spec:
    return spec if isinstance(spec, Spec) else load_spec(spec)


def plan(spec: Spec | str | Path) -> Plan:
    """Validate spec and data and build every design, without estimating."""
    spec = _as_spec(spec)
    table = load_data(spec)
    give_back_memory()  # what reading and checking the file left behind
    cells = []
    panels = []
    span = span_years(spec, table)
    for eq in spec.body.equation:
        if eq.form == "panel":
            form = equations.find_form(eq.form, eq.capital, spec.body.panel.period_years)
            panels += [PlannedPanel(eq.name, form, s) for s in spec.equation_samples(eq)]
            continue
        form = equations.find_form(eq.form, eq.capital, span)
        for sample in spec.equation_samples(eq):
            selection = select(table, spec, sample, form)
            build_design(selection, form, eq.name, spec.body.labels.variables)  # checks only
            cells.append(PlannedCell(selection, form, eq.name, spec.body.labels.variables,
                                     eq.structural, measured_of(spec, table, selection.rows)))
    sweep = spec.body.sweep
    if sweep is not None and sweep.drop_each is not None and \
            sweep.drop_each not in table.frame.columns:
        raise InputError(f"the data have no column '{quote(sweep.drop_each)}'"
                         f"{did_you_mean(sweep.drop_each, list(table.frame.columns))}",
                         "sweep.drop_each")
    return Plan(spec, table, tuple(cells), tuple(panels))


def measured_of(spec: Spec, table: EconomyTable, rows: np.ndarray) -> MeasuredShare | None:
    """The measured capital share of the economies at positions ``rows`` of the table (None
    when the data have no labour share)."""
    column = spec.body.data.columns.labour_share
    if column is None:
        return None
    labour = table.frame[SHARE_COLUMN].iloc[rows]
    return measured_share(labour, labour.index, column, table.span)


def settings_of(spec: Spec, table: EconomyTable | None = None) -> Settings:
    b = spec.body
    return Settings(
        g_plus_delta=b.assumptions.g_plus_delta,
        span_years=span_years(spec, table) if table is not None else b.span_years,
        covariance=b.inference.covariance,
        cluster=b.inference.cluster,
        confidence=b.inference.confidence,
        bands={"alpha": b.plausible.alpha, "beta": b.plausible.beta},
        points={"alpha": b.plausible.alpha_point, "beta": b.plausible.beta_point},
        non_positive=b.data.non_positive,
        max_evaluations=b.inference.max_evaluations,
        digits=b.report.digits,
        significance_marks=b.report.significance_marks,
        figure_formats=b.report.figure_formats,
        latex_max_columns=b.report.latex_max_columns,
        latex_landscape=b.report.latex_landscape,
        figures=b.report.figures,
    )


# From this many economies a cell's fits leave enough freed memory behind to be worth giving
# back before the next (a choice of this project, no source).
LARGE_CELL = 100_000

# Below this many clusters cluster-robust standard errors are known to be unreliable
# (common practice, no source).
FEW_CLUSTERS = 20


def numerical_notes(caught: list[warnings.WarningMessage], stage: str) -> list[str]:
    """Warnings raised by numpy, scipy or statsmodels while computing, as one note each."""
    return list(dict.fromkeys(
        f"numerical warning while {stage} ({w.category.__name__}): "
        f"{quote(str(w.message).splitlines()[0] if str(w.message) else '', 160)}"
        for w in caught))


def estimate_cell(cell: PlannedCell, settings: Settings) -> EquationFindings:
    """Fit one equation on one sample, unrestricted and restricted, and judge the results.

    Numerical warnings raised on the way become notes of the result, never output.
    """
    with warnings.catch_warnings(record=True) as caught, np.errstate(all="warn"):
        warnings.simplefilter("always")
        found = _estimate_cell(cell, settings)
    notes = numerical_notes(caught, "estimating")
    return replace(found, notes=found.notes + tuple(n for n in notes if n not in found.notes))


def _estimate_cell(cell: PlannedCell, settings: Settings) -> EquationFindings:
    d = cell.design
    unres = fit_ols(d.y, d.x_unrestricted, d.names_unrestricted, d.labels_unrestricted,
                    settings.covariance, d.clusters)
    res = fit_ols(d.y, d.x_restricted, d.names_restricted, d.labels_restricted,
                  settings.covariance, d.clusters)
    f_test, wald = restriction_tests(d, unres, res)
    shares, speed, problem = implied_parameters(d.form, res, settings.confidence,
                                                settings.bands, settings.points)
    capital = cell.capital_shares
    if cell.measured is not None and capital is not None:
        with_alpha = covariance_with_alpha(d.form, res, d.x_restricted, capital, d.clusters)
        shares = anchored(shares, cell.measured, with_alpha)
    un_shares, cross = unrestricted_shares(d.form, unres, settings.confidence)
    notes = []
    for fit in (unres, res):
        if fit.cov_problem is not None:
            notes.append(f"{fit.covariance} covariance of the "
                         f"{'restricted' if fit is res else 'unrestricted'} fit: "
                         f"{fit.cov_problem}; tests and derived standard errors that need it "
                         "are not available.")
    md = nls = None
    if problem is not None:
        if cell.structural:
            raise EstimationError(f"cannot start nonlinear least squares: the linear fit "
                                  f"implies {problem}", d.where)
    else:
        start = d.form.parameters.forward.value(res.slopes()[0])
        md = minimum_distance(d.form, unres, start, settings.confidence, d.where)
        if cell.structural:
            nls = nonlinear_least_squares(d, start, float(res.coef[0]), settings.covariance,
                                          settings.confidence, settings.max_evaluations)
    return EquationFindings(
        equation=d.equation, sample=d.sample, form_key=d.form.key,
        description=d.form.description, restriction_text=d.restriction_text,
        economies=d.economies, dropped=cell.selection.dropped,
        n_in_sample=cell.selection.n_in_sample, dependent_label=d.form.dependent_label,
        unrestricted=unres, restricted=res, f_test=f_test, wald_test=wald, shares=shares,
        speed=speed, unrestricted_shares=un_shares, crosscheck=cross, problem=problem,
        observations=Observations(cell.selection, d.form),
        notes=tuple(notes), minimum_distance=md, nonlinear=nls)


def _estimated(cell: PlannedCell, settings: Settings) -> EquationFindings:
    """One cell estimated, and the memory its fits used given back (see
    :func:`~steadyfit.workers.give_back_memory`) before the next."""
    found = estimate_cell(cell, settings)
    if cell.selection.nobs >= LARGE_CELL:
        give_back_memory()
    return found


def estimate_panel(p: Plan, cell: PlannedPanel, settings: Settings) -> PanelFindings:
    """Every panel estimator on one panel equation and sample; numerical warnings become
    notes, as for the cross-section cells."""
    from .panel.cells import estimate_panel_cell

    with warnings.catch_warnings(record=True) as caught, np.errstate(all="warn"):
        warnings.simplefilter("always")
        found = estimate_panel_cell(p.table, p.spec, cell.equation, cell.form, cell.sample,
                                    settings)
    notes = [n for n in numerical_notes(caught, "estimating the panel") if n not in found.notes]
    return replace(found, notes=found.notes + tuple(notes))


def versions() -> dict[str, str]:
    out = {"python": platform.python_version()}
    for name in _VERSIONED:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def caveats(spec: Spec, table: EconomyTable) -> tuple[str, ...]:
    """The plain statements every report carries about assumptions, data and sample."""
    b = spec.body
    out = [
        "The equations assume every economy is in or near its own steady state, with the same "
        "technology growth g and depreciation \u03b4 and a common production function; the "
        "investment and workforce-growth rates are treated as exogenous to income.",
        f"g + \u03b4 is an assumption, not data: this run uses {b.assumptions.g_plus_delta:g}. "
        "Results, the restriction test in particular, can move with it.",
        f"Data: '{table.path.name}' (SHA-256 {table.sha256[:12]}...), {table.n_economies} "
        "economies; the estimates describe this vintage and these samples only.",
        "Implied shares use the delta method; in small samples its intervals can be poor, so "
        "compare the endpoint-mapped interval where one is shown.",
    ]
    if any(e.form == "growth" for e in b.equation):
        out.append("Growth equations rest on a log-linear approximation around the steady "
                   "state and one speed of convergence for every economy; initial income is "
                   "treated as given. Intervals for \u03bb and the half-life come from the "
                   "delta method and from mapping the endpoints of the initial-income "
                   "coefficient's interval.")
    if any(e.form == "panel" for e in b.equation):
        out.append("Panel equations: each estimator rests on its own assumptions (see the panel "
                   "table's notes); pooled OLS and within are biased in opposite directions, "
                   "and GMM estimates are only as good as their instruments, which the "
                   "AR(2), over-identification and bracket checks probe but cannot prove.")
    if b.data.columns.labour_share is not None:
        out.append(MEASURED_SHARE_CAVEAT)
    if b.bootstrap is not None:
        if b.bootstrap.method == "pairs":
            what = ("economies (whole clusters under cluster covariance) with replacement; "
                    "they treat the economies (or clusters) as independent draws from one "
                    "population, which a cross-section of countries is not")
        else:
            weights = ("random signs" if b.bootstrap.wild_weights == "rademacher"
                       else "Mammen's two-point weights")
            what = (f"the restricted fit's residuals times {weights} (one per cluster under "
                    "cluster covariance), keeping every economy and its regressors, so the "
                    "data obey the restriction; they treat the residuals as independent "
                    "(within clusters, as one)")
        out.append(f"Bootstrap intervals redraw {what}. {b.bootstrap.replications} draws, seed "
                   f"{b.bootstrap.seed}. They say nothing about errors in the data "
                   "themselves.")
    out.append("Cross-country regressions describe associations across economies; they do not "
               "by themselves say what a policy would do in any one of them.")
    return tuple(out)


def run(spec: Spec | str | Path, execution: Execution | None = None) -> Findings:
    """Estimate every equation on every sample of ``spec`` and return the findings.

    Parameters
    ----------
    spec
        A :class:`~steadyfit.spec.Spec` or the path of a TOML spec.
    execution
        Where the robustness analyses' jobs run (local workers, a Dask scheduler) and
        whether a progress bar shows; default: here, without a bar.
    """
    from .analysis import build_analysis

    p = plan(spec)
    settings = settings_of(p.spec, p.table)
    analysis = build_analysis(p)
    labels = DisplayLabels(p.spec.body.labels.equations, p.spec.body.labels.samples)
    results = tuple(replace(_estimated(cell, settings),
                            equation_label=labels.equations.get(cell.equation),
                            sample_label=labels.samples.get(cell.selection.sample))
                    for cell in p.cells)
    panels = tuple(replace(estimate_panel(p, cell, settings),
                           equation_label=labels.equations.get(cell.equation),
                           sample_label=labels.samples.get(cell.sample))
                   for cell in p.panels)
    sweep = None
    b = p.spec.body
    if b.bootstrap is not None or b.influence is not None or b.sweep is not None:
        from .robust.cells import robustness_cells

        results, sweep = robustness_cells(p, results, settings, execution or Execution())
    seen: dict[str, SampleSummary] = {}
    for cell in p.cells:
        sel = cell.selection
        if sel.sample not in seen:
            seen[sel.sample] = SampleSummary(sel.sample, sel.filter, sel.n_in_sample,
                                             p.table.frame.index[sel.members])
    prov = Provenance(
        spec_path=str(p.spec.path) if p.spec.path else None,
        spec_sha256=p.spec.sha256,
        data_path=str(p.table.path),
        data_sha256=p.table.sha256,
        data_rows=p.table.file_rows if p.table.file_rows is not None else p.table.n_economies,
        versions=versions(),
    )
    by_cell = {(r.equation, r.sample): (quantities(r), unavailable(r)) for r in results}
    by_cell.update({(r.equation, r.sample): panel_quantities(r) for r in panels})
    scorecard = tuple(
        TargetCheck(t.equation, t.sample, t.quantity, t.value,
                    by_cell[(t.equation, t.sample)][0].get(t.quantity), t.tolerance, t.source,
                    by_cell[(t.equation, t.sample)][1].get(t.quantity))
        for t in p.spec.body.target)
    with warnings.catch_warnings(record=True) as caught, np.errstate(all="warn"):
        warnings.simplefilter("always")
        checks = consistency_checks(results, settings)
    run_warnings = [*p.spec.notices, *p.table.warnings]
    run_warnings += numerical_notes(caught, "comparing the levels and growth forms")
    few = sorted({(r.unrestricted.n_clusters, r.column) for r in results
                  if r.unrestricted.n_clusters is not None
                  and r.unrestricted.n_clusters < FEW_CLUSTERS})
    if few:
        run_warnings.append(
            f"inference.cluster: {', '.join(f'{c} ({n} clusters)' for n, c in few)}; "
            f"cluster-robust standard errors are unreliable below about {FEW_CLUSTERS} clusters "
            "(common practice, no source)")
    return Findings(
        title=p.spec.body.title,
        spec_stem=p.spec.stem,
        settings=settings,
        samples=tuple(seen.values()),
        results=results,
        warnings=tuple(run_warnings),
        provenance=prov,
        caveats=caveats(p.spec, p.table),
        scorecard=scorecard,
        consistency=checks,
        labels=labels,
        analysis=analysis,
        panels=panels,
        sweep=sweep,
    )


def default_output_root(spec: Spec) -> Path:
    folder = spec.body.output.folder
    return (spec.base_dir / folder) if folder else Path("reports")
