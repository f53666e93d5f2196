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

Every column is filled cell by cell: the rows of one equation and period take the
grid's values dated the column's lag before that period, so the matrix is
written once, without gathering whole grids.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .design import Cells, DynamicPanel, lag_name

# the earliest lag of a variable's level usable in the differenced equation, and the lag of its
# difference usable in the levels equation
_FIRST_LAG = {"dependent": 2, "predetermined": 1, "endogenous": 2}
_LEVEL_LAG = {"dependent": 1, "predetermined": 0, "endogenous": 1}

# one column: the (rows, values) pieces that fill it, one piece a period
_Column = list[tuple[np.ndarray, np.ndarray]]


def _finite(values: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(values), values, 0.0)


def _gmm_style(values: np.ndarray, cells: Cells, block: int, lags: list[int], collapse: bool,
               name: str, periods: tuple[int, ...]) -> tuple[list[_Column], list[str]]:
    """Columns of ``values`` (economies x periods) dated t-l for each l in ``lags``, on the
    rows of equation ``block``: one per period and lag (lag by lag, periods in order), or one
    per lag when collapsed."""
    reach = max((p for b, p in cells if b == block), default=-1) + 1  # periods the rows reach
    cols: list[_Column] = []
    names: list[str] = []
    for lag in lags:
        pieces = [(p, cells[block, p]) for p in range(lag, reach) if (block, p) in cells]
        filled = [(rows, values[econ, p - lag]) for p, (rows, econ) in pieces]
        if collapse:
            if filled:
                cols.append(filled)
                names.append(lag_name(name, lag))
            continue
        cols += [[piece] for piece in filled]
        names += [f"{lag_name(name, lag)} [{periods[p]}]" for p, _ in pieces]
    return cols, names


def gmm_instruments(panel: DynamicPanel, cells: Cells, kinds: Mapping[str, str],
                    max_lag: int | None, collapse: bool, extra: int = 0
                    ) -> tuple[np.ndarray, list[str]]:
    """The instrument matrix (without period effects) of the stacked rows ``cells`` lays out,
    with ``extra`` zero columns after them for the caller to fill."""
    if max_lag is not None and max_lag < 1:
        raise ValueError("max_lag must be 1 or more")
    deepest = max((p for _, p in cells), default=0) if max_lag is None else max_lag
    dy, dR, _ = panel.differences  # every difference, computed once per panel
    levels = any(b == 1 for b, _ in cells)
    # (kind, name, levels, differences) of each variable instrumented GMM-style
    sources: list[tuple[str, str, np.ndarray, np.ndarray]] = [
        ("dependent", panel.dependent, panel.y, dy)]
    exogenous: list[int] = []
    for j, name in enumerate(panel.x_names):
        kind = kinds.get(name, "exogenous")
        if kind == "exogenous":
            exogenous.append(panel.lags + j)
        else:
            sources.append((kind, name, panel.x[:, :, j], dR[:, :, panel.lags + j]))
    cols: list[_Column] = []
    names: list[str] = []
    for kind, name, values, changes in sources:
        first = _FIRST_LAG[kind]
        c, n = _gmm_style(_finite(values), cells, 0, list(range(first, max(first, deepest) + 1)),
                          collapse, name, panel.periods)
        cols += c
        names += n
        if levels:
            c, n = _gmm_style(_finite(changes), cells, 1, [_LEVEL_LAG[kind]], collapse,
                              f"D.{name}", panel.periods)
            cols += c
            names += n
    # exogenous regressors: their difference, in each equation (a block for each equation)
    blocks = [0, 1] if levels else [0]
    for label in ("", " [levels]")[:len(blocks)]:
        names += [f"D.{panel.x_names[j - panel.lags]}{label}" for j in exogenous]
    Z = np.zeros((cells.nobs, len(cols) + len(blocks) * len(exogenous) + extra))
    for k, col in enumerate(cols):
        for rows, v in col:
            Z[rows, k] = v
    if exogenous:
        changes = _finite(panel.stacked[1][0, cells.economy, cells.period][:, exogenous])
        for i, block in enumerate(blocks):
            at = len(cols) + i * len(exogenous)
            Z[:, at:at + len(exogenous)] = changes * (cells.block == block)[:, None]
    keep = np.asarray(Z.any(axis=0), dtype=bool)
    keep[len(names):] = True  # the caller's columns
    if keep.all():
        return Z, names
    return Z[:, keep], [n for n, k in zip(names, keep, strict=False) if k]
