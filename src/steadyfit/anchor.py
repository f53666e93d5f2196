"""The national-accounts anchor: implied capital shares held against the measured one.

National accounts split income into what labour earns and the rest; one minus the
labour share is the measured capital share.  In both the textbook and the
augmented model that share is the physical capital share alpha: the return to
human capital is paid as wages, so it sits in the labour share (DOMAIN.md
sections 2 and 6).  Where the data map ``data.columns.labour_share``, every
implied alpha (cross-section, and each panel estimator's) is held against the
mean measured share of the economies its equation used, beside the fixed band.

Both come from the same economies, so the difference's standard error uses
their covariance, estimated from each economy's contribution to both
(:func:`covariance_with_alpha`; panel estimators treat them as independent).
That standard error counts sampling error only: the measured share is only as
good as the accounts behind it, and how the income of the self-employed is
split between labour and capital can move it by more (the caveat
:data:`MEASURED_SHARE_CAVEAT` says so in every report that uses it).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace

import numpy as np
import pandas as pd

from .equations import ModelForm
from .estimators import Fit, cluster_codes
from .findings import AnchorCheck, Estimate, MeasuredShare, ShareVerdict, TestResult
from .inference import normal_estimate, z_test

# The implied share national accounts measure (the others have no counterpart there).
ANCHORED = "alpha"

MEASURED_SHARE_CAVEAT = (
    "The measured capital share is one minus the labour share as the data give it, averaged "
    "over the economies each equation used. It is not a clean measure of \u03b1: where the "
    "accounts count the income of the self-employed (farmers, small traders) as capital "
    "income, the measured capital share is too high, most of all in poorer economies with many "
    "self-employed; Gollin (2002, JPE) finds labour shares of about 0.65 to 0.80 once that "
    "income is split (recalled from memory; check the paper). It also includes land and "
    "resource rents, which the model's \u03b1 does not separate. The test of \u03b1 against "
    "it counts sampling error only, not these errors of measurement, which can be larger; the "
    "mean is unweighted (each economy counts once), not the capital share of the group's total "
    "income.")


def measured_share(labour: pd.Series, economies: Sequence[str] | pd.Index, column: str,
                   years: tuple[int, int] | None = None) -> MeasuredShare:
    """The mean measured capital share (one minus the labour share) over ``economies``.

    ``labour`` holds labour shares as fractions, indexed by economy (missing where not
    known); economies without one are left out of the mean and counted.
    """
    n_sample = len(economies)
    wanted = economies if isinstance(economies, pd.Index) else pd.Index(list(economies))
    chosen = labour if labour.index.equals(wanted) else labour.reindex(wanted)
    values = chosen.to_numpy(dtype=float)
    values = values[~np.isnan(values)]
    n = len(values)
    nothing = dict(value=math.nan, se=math.nan, lowest=math.nan, highest=math.nan)
    if n == 0:
        return MeasuredShare(column, n=0, n_sample=n_sample, years=years,
                             reason="no economy of the sample has a labour share", **nothing)
    capital = 1.0 - values
    if n < 2:
        return MeasuredShare(column, n=n, n_sample=n_sample, years=years,
                             reason="only one economy of the sample has a labour share, too "
                             "few for the mean's standard error", **nothing)
    return MeasuredShare(column, float(capital.mean()),
                         float(capital.std(ddof=1) / math.sqrt(n)), float(capital.min()),
                         float(capital.max()), n, n_sample, years)


def covariance_with_alpha(form: ModelForm, restricted: Fit, x: np.ndarray,
                          capital: np.ndarray, clusters: np.ndarray | None = None) -> float:
    """The covariance of the implied alpha and the measured share's mean, from each
    economy's contribution to both (their influence functions).

    Alpha's contribution is ``J (X'X)^-1 x_i e_i`` over the restricted fit (``J`` its
    row of the form's Jacobian, zero on the constant); the mean's is ``(k_i - m) / N``
    for the ``N`` economies with a measured share ``k_i`` (``capital``, NaN where
    missing), zero for the others.  Under cluster covariance both are summed within
    clusters first.  NaN where alpha is not among the form's parameters.
    """
    names = form.parameters.names
    if "alpha" not in names:
        return math.nan
    slopes = restricted.coef[1:]
    jac = np.zeros(len(restricted.coef))
    jac[1:] = np.atleast_2d(form.parameters.forward.jacobian(slopes))[names.index("alpha")]
    influence_a: np.ndarray = (x @ np.linalg.solve(x.T @ x, jac)) * restricted.resid
    known = np.isfinite(capital)
    influence_m: np.ndarray = np.zeros(len(capital))
    if known.any():
        influence_m[known] = (capital[known] - capital[known].mean()) / known.sum()
    codes = cluster_codes(clusters)
    if codes is not None:
        influence_a = np.bincount(codes, influence_a)
        influence_m = np.bincount(codes, influence_m)
    return float(influence_a @ influence_m)


def hold_against(verdict: ShareVerdict, measured: MeasuredShare,
                 covariance: float | None = None) -> ShareVerdict:
    """The verdict with its :class:`AnchorCheck` (unchanged unless it is alpha's);
    ``covariance`` of the implied share and the measured mean (None: independent)."""
    e = verdict.estimate
    if e.name != ANCHORED:
        return verdict
    name, null = (f"z test of {e.name} = measured capital share",
                  f"{e.name} equals the sample's measured capital share")
    why = measured.reason
    if why is None and not e.has_se:
        why = e.reason or ("the implied share is not available" if not e.has_value
                           else "the implied share has no standard error")
    if why is not None:
        gap = Estimate(f"{e.name}_gap", math.nan, math.nan, math.nan, math.nan, e.confidence,
                       reason=why)
        return replace(verdict, anchor=AnchorCheck(
            measured, gap, TestResult.not_available(name, null, why), None,
            _in(measured.value, verdict.band) if measured.available else None))
    cross = covariance if covariance is not None and math.isfinite(covariance) else None
    variance = e.se ** 2 + measured.se ** 2 - 2 * (cross or 0.0)
    gap = normal_estimate(f"{e.name}_gap", e.value - measured.value, variance, e.confidence)
    test = (z_test(name, gap.value / gap.se, null) if gap.has_se and gap.se > 0 else
            TestResult.not_available(name, null, gap.reason or "the standard error is zero"))
    return replace(verdict, anchor=AnchorCheck(
        measured, gap, test, _in(measured.value, (e.low, e.high)),
        _in(measured.value, verdict.band), cross))


def anchored(shares: tuple[ShareVerdict, ...], measured: MeasuredShare | None,
             covariance: float | None = None) -> tuple[ShareVerdict, ...]:
    """Every verdict of ``shares`` held against ``measured`` (unchanged when it is None)."""
    if measured is None:
        return shares
    return tuple(hold_against(v, measured, covariance) for v in shares)


def _in(value: float, interval: tuple[float, float] | None) -> bool | None:
    if interval is None or not np.all(np.isfinite([value, *interval])):
        return None
    return bool(interval[0] <= value <= interval[1])
