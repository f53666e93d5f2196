"""The pairs and wild bootstraps of one equation on one sample, batched.

Draws come in chunks whose size depends on the data alone (:data:`CHUNK_ROWS`),
chunk ``i`` from the ``i``-th child of
the seed's :class:`numpy.random.SeedSequence`: the same seed gives the same draws,
bit for bit, whether chunks run here, in forked processes or on a cluster.

- **Pairs**: economies (or, under cluster covariance, whole clusters) are drawn
  with replacement; each draw refits the restricted and the unrestricted
  equation on the drawn rows (:func:`steadyfit.robust.kernel.fit_batch` with
  resample counts).  The restriction's Wald statistic is recentred at the
  sample's own restriction value.
- **Wild**: the restricted fit's residuals are multiplied by random weights
  (Rademacher: plus or minus one; Mammen's two-point weights), the same weight
  for every economy of a cluster under cluster covariance; the new responses are
  refitted.  The data are generated under the restriction, so the unrestricted
  fits give the restriction test's null distribution directly.

Intervals, from every draw that gives the quantity a number (a draw implying no
steady state or divergence is still a draw of the estimator): percentile;
bias-corrected (the percentile interval shifted by the share of draws below the
estimate; no acceleration); studentised (each draw's statistic divided by its own
delta-method standard error).  The half-life's intervals are lambda's mapped through
``ln 2 / lam``, unbounded above where lambda's reach zero.  With fewer than
:data:`MIN_DISTINCT` distinct values among the draws (a few clusters) no interval is
given.  The restriction's bootstrap p-value is the share
of draws whose Wald statistic is at least the sample's, ``(1 + count)/(1 + B)``.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr, ndtri

from ..design import Design
from ..estimators import CovarianceName, Fit, cluster_codes
from ..findings import EquationFindings, Estimate, TestResult
from .choices import BootstrapMethod, WildWeights
from .kernel import BatchFit, classical_pair_in_blocks, fit_pair, implied_batch
from .results import BootstrapFindings, BootstrapInterval

# Draws per chunk, the unit of seeding and of parallel work: about 2 million row weights per
# chunk, between 200 and 20,000 draws.  It depends on the data alone, never on the workers.
CHUNK_ROWS = 2_000_000
CHUNK_BOUNDS = (200, 20_000)

_GOLDEN = math.sqrt(5.0)
# Mammen's two-point distribution: mean 0, variance 1, third moment 1
_MAMMEN = (-(_GOLDEN - 1) / 2, (_GOLDEN + 1) / 2)
_MAMMEN_P = (_GOLDEN + 1) / (2 * _GOLDEN)


@dataclass(frozen=True)
class BootstrapSettings:
    """What to draw: the method, wild weights, replications, seed and interval level."""

    method: BootstrapMethod = "pairs"
    weights: WildWeights = "rademacher"
    replications: int = 1999
    seed: int = 20261203
    confidence: float = 0.95

    def chunks(self, rows: int) -> list[int]:
        """Draws per chunk for data of ``rows`` economies: full chunks, then the rest."""
        size = int(min(max(CHUNK_ROWS // max(rows, 1), CHUNK_BOUNDS[0]), CHUNK_BOUNDS[1]))
        full, rest = divmod(self.replications, size)
        return [size] * full + ([rest] if rest else [])


@dataclass(frozen=True, eq=False)
class Draws:
    """The statistics of a batch of draws: implied parameters (rows ``names``) and their
    delta-method standard errors, whether each draw's parameters are ordinary, and the
    restriction's Wald statistic (NaN without a restriction)."""

    names: tuple[str, ...]
    value: np.ndarray
    se: np.ndarray
    ordinary: np.ndarray
    wald: np.ndarray

    @staticmethod
    def join(parts: list[Draws]) -> Draws:
        return Draws(parts[0].names, np.hstack([p.value for p in parts]),
                     np.hstack([p.se for p in parts]),
                     np.concatenate([p.ordinary for p in parts]),
                     np.concatenate([p.wald for p in parts]))


def _wild_weights(rng: np.random.Generator, kind: str, shape: tuple[int, int]) -> np.ndarray:
    if kind == "rademacher":
        return rng.choice(np.array([-1.0, 1.0]), size=shape)
    return np.where(rng.uniform(size=shape) < _MAMMEN_P, _MAMMEN[0], _MAMMEN[1])


