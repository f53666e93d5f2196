"""Records of the robustness analyses, for the renderers (frozen, findings only)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..findings import TestResult


@dataclass(frozen=True)
class BootstrapInterval:
    """One quantity's bootstrap intervals beside its estimate.

    ``spread`` is the standard deviation of the draws (the bootstrap standard error);
    each interval is None where it cannot be formed, and ``reason`` then says why.
    """

    name: str
    estimate: float
    spread: float
    percentile: tuple[float, float] | None
    bias_corrected: tuple[float, float] | None
    studentised: tuple[float, float] | None
    reason: str | None = None

    @property
    def available(self) -> bool:
        return self.percentile is not None


@dataclass(frozen=True)
class BootstrapFindings:
    """The bootstrap of one equation on one sample.

    ``ordinary`` counts the draws whose parameters are ordinary (a steady state and, in
    growth forms, convergence); intervals come from those draws.  ``restriction`` is the
    restriction's Wald statistic with its bootstrap p-value (None without a restriction).
    """

    method: str  # "pairs" or "wild"
    weights: str | None  # the wild bootstrap's weights
    by_cluster: bool
    replications: int
    seed: int
    confidence: float
    ordinary: int
    intervals: tuple[BootstrapInterval, ...]
    restriction: TestResult | None

    @property
    def description(self) -> str:
        """'pairs bootstrap, 1999 draws' or 'wild bootstrap (Rademacher weights) by cluster'."""
        kind = f"{self.method} bootstrap" + (f" ({self.weights.capitalize()} weights)"
                                             if self.weights else "")
        return (kind + (" by cluster" if self.by_cluster else "")
                + f", {self.replications} draws, seed {self.seed}")

    def interval(self, name: str) -> BootstrapInterval | None:
        return next((i for i in self.intervals if i.name == name), None)

    def __repr__(self) -> str:
        return f"BootstrapFindings({self.description}; {self.ordinary} ordinary)"


@dataclass(frozen=True)
class InfluentialEconomy:
    """One economy named by the leave-one-out analysis: how far leaving it out moves each
    implied quantity (left out minus all), the restriction's Wald p-value without it, its
    Cook's distance, the quantities it moves beyond the threshold, and whether the fit
    without it still implies ordinary parameters."""

    economy: str
    shifts: dict[str, float]
    restriction_p: float | None
    cooks_distance: float
    moves: tuple[str, ...]
    ordinary: bool = True


@dataclass(frozen=True, eq=False)
class InfluenceFindings:
    """Leave-one-economy-out results of one equation on one sample.

    ``shifts`` has one row per quantity of ``quantities`` and one column per economy of
    ``economies`` (NaN where the fit without that economy implies no ordinary parameters);
    ``restriction_p`` and ``cooks`` one entry per economy.  ``named`` lists the economies
    that move a share by more than ``threshold`` (the speed of convergence by more than
    ``speed_threshold``), whose Cook's distance exceeds ``cooks_cutoff``, or without which the
    fit implies no ordinary parameters; the largest effect (relative to its threshold)
    first.
    """

    threshold: float
    speed_threshold: float
    cooks_cutoff: float
    quantities: tuple[str, ...]
    economies: tuple[str, ...]
    shifts: np.ndarray
    restriction_p: np.ndarray
    cooks: np.ndarray
    named: tuple[InfluentialEconomy, ...]

    def __repr__(self) -> str:
        return (f"InfluenceFindings({len(self.economies)} economies left out one at a time; "
                f"{len(self.named)} named)")


@dataclass(frozen=True)
class SweepRow:
    """One specification of a sweep: its settings (``dropped`` is the group of the
    ``drop_each`` column left out, None for none), the economies used, the implied
    quantities with their delta-method intervals, the restriction's Wald p-value, and why
    the numbers are missing (``reason``) when they are."""

    equation: str
    sample: str
    g_plus_delta: float
    covariance: str
    dropped: str | None
    nobs: int
    values: dict[str, float]
    intervals: dict[str, tuple[float, float]]
    restriction_p: float | None
    reason: str | None = None


@dataclass(frozen=True, eq=False)
class SweepFindings:
    """Every specification of ``[sweep]``, column by column (one entry per specification):
    its settings (``dropped`` is the group of ``drop_each`` left out, None for none), the
    economies used, the implied ``quantities`` with delta-method intervals (rows of
    ``values``, ``low`` and ``high``; NaN where a quantity is missing), the restriction's
    Wald p-value (NaN without one) and why a specification has no numbers (``reasons``)."""

    equation: tuple[str, ...]
    sample: tuple[str, ...]
    g_plus_delta: np.ndarray
    covariance: tuple[str, ...]
    dropped: tuple[str | None, ...]
    nobs: np.ndarray
    quantities: tuple[str, ...]
    values: np.ndarray
    low: np.ndarray
    high: np.ndarray
    restriction_p: np.ndarray
    reasons: tuple[str | None, ...]
    shown: dict[str, tuple[str, ...]]  # equation -> the quantities its form implies
    bands: dict[str, tuple[float, float]]
    confidence: float
    drop_each: str | None = None

    def __len__(self) -> int:
        return len(self.equation)

    @staticmethod
    def join(parts: list[SweepFindings], bands: dict[str, tuple[float, float]],
             confidence: float, drop_each: str | None) -> SweepFindings:
        """The specifications of every part in one set of columns, quantities aligned by
        name."""
        names = tuple(q for q in ("alpha", "beta", "lam")
                      if any(q in p.quantities for p in parts))

        def aligned(field: str) -> np.ndarray:
            blocks = []
            for p in parts:
                out = np.full((len(names), len(p)), np.nan)
                for j, q in enumerate(p.quantities):
                    out[names.index(q)] = getattr(p, field)[j]
                blocks.append(out)
            return np.hstack(blocks) if blocks else np.zeros((len(names), 0))

        def flat(field: str) -> np.ndarray:
            return (np.concatenate([getattr(p, field) for p in parts]) if parts
                    else np.zeros(0))

        def chained(field: str) -> tuple:  # type: ignore[type-arg]
            return sum((getattr(p, field) for p in parts), ())

        shown: dict[str, tuple[str, ...]] = {}
        for p in parts:
            for eq, qs in p.shown.items():
                shown.setdefault(eq, qs)
        return SweepFindings(chained("equation"), chained("sample"), flat("g_plus_delta"),
                             chained("covariance"), chained("dropped"), flat("nobs"), names,
                             aligned("values"), aligned("low"), aligned("high"),
                             flat("restriction_p"), chained("reasons"), shown, bands,
                             confidence, drop_each)

    @property
    def rows(self) -> tuple[SweepRow, ...]:
        """One record per specification (for renderers and notebooks)."""
        out = []
        for b in range(len(self)):
            names = self.shown[self.equation[b]]
            idx = [self.quantities.index(q) for q in names]
            p = float(self.restriction_p[b])
            out.append(SweepRow(
                self.equation[b], self.sample[b], float(self.g_plus_delta[b]),
                self.covariance[b], self.dropped[b], int(self.nobs[b]),
                {q: float(self.values[j, b]) for q, j in zip(names, idx, strict=True)},
                {q: (float(self.low[j, b]), float(self.high[j, b]))
                 for q, j in zip(names, idx, strict=True)},
                None if np.isnan(p) else p, self.reasons[b]))
        return tuple(out)

    def equations(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(self.equation))

    def _of(self, equation: str) -> np.ndarray:
        return np.asarray(self.equation) == equation

    def share_overlapping(self, equation: str, name: str) -> tuple[int, int]:
        """How many of the equation's specifications with a ``name`` interval have it
        overlapping the band, and how many have one."""
        if name not in self.quantities:
            return 0, 0
        j = self.quantities.index(name)
        lo, hi = self.low[j, self._of(equation)], self.high[j, self._of(equation)]
        ok = np.isfinite(lo) & np.isfinite(hi)
        band = self.bands.get(name)
        if band is None:
            return 0, int(ok.sum())
        return int(((lo <= band[1]) & (hi >= band[0]) & ok).sum()), int(ok.sum())

    def share_rejecting(self, equation: str, level: float) -> tuple[int, int]:
        """How many of the equation's specifications reject the restriction at ``level``,
        and how many have a test."""
        p = self.restriction_p[self._of(equation)]
        tested = np.isfinite(p)
        return int((p[tested] < level).sum()), int(tested.sum())

    def __repr__(self) -> str:
        return f"SweepFindings({len(self)} specifications)"
