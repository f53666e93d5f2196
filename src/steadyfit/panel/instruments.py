"""The GMM instrument matrix of a dynamic panel, built from its grid.

Difference GMM (Arellano and Bond 1991) instruments the equation in first
differences at period t with levels dated t-2 and earlier of the dependent
variable: one column per period and lag (the block-diagonal layout, a zero
wherever the lag is missing or belongs to another period), or one column per
lag when collapsed.  System GMM (Blundell and Bond 1998) adds the equation in
levels, instrumented by differences dated t-1.  A regressor is exogenous
(its difference instruments itself), predetermined (levels dated t-1 and
earlier; in levels its difference dated t) or endogenous (t-2 and earlier; in
levels its difference dated t-1).  Columns that are zero on every row are left
out: they carry no moment.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .design import DynamicPanel, lag_name

# the earliest lag of a variable's level usable in the differenced equation, and the lag of its
# difference usable in the levels equation
_FIRST_LAG = {"dependent": 2, "predetermined": 1, "endogenous": 2}
_LEVEL_LAG = {"dependent": 1, "predetermined": 0, "endogenous": 1}


def _columns(values: np.ndarray, e: np.ndarray, t: np.ndarray, rows: np.ndarray,
             lags: list[int], collapse: bool, name: str, periods: tuple[int, ...]
             ) -> tuple[list[np.ndarray], list[str]]:
    """GMM-style columns: ``values`` (economies x periods) dated t-l for each l in ``lags``,
    on the rows selected by ``rows``; one column per period and lag (lag by lag, periods in
    order), or one per lag when collapsed.

    The columns are first laid out on the grid (economies x periods x columns: in period p,
    column (l, p) holds the value dated p - l) and then read off at each row's economy and
    period, so a missing lag is a zero and rows of other periods get zeros."""
    reach = int(t[rows].max(initial=-1)) + 1  # periods the rows reach
    pairs = [(lag, p) for lag in lags for p in range(lag, reach)]  # lag by lag, then period
    if collapse:
        pairs = [(lag, -1) for lag in lags if lag < reach]
    clean = np.where(np.isfinite(values), values, 0.0)
    grid = np.zeros((values.shape[0], max(reach, 1), len(pairs)))
    for c, (lag, p) in enumerate(pairs):
        if p >= 0:
            grid[:, p, c] = clean[:, p - lag]
        else:
            grid[:, lag:reach, c] = clean[:, :reach - lag]
    Z = grid[e, np.minimum(t, max(reach - 1, 0))] * rows[:, None]
    names = [lag_name(name, lag) if p < 0 else f"{lag_name(name, lag)} [{periods[p]}]"
             for lag, p in pairs]
    return [Z], names


def gmm_instruments(panel: DynamicPanel, e: np.ndarray, t: np.ndarray, block: np.ndarray,
                    kinds: Mapping[str, str], max_lag: int | None, collapse: bool
                    ) -> tuple[np.ndarray, list[str]]:
    """Instrument columns (without period effects) for stacked rows at economies ``e``,
    periods ``t``, equation ``block`` (0 differenced, 1 levels)."""
    if max_lag is not None and max_lag < 1:
        raise ValueError("max_lag must be 1 or more")
    deepest = int(t.max(initial=0)) if max_lag is None else max_lag  # no lag reaches further
    diff, level = block == 0, block == 1
    dy, dR, _ = panel.differences  # every difference, computed once per panel
    # (kind, name, levels, differences) of each variable instrumented GMM-style
    sources: list[tuple[str, str, np.ndarray, np.ndarray]] = [
        ("dependent", panel.dependent, panel.y, dy)]
    exogenous: list[int] = []
    for j, name in enumerate(panel.x_names):
        kind = kinds.get(name, "exogenous")
        if kind == "exogenous":
            exogenous.append(j)
        else:
            sources.append((kind, name, panel.x[:, :, j], dR[:, :, panel.lags + j]))
    any_level = bool(level.any())
    cols: list[np.ndarray] = []  # blocks of columns
    names: list[str] = []
    for kind, name, values, changes in sources:
        first = _FIRST_LAG[kind]
        c, n = _columns(values, e, t, diff, list(range(first, max(first, deepest) + 1)),
                        collapse, name, panel.periods)
        cols += c
        names += n
        if any_level:
            c, n = _columns(changes, e, t, level, [_LEVEL_LAG[kind]], collapse, f"D.{name}",
                            panel.periods)
            cols += c
            names += n
    if exogenous:  # exogenous regressors: their difference, in each equation
        src = dR[e, t][:, [panel.lags + j for j in exogenous]]
        src = np.where(np.isfinite(src), src, 0.0)
        cols.append(src * diff[:, None])
        names += [f"D.{panel.x_names[j]}" for j in exogenous]
        if any_level:
            cols.append(src * level[:, None])
            names += [f"D.{panel.x_names[j]} [levels]" for j in exogenous]
    Z = np.hstack(cols) if cols else np.empty((len(e), 0))
    keep = np.asarray(Z.any(axis=0), dtype=bool)
    if keep.all():
        return Z, names
    return Z[:, keep], [n for n, k in zip(names, keep, strict=True) if k]