def _wald(design: Design, unres: BatchFit, centre: float) -> np.ndarray:
    """(R b - centre)^2 / (R V R') for every draw (NaN without a restriction)."""
    r = design.restriction[0]
    if not design.form.restricts:
        return np.full(unres.draws, np.nan)
    value = unres.coef @ r - centre
    var = np.einsum("i,bij,j->b", r, unres.cov, r)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(var > 0, value ** 2 / var, np.nan)


def draw_chunk(design: Design, restricted: Fit, unrestricted: Fit, covariance: CovarianceName,
               settings: BootstrapSettings, index: int) -> Draws:
    """Chunk ``index`` of the bootstrap of one cell (see the module docstring)."""
    size = settings.chunks(len(design.y))[index]
    rng = np.random.default_rng(np.random.SeedSequence(settings.seed).spawn(index + 1)[index])
    codes = cluster_codes(design.clusters)
    x_r, x_u, y = design.x_restricted, design.x_unrestricted, design.y
    n = len(y)
    if settings.method == "pairs":
        if codes is not None:
            groups = int(codes.max()) + 1
            counts = _counts(_drawn(rng, groups, size), groups)
            unres, res = fit_pair(x_u, x_r, y, covariance, clusters=codes,
                                  cluster_counts=counts)
        else:
            blocks = [_counts(_drawn(rng, n, m), n) for m in _blocks(size, n)]
            fitted = (classical_pair_in_blocks(x_u, x_r, y, blocks)
                      if covariance == "classical" else None)
            unres, res = fitted or fit_pair(x_u, x_r, y, covariance, weights=np.vstack(blocks),
                                            clusters=codes)
        centre = (float(unrestricted.coef @ design.restriction[0]) if design.form.restricts
                  else 0.0)
    else:
        groups = n if codes is None else int(codes.max()) + 1
        v = _wild_weights(rng, settings.weights, (size, groups))
        v = v if codes is None else v[:, codes]
        ys = restricted.fitted(x_r)[None, :] + restricted.resid[None, :] * v
        unres, res = fit_pair(x_u, x_r, y, covariance, responses=ys, clusters=codes)
        centre = 0.0
    implied = implied_batch(design.form, res)
    return Draws(implied.names, implied.value, implied.se, implied.ordinary,
                 _wald(design, unres, centre))


# draws per block when counting resamples: about 50,000 counts, which stay in cache
BLOCK_COUNTS = 50000


