"""Records of the robustness analyses, for the renderers (frozen, findings only)."""

from __future__ import annotations

from dataclasses import dataclass

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
