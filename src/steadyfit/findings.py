"""Immutable records that carry results from inference to the renderers.

Renderers read these and nothing else.  Every record is a frozen dataclass.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal

import numpy as np
import pandas as pd

from .analysis import AnalysisData
from .data import Dropped, Selection
from .design import regressor_matrix, selected_columns
from .equations import ModelForm, Regressor
from .estimators import CovarianceName, Fit
from .labels import DisplayLabels, display

if TYPE_CHECKING:
    from .panel.results import PanelFindings
    from .robust.results import BootstrapFindings, InfluenceFindings, SweepFindings

BandStatus = Literal["inside", "overlaps", "outside"]
# how a test's p-value is read: from F, chi-square or normal tails, or from bootstrap draws
Distribution = Literal["F", "chi2", "normal", "bootstrap"]


@dataclass(frozen=True)
class TestResult:
    """One hypothesis test: statistic, p-value, degrees of freedom and the null.

    ``reason`` says why the test could not be computed (a singular or negative
    variance, too few clusters); the statistic and p-value are then NaN and no
    renderer may turn them into a verdict.
    """

    name: str
    statistic: float
    pvalue: float
    df: tuple[float, ...]
    distribution: Distribution
    null: str
    reason: str | None = None

    @property
    def available(self) -> bool:
        return self.reason is None

    def rejects(self, level: float) -> bool | None:
        """True or False at ``level``; None when the test is not available."""
        return None if self.reason is not None else bool(self.pvalue < level)

    @staticmethod
    def not_available(name: str, null: str, reason: str,
                      distribution: Distribution = "normal",
                      df: tuple[float, ...] = ()) -> TestResult:
        return TestResult(name, math.nan, math.nan, df, distribution, null, reason)

    def __str__(self) -> str:
        if self.reason is not None:
            return f"{self.name}: not available ({self.reason})"
        df = ", ".join(f"{d:g}" for d in self.df)
        dist = f"{self.distribution}({df})" if df else self.distribution
        return (f"{self.name}: {dist} statistic {self.statistic:.4g}, p-value {self.pvalue:.4g} "
                f"(null: {self.null})")

    def __repr__(self) -> str:
        if self.reason is not None:
            return f"TestResult({self.name}: not available)"
        return f"TestResult({self.name}: {self.statistic:.4g}, p = {self.pvalue:.3g})"


@dataclass(frozen=True)
class Estimate:
    """A derived quantity with its delta-method standard error and interval.

    ``exact_low``/``exact_high`` hold the interval obtained by mapping the
    endpoints of the coefficient's own interval, where the quantity is a
    monotone function of one coefficient (None elsewhere, or when that
    interval crosses the pole of the map).  An interval end may be infinite:
    unbounded on that side (a half-life whose speed interval reaches zero).

    ``reason`` says why something is not available: with a NaN ``value`` the
    estimate itself (``missing`` is then shown in its place, e.g. "none" for the
    half-life without convergence); with a NaN ``se`` its standard error and
    interval.  ``remark`` is a word shown beside the value ("divergence").
    """

    name: str
    value: float
    se: float
    low: float
    high: float
    confidence: float
    exact_low: float | None = None
    exact_high: float | None = None
    reason: str | None = None
    missing: str = "not available"
    remark: str | None = None

    @property
    def has_value(self) -> bool:
        return math.isfinite(self.value)

    @property
    def has_se(self) -> bool:
        return self.has_value and math.isfinite(self.se)

    def __repr__(self) -> str:
        return f"Estimate({_short(self)})"


def _short(e: Estimate) -> str:
    """'alpha = 0.342 (s.e. 0.029)', or 'half_life: none'."""
    if not e.has_value:
        return f"{e.name}: {e.missing}"
    return f"{e.name} = {e.value:.4g}" + (f" (s.e. {e.se:.3g})" if e.has_se else "")


@dataclass(frozen=True)
class MeasuredShare:
    """The capital share the national accounts give a sample: one minus the labour share.

    ``value`` is the mean over the ``n`` economies of the estimation sample that have a
    labour share (of ``n_sample``), ``se`` the standard error of that mean across
    economies, ``lowest``/``highest`` the range over those economies; ``years`` the years
    averaged within each economy (annual data).  With ``reason`` set there is no value.
    """

    column: str
    value: float
    se: float
    lowest: float
    highest: float
    n: int
    n_sample: int
    years: tuple[int, int] | None = None
    reason: str | None = None

    @property
    def available(self) -> bool:
        return self.reason is None


@dataclass(frozen=True)
class AnchorCheck:
    """An implied capital share held against the sample's measured capital share.

    ``gap`` is the implied share minus the measured one; its standard error combines
    both with ``covariance``, their covariance estimated from each economy's contribution
    to both (None: treated as independent, as for panel estimators).  ``test`` is the z
    test that they are equal, counting sampling error only; ``inside`` whether the
    measured share lies in the implied share's interval and ``measured_in_band`` whether
    it lies in the plausible band (None where either is not available).
    """

    measured: MeasuredShare
    gap: Estimate
    test: TestResult
    inside: bool | None
    measured_in_band: bool | None
    covariance: float | None = None


@dataclass(frozen=True)
class ShareVerdict:
    """An implied share judged against its plausibility band and a test point, and (the
    physical capital share, where the data carry a labour share) against national
    accounts."""

    estimate: Estimate
    band: tuple[float, float] | None
    band_status: BandStatus | None
    point: float | None
    point_test: TestResult | None
    interval_reaches_one: bool
    anchor: AnchorCheck | None = None

    @property
    def name(self) -> str:
        return self.estimate.name

    def __repr__(self) -> str:
        band = f", band {self.band[0]:g} to {self.band[1]:g}" if self.band else ""
        status = f": {self.band_status}" if self.band_status else ""
        return f"ShareVerdict({_short(self.estimate)}{band}{status})"


@dataclass(frozen=True)
class CrossCheckResult:
    """A quantity implied both by the investment slopes and by the n + g + delta slope."""

    quantity: str
    from_rates: Estimate
    from_growth: Estimate
    gap: Estimate
    test: TestResult

    def __repr__(self) -> str:
        return f"CrossCheckResult({self.quantity}: gap {_short(self.gap)}, {self.test!r})"


@dataclass(frozen=True)
class NonlinearFit:
    """Nonlinear least squares in the structural parameters (restriction imposed)."""

    estimates: tuple[Estimate, ...]  # classical standard errors
    robust: tuple[Estimate, ...]  # the run's robust covariance (HC1 when it is classical)
    robust_covariance: str
    intercept: float
    ssr: float
    evaluations: int

    def estimate(self, name: str, robust: bool = False) -> Estimate | None:
        return next((e for e in (self.robust if robust else self.estimates) if e.name == name),
                    None)

    def __repr__(self) -> str:
        return (f"NonlinearFit({', '.join(_short(e) for e in self.estimates)}; "
                f"{self.evaluations} evaluations)")


@dataclass(frozen=True)
class MinimumDistanceFit:
    """Parameters fitted to the unrestricted slopes, with the over-identification test."""

    estimates: tuple[Estimate, ...]
    overid: TestResult
    covariance: str  # of the unrestricted slopes used as the weight
    reason: str | None = None  # why the fit could not be made (the estimates then hold none)

    def estimate(self, name: str) -> Estimate | None:
        return next((e for e in self.estimates if e.name == name), None)

    def __repr__(self) -> str:
        if self.reason is not None:
            return "MinimumDistanceFit(not available)"
        return f"MinimumDistanceFit({', '.join(_short(e) for e in self.estimates)})"


@dataclass(frozen=True)
class Observations:
    """The estimation sample of one result, for figures: log income and the regressors.

    ``x`` is the unrestricted design (constant first), columns named like the
    unrestricted fit's coefficients; ``x_restricted`` likewise for the restricted
    fit.  ``y`` is the dependent variable (log income, or its log change).  They are
    made from the data table's columns when asked for, so findings hold no copy of
    each sample.
    """

    selection: Selection = field(repr=False)
    form: ModelForm = field(repr=False)

    @property
    def economies(self) -> Sequence[str]:
        """A pandas Index (never a per-economy copy)."""
        return self.selection.economies

    @property
    def y(self) -> np.ndarray:
        return self.selection.column(self.form.dependent).astype(float, copy=False)

    def _matrix(self, regs: tuple[Regressor, ...]) -> np.ndarray:
        return regressor_matrix(selected_columns(self.selection), regs, self.selection.nobs)

    @property
    def x(self) -> np.ndarray:
        return self._matrix(self.form.unrestricted)

    @property
    def x_restricted(self) -> np.ndarray:
        return self._matrix(self.form.restricted)

    @property
    def clusters(self) -> np.ndarray | None:
        """Cluster labels under cluster-robust covariance."""
        sel = self.selection
        return None if sel.cluster is None else sel.column(sel.cluster)

    def __repr__(self) -> str:
        return (f"Observations({self.selection.nobs} economies, {len(self.form.unrestricted)} "
                "regressors)")


@dataclass(frozen=True)
class EquationFindings:
    """Everything estimated for one equation on one sample."""

    equation: str
    sample: str
    form_key: str
    description: str
    restriction_text: str
    economies: Sequence[str]  # a pandas Index (never a per-economy copy)
    dropped: tuple[Dropped, ...]
    n_in_sample: int
    dependent_label: str
    unrestricted: Fit
    restricted: Fit
    f_test: TestResult | None  # None where the form imposes no restriction
    wald_test: TestResult | None
    shares: tuple[ShareVerdict, ...]
    speed: tuple[Estimate, ...]  # lam and half_life for growth forms
    unrestricted_shares: tuple[Estimate, ...]
    crosscheck: CrossCheckResult | None
    problem: str | None  # why the estimates imply no ordinary parameters, or None
    observations: Observations
    notes: tuple[str, ...] = ()
    minimum_distance: MinimumDistanceFit | None = None
    nonlinear: NonlinearFit | None = None
    equation_label: str | None = None  # display labels from the spec's [labels]
    sample_label: str | None = None
    bootstrap: BootstrapFindings | None = None  # with [bootstrap]
    influence: InfluenceFindings | None = None  # with [influence]

    @property
    def steady_state(self) -> bool:
        """True when the restricted estimates imply ordinary parameters (see ``problem``)."""
        return self.problem is None

    def speed_estimate(self, name: str) -> Estimate | None:
        return next((e for e in self.speed if e.name == name), None)

    @property
    def nobs(self) -> int:
        return self.unrestricted.nobs

    @property
    def column(self) -> str:
        """Identifiers of the equation and sample, as messages and notes name them."""
        return f"{self.equation} / {self.sample}"

    @property
    def heading(self) -> str:
        """The equation and sample as tables, figures and captions show them: the spec's
        display labels, else the identifiers with underscores read as spaces."""
        return (f"{self.equation_label or display(self.equation)} / "
                f"{self.sample_label or display(self.sample)}")

    def share(self, name: str) -> ShareVerdict | None:
        return next((s for s in self.shares if s.name == name), None)

    def __repr__(self) -> str:
        parts = [f"{self.column} [{self.form_key}], {self.nobs} economies"]
        if self.f_test is not None:
            parts.append("restriction " + (f"p = {self.f_test.pvalue:.3g}"
                                           if self.f_test.available else "not testable"))
        parts += [_short(v.estimate) for v in self.shares]
        lam = self.speed_estimate("lam")
        if lam is not None:
            parts.append(_short(lam))
        return f"EquationFindings({'; '.join(parts)})"


@dataclass(frozen=True)
class ConsistencyCheck:
    """One quantity estimated by a levels and a growth equation on the same sample."""

    sample: str
    levels_equation: str
    growth_equation: str
    quantity: str  # "lam", "alpha" or "beta"
    from_levels: Estimate
    from_growth: Estimate
    difference: Estimate  # growth minus levels
    test: TestResult
    joint_covariance: bool  # False: the two fits were treated as independent
    n_clusters: int | None = None

    def __repr__(self) -> str:
        return (f"ConsistencyCheck({self.levels_equation} vs {self.growth_equation} on "
                f"{self.sample}: {self.quantity}, {self.test!r})")


@dataclass(frozen=True)
class TargetCheck:
    """A published value compared with ours."""

    equation: str
    sample: str
    quantity: str
    published: float
    ours: float | None  # None: the quantity is not available (see ``reason``)
    tolerance: float
    source: str
    reason: str | None = None

    @property
    def difference(self) -> float | None:
        return None if self.ours is None else self.ours - self.published

    @property
    def met(self) -> bool:
        """A target on a quantity that is not available is not met."""
        d = self.difference
        return d is not None and math.isfinite(d) and abs(d) <= self.tolerance


@dataclass(frozen=True)
class SampleSummary:
    """A sample: its filter and its economies (a pandas Index in the data's order)."""

    name: str
    filter: str
    n_selected: int
    members: Sequence[str] = ()


@dataclass(frozen=True)
class Settings:
    """The assumptions and inference settings a run used (echoed in every output)."""

    g_plus_delta: float
    span_years: float | None
    covariance: CovarianceName
    cluster: str | None
    confidence: float
    bands: dict[str, tuple[float, float]]
    points: dict[str, float]
    non_positive: str
    max_evaluations: int = 2000
    digits: int = 3
    significance_marks: bool = False
    figure_formats: tuple[str, ...] = ("svg",)
    latex_max_columns: int | None = None
    latex_landscape: bool = False
    figures: str = "all"  # "all", "key" (share chart and convergence plots) or "none"


@dataclass(frozen=True)
class Provenance:
    spec_path: str | None
    spec_sha256: str
    data_path: str
    data_sha256: str
    data_rows: int
    versions: dict[str, str]


@dataclass(frozen=True)
class Findings:
    """The complete result of a run: what the renderers turn into a run folder."""

    title: str
    spec_stem: str
    settings: Settings
    samples: tuple[SampleSummary, ...]
    results: tuple[EquationFindings, ...]
    warnings: tuple[str, ...]
    provenance: Provenance
    caveats: tuple[str, ...] = field(default=())
    scorecard: tuple[TargetCheck, ...] = ()
    consistency: tuple[ConsistencyCheck, ...] = ()
    labels: DisplayLabels = field(default_factory=DisplayLabels)
    analysis: AnalysisData | None = None  # the analysis data of the replication package
    panels: tuple[PanelFindings, ...] = ()  # panel equations x samples
    sweep: SweepFindings | None = None  # with [sweep]

    @property
    def targets_met(self) -> bool:
        return all(t.met for t in self.scorecard)

    def __repr__(self) -> str:
        cells = len(self.results)
        return (f"Findings({self.title!r}: {cells} equation x sample result"
                f"{'s' if cells != 1 else ''} on {len(self.samples)} samples, "
                f"{len(self.consistency)} levels-versus-growth checks, "
                + (f"{len(self.panels)} panel results, " if self.panels else "") +
                f"{sum(t.met for t in self.scorecard)} of {len(self.scorecard)} targets met; "
                "print() it for the key results)")

    def anchored(self) -> tuple[tuple[str, ShareVerdict], ...]:
        """Every implied share held against the measured capital share, with the heading of
        its result (and, for panels, its estimator), cross-section results first."""
        out = [(r.heading, v) for r in self.results for v in r.shares if v.anchor is not None]
        out += [(f"{p.heading}: {f.title}", v) for p in self.panels for f in p.estimators
                for v in f.shares if v.anchor is not None]
        return tuple(out)

    def result(self, equation: str, sample: str) -> EquationFindings:
        for r in self.results:
            if r.equation == equation and r.sample == sample:
                return r
        raise KeyError(f"no result for equation '{equation}' on sample '{sample}'")

    def to_frame(self) -> pd.DataFrame:
        """Every named quantity (see :mod:`steadyfit.quantities`), one row per equation and
        sample, for notebooks and scripts."""
        from .quantities import quantities

        rows = {(r.equation, r.sample): quantities(r) for r in self.results}
        frame = pd.DataFrame.from_dict(rows, orient="index")
        frame.index = pd.MultiIndex.from_tuples(list(rows), names=["equation", "sample"])
        return frame

    def __str__(self) -> str:
        from .report.text import render_text

        return render_text(self)

    def _repr_html_(self) -> str:
        from .report.html import render_html_fragment

        return render_html_fragment(self)