def _blocks(draws: int, units: int) -> list[int]:
    """Draws per block for ``units`` resampled units (see :data:`BLOCK_COUNTS`)."""
    step = max(1, BLOCK_COUNTS // units)
    return [min(step, draws - start) for start in range(0, draws, step)]


def _drawn(rng: np.random.Generator, units: int, rows: int) -> np.ndarray:
    """``rows`` resamples of ``units`` units drawn with replacement, as unit numbers in the
    narrowest integer type that holds them (fewer random bits to make)."""
    dtype = np.int16 if units <= np.iinfo(np.int16).max else np.int64
    return rng.integers(0, units, size=(rows, units), dtype=dtype)


def _counts(drawn: np.ndarray, size: int) -> np.ndarray:
    """How often each of ``size`` units appears in each row of ``drawn``, as floats: each
    row's units shifted into a range of their own (one pass that also widens them), counted
    with unit weights (no integer copy to convert)."""
    rows = drawn.shape[0]
    flat = _offsets(rows, size) + drawn.ravel()
    return np.bincount(flat, weights=_ones(drawn.size), minlength=rows * size
                       ).reshape(rows, size)


@functools.lru_cache(maxsize=4)
def _ones(size: int) -> np.ndarray:
    ones = np.ones(size)
    ones.flags.writeable = False
    return ones


@functools.lru_cache(maxsize=4)
def _offsets(rows: int, size: int) -> np.ndarray:
    """Where each of ``rows`` rows of ``size`` units starts, repeated for each unit."""
    out = np.repeat(size * np.arange(rows, dtype=np.intp), size)
    out.flags.writeable = False
    return out


Runner = Callable[[list[Callable[[], Draws]]], list[Draws]]


def draw_jobs(design: Design, restricted: Fit, unrestricted: Fit, covariance: CovarianceName,
              settings: BootstrapSettings) -> list[Callable[[], Draws]]:
    """One picklable job per chunk of the bootstrap of one cell."""
    return [_Job(design, restricted, unrestricted, covariance, settings, i)
            for i in range(len(settings.chunks(len(design.y))))]


def run_draws(design: Design, restricted: Fit, unrestricted: Fit, covariance: CovarianceName,
              settings: BootstrapSettings, runner: Runner | None = None) -> Draws:
    """Every chunk of the bootstrap through ``runner`` (default: here, in order)."""
    jobs = draw_jobs(design, restricted, unrestricted, covariance, settings)
    parts = runner(jobs) if runner is not None else [job() for job in jobs]
    return Draws.join(parts)


@dataclass(frozen=True, eq=False)
class _Job:
    """One chunk as a picklable call (for forked processes and remote workers)."""

    design: Design
    restricted: Fit
    unrestricted: Fit
    covariance: CovarianceName
    settings: BootstrapSettings
    index: int

    def __call__(self) -> Draws:
        with np.errstate(all="ignore"):  # a degenerate draw gives NaN and counts as such
            return draw_chunk(self.design, self.restricted, self.unrestricted,
                              self.covariance, self.settings, self.index)


# --- intervals --------------------------------------------------------------------------------


def quantiles(draws: np.ndarray, probabilities: np.ndarray | list[float]) -> np.ndarray:
    """numpy's default ("linear") quantiles, the same numbers as ``np.quantile``, from one
    sort of the draws: several times faster than its selection for the few quantiles an
    interval needs."""
    ordered = np.sort(np.asarray(draws, dtype=float))
    n = len(ordered)
    virtual = np.asarray(probabilities, dtype=float) * (n - 1)
    below = np.clip(np.floor(virtual).astype(np.intp), 0, n - 1)
    above = np.clip(below + 1, 0, n - 1)
    t = virtual - below
    a, b = ordered[below], ordered[above]
    step = b - a
    return np.where(t >= 0.5, b - step * (1 - t), a + step * t)


def percentile_interval(draws: np.ndarray, confidence: float) -> tuple[float, float]:
    tail = (1 - confidence) / 2
    lo, hi = quantiles(draws, [tail, 1 - tail])
    return float(lo), float(hi)


def bias_corrected_interval(draws: np.ndarray, estimate: float, confidence: float
                            ) -> tuple[float, float] | None:
    """The percentile interval at levels shifted by ``z0 = Phi^-1(share of draws below the
    estimate)``; None where every draw lies on one side of it."""
    below = float(np.mean(draws < estimate))
    if below in (0.0, 1.0):
        return None
    z0 = float(ndtri(below))
    z = float(ndtri(0.5 + confidence / 2))
    levels = ndtr(np.array([2 * z0 - z, 2 * z0 + z]))
    lo, hi = quantiles(draws, levels)
    return float(lo), float(hi)


def percentile_and_bias_corrected(draws: np.ndarray, estimate: float, confidence: float
                                  ) -> tuple[tuple[float, float], tuple[float, float] | None]:
    """:func:`percentile_interval` and :func:`bias_corrected_interval` from one pass over the
    draws (one partition for all four quantiles)."""
    tail = (1 - confidence) / 2
    below = float(np.mean(draws < estimate))
    if below in (0.0, 1.0):
        return percentile_interval(draws, confidence), None
    z0, z = float(ndtri(below)), float(ndtri(0.5 + confidence / 2))
    shifted = ndtr(np.array([2 * z0 - z, 2 * z0 + z]))
    q = quantiles(draws, [tail, 1 - tail, *shifted])
    return (float(q[0]), float(q[1])), (float(q[2]), float(q[3]))


def studentised_interval(draws: np.ndarray, draw_se: np.ndarray, estimate: float, se: float,
                         confidence: float) -> tuple[float, float] | None:
    """``[est - q_hi se, est - q_lo se]`` from the quantiles of ``(draw - est)/draw_se``;
    None without a finite standard error."""
    ok = np.isfinite(draw_se) & (draw_se > 0)
    if not (math.isfinite(se) and se > 0) or ok.sum() < 2:
        return None
    t = (draws[ok] - estimate) / draw_se[ok]
    tail = (1 - confidence) / 2
    q_lo, q_hi = quantiles(t, [tail, 1 - tail])
    return float(estimate - q_hi * se), float(estimate - q_lo * se)


# --- summary -----------------------------------------------------------------------------------


# fewer distinct values than this among the draws: too few resampling units (few clusters)
# for an interval to mean anything (common practice, no source)
MIN_DISTINCT = 100


def _distinct(values: np.ndarray) -> int:
    """How many distinct values (to 12 decimals) the draws take; counted on the first few
    thousand alone when those already hold enough (:data:`MIN_DISTINCT`)."""
    first = len(np.unique(np.round(values[:20 * MIN_DISTINCT], 12)))
    if first >= MIN_DISTINCT or len(values) <= 20 * MIN_DISTINCT:
        return first
    return len(np.unique(np.round(values, 12)))


def _half_life(lam: BootstrapInterval) -> BootstrapInterval:
    """The half-life's intervals mapped from lambda's through ``ln 2 / lam`` (decreasing):
    unbounded above where lambda's interval reaches zero or below (no convergence)."""
    def mapped(pair: tuple[float, float] | None) -> tuple[float, float] | None:
        if pair is None:
            return None
        lo, hi = pair
        return (math.log(2) / hi if hi > 0 else math.inf,
                math.log(2) / lo if lo > 0 else math.inf)

    value = math.log(2) / lam.estimate if lam.estimate > 0 else math.nan
    return BootstrapInterval("half_life", value, math.nan, mapped(lam.percentile),
                             mapped(lam.bias_corrected), mapped(lam.studentised),
                             lam.reason)


def _interval(name: str, values: np.ndarray, ses: np.ndarray, est: Estimate, tail: float,
              level: float) -> BootstrapInterval:
    """One quantity's intervals from every draw where it has a number: a draw whose
    parameters are not ordinary (no steady state, divergence) is still a draw of the
    estimator and stays in."""
    finite = np.isfinite(values)
    v, s = values[finite], ses[finite]
    total = len(values)
    spread = float(np.std(v, ddof=1)) if len(v) > 1 else math.nan
    missing = total - len(v)
    if missing > tail * total or len(v) < 2:
        return BootstrapInterval(name, est.value, spread, None, None, None,
                                 f"{missing} of {total} draws give no number, more than the "
                                 f"{tail:.1%} each end of the interval rests on")
    distinct = _distinct(v)
    if distinct < MIN_DISTINCT:
        return BootstrapInterval(name, est.value, spread, None, None, None,
                                 f"the draws take only {distinct} distinct values (too few "
                                 "economies or clusters to resample), so no interval")
    se = est.se if est.has_se else math.nan
    s = np.where(np.isfinite(s) & (s > 1e-12 * max(abs(est.value), 1.0)), s, np.nan)
    student = studentised_interval(v, s, est.value, se, level)
    percentile, bias = percentile_and_bias_corrected(v, est.value, level)
    reasons = [why for why, missing_one in (
        ("the estimate has no standard error, so no studentised interval", student is None),
        ("every draw lies on one side of the estimate, so no bias-corrected interval",
         bias is None)) if missing_one]
    return BootstrapInterval(name, est.value, spread, percentile, bias, student,
                             "; ".join(reasons) or None)


def summarise(draws: Draws, found: EquationFindings, settings: BootstrapSettings,
              by_cluster: bool) -> BootstrapFindings:
    """Intervals of every implied quantity of ``found`` and the restriction's bootstrap
    p-value, from the draws (see the module docstring)."""
    level = settings.confidence
    tail = (1 - level) / 2
    estimates = {v.estimate.name: v.estimate for v in found.shares}
    estimates.update({e.name: e for e in found.speed})
    rows = []
    for i, name in enumerate(draws.names):
        est = estimates.get(name)
        if est is None or not est.has_value:
            why = found.problem or (est.reason if est is not None else None) or "not estimated"
            rows.append(BootstrapInterval(name, math.nan, math.nan, None, None, None,
                                          f"no estimate to bootstrap ({why})"))
            continue
        rows.append(_interval(name, draws.value[i], draws.se[i], est, tail, level))
    lam = next((r for r in rows if r.name == "lam"), None)
    if lam is not None:
        rows.append(_half_life(lam) if lam.estimate == lam.estimate else
                    BootstrapInterval("half_life", math.nan, math.nan, None, None, None,
                                      lam.reason))
    return BootstrapFindings(settings.method,
                             settings.weights if settings.method == "wild" else None,
                             by_cluster, len(draws.ordinary), settings.seed, level,
                             int(draws.ordinary.sum()), tuple(rows),
                             _restriction(draws, found))


def _restriction(draws: Draws, found: EquationFindings) -> TestResult | None:
    """The sample's Wald statistic against its bootstrap distribution."""
    observed = found.wald_test
    if observed is None:
        return None
    name = "bootstrap Wald test of the restriction"
    if not observed.available:
        return TestResult.not_available(name, observed.null, observed.reason or "no statistic",
                                        "bootstrap")
    finite = draws.wald[np.isfinite(draws.wald)]
    if len(finite) == 0:
        return TestResult.not_available(name, observed.null, "no draw gave a Wald statistic",
                                        "bootstrap")
    p = (1 + int(np.sum(finite >= observed.statistic))) / (1 + len(finite))
    return TestResult(name, observed.statistic, p, (), "bootstrap", observed.null)
