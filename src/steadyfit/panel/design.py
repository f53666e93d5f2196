"""Dynamic panels on a full economy x period grid, and the stacked designs estimators fit.

:class:`DynamicPanel` holds a dependent variable, its lags and other regressors
(each at a chosen lag) on the full grid of economies and periods: a period an
economy lacks stays a row of NaNs, so every lag and difference is taken by
period, never by row position, and gaps are never closed up.  The builders
below turn it into the rows each estimator fits:

- :func:`levels_design`: the equation in levels (pooled OLS, within);
- :func:`difference_design`: the equation in first differences with ``y(t-2)``
  as the instrument of the differenced lag (first-difference 2SLS);
- :func:`gmm_design`: the differenced equation (and, for system GMM, the levels
  equation) with the instrument matrix of :mod:`steadyfit.panel.instruments`.

Rows come sorted by economy (then equation block, then period); ``economy``
holds integer codes into ``DynamicPanel.economies``.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property, reduce
from typing import Literal, get_args

import numpy as np
import pandas as pd

from ..errors import InputError, did_you_mean, quote

Treatment = Literal["exogenous", "predetermined", "endogenous"]
TREATMENTS: tuple[str, ...] = get_args(Treatment)


def lag_name(column: str, lag: int) -> str:
    """The name of a lagged column: 'n(t-1)'; the column itself at lag 0."""
    return column if lag == 0 else f"{column}(t-{lag})"


@dataclass(frozen=True)
class DynamicPanel:
    """A dependent variable with ``lags`` of its own lags and other regressors on a grid.

    ``y`` is (economies x periods); ``x`` is (economies x periods x regressors),
    each regressor already at its lag.  Missing values are NaN.
    """

    economies: tuple[str, ...]
    periods: tuple[int, ...]
    dependent: str
    y: np.ndarray
    lags: int
    x_names: tuple[str, ...]
    x: np.ndarray

    def __repr__(self) -> str:
        return (f"DynamicPanel({self.dependent} on {self.lags} own lag(s) and "
                f"{len(self.x_names)} regressors; {len(self.economies)} economies x "
                f"{len(self.periods)} periods)")

    @property
    def regressor_names(self) -> tuple[str, ...]:
        """The lags of the dependent variable first, then the other regressors."""
        return tuple(lag_name(self.dependent, j) for j in range(1, self.lags + 1)) + self.x_names

    def regressors(self) -> np.ndarray:
        """(economies x periods x all regressors): own lags, then the others."""
        return self._regressors

    @cached_property
    def _regressors(self) -> np.ndarray:
        own = [shift(self.y, j) for j in range(1, self.lags + 1)]
        return np.concatenate([np.stack(own, axis=2), self.x], axis=2) if own else self.x

    @cached_property
    def complete(self) -> np.ndarray:
        """Where the dependent variable and every regressor are present (economies x
        periods)."""
        return _complete(self.y, self.regressors())

    @cached_property
    def differences(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Differenced y and regressors, and where both periods of the difference are
        complete.  Computed once for all the estimators fitted to this panel."""
        R = self.regressors()
        ok = self.complete
        ok_d = np.zeros_like(ok)
        ok_d[:, 1:] = ok[:, 1:] & ok[:, :-1]
        return self.y - shift(self.y, 1), R - shift(R, 1), ok_d

    @cached_property
    def stacked(self) -> tuple[np.ndarray, np.ndarray]:
        """The dependent variable (equation x economies x periods) and the regressors
        (equation x economies x periods x regressors) of both equations: differences first,
        levels second, so the rows of a stacked design are one gather."""
        dy, dR, _ = self.differences
        return np.stack([dy, self.y]), np.stack([dR, self.regressors()])

    @classmethod
    def from_long(cls, frame: pd.DataFrame, economy: str, period: str, dependent: str,
                  regressors: Sequence[str | tuple[str, int]] = (), lags: int = 1
                  ) -> DynamicPanel:
        """Build the grid from a long table (one row per economy and period, any order).

        ``period`` must hold whole numbers; the grid runs over every period from the
        first to the last in steps of their greatest common difference.  A regressor
        is a column name or ``(column, lag)``.  The caller's frame is not changed.
        """
        wanted = [economy, period, dependent] + [r if isinstance(r, str) else r[0]
                                                 for r in regressors]
        for col in dict.fromkeys(wanted):
            if col not in frame.columns:
                raise InputError(f"the panel has no column '{quote(col)}'"
                                 f"{did_you_mean(col, map(str, frame.columns))}", "panel")
        if lags < 0:
            raise ValueError("lags must be 0 or more")
        t = pd.to_numeric(frame[period], errors="coerce").to_numpy(dtype=float)
        if not np.all(np.isfinite(t)) or np.any(t != np.round(t)):
            raise InputError("holds values that are not whole numbers", f"column '{period}'")
        keys = pd.DataFrame({"e": frame[economy].astype(str).to_numpy(), "t": t.astype(int)})
        dup = keys.duplicated(keep=False).to_numpy()
        if dup.any():
            e, p = keys.loc[dup].iloc[0]
            raise InputError(f"economy '{quote(e)}' has two rows for period {p}",
                             f"column '{period}'")
        economies = tuple(sorted(keys["e"].unique()))
        ts = np.unique(keys["t"].to_numpy())
        step = int(reduce(math.gcd, np.diff(ts).tolist(), 0)) or 1
        grid = tuple(range(int(ts[0]), int(ts[-1]) + 1, step))
        ei = pd.Index(economies).get_indexer(keys["e"])
        ti = ((keys["t"].to_numpy() - grid[0]) // step).astype(int)

        def on_grid(col: str) -> np.ndarray:
            out = np.full((len(economies), len(grid)), np.nan)
            out[ei, ti] = pd.to_numeric(frame[col], errors="coerce").to_numpy(dtype=float)
            return out

        y = on_grid(dependent)
        names, cols = [], []
        for r in regressors:
            col, lag = (r, 0) if isinstance(r, str) else (str(r[0]), int(r[1]))
            names.append(lag_name(col, lag))
            cols.append(shift(on_grid(col), lag))
        x = (np.stack(cols, axis=2) if cols else np.empty((len(economies), len(grid), 0)))
        return cls(economies, grid, dependent, y, lags, tuple(names), x)


def shift(a: np.ndarray, lag: int) -> np.ndarray:
    """``a`` lagged by ``lag`` periods along axis 1 (NaN where the lag falls before the grid);
    ``a`` is (economies x periods) or (economies x periods x columns)."""
    if lag == 0:
        return a
    out = np.full_like(a, np.nan, dtype=float)
    if lag < a.shape[1]:
        out[:, lag:] = a[:, :-lag]
    return out


@dataclass(frozen=True)
class StackedDesign:
    """The rows one estimator fits: ``y = X b + e`` with instruments ``Z`` (None: OLS).

    ``economy`` and ``period`` are grid positions; ``block`` is 0 for rows of the
    differenced equation and 1 for rows in levels (system GMM); ``slopes`` counts
    the leading columns of ``X`` that are regressors (the rest are period effects
    and the constant).  ``adjacent`` lists pairs of row positions that are
    consecutive periods of one economy in the differenced equation (the
    off-diagonal of the one-step weight).
    """

    y: np.ndarray
    X: np.ndarray
    names: tuple[str, ...]
    slopes: int
    economy: np.ndarray
    period: np.ndarray
    block: np.ndarray
    Z: np.ndarray | None = None
    instrument_names: tuple[str, ...] = ()
    adjacent: np.ndarray | None = None

    def __repr__(self) -> str:
        z = f", {self.Z.shape[1]} instruments" if self.Z is not None else ""
        return (f"StackedDesign({len(self.y)} rows, {self.n_economies} economies, "
                f"{self.X.shape[1]} columns{z})")

    @property
    def nobs(self) -> int:
        return len(self.y)

    @cached_property
    def starts(self) -> np.ndarray:
        """The first row of each economy (rows are sorted by economy)."""
        return np.flatnonzero(np.concatenate([[True], self.economy[1:] != self.economy[:-1]]))

    @cached_property
    def row_group(self) -> np.ndarray:
        """For each row, the position of its economy among the economies present."""
        return np.cumsum(np.concatenate([[False], self.economy[1:] != self.economy[:-1]]))

    @property
    def economies_present(self) -> np.ndarray:
        """Grid positions of the economies with rows."""
        return self.economy[self.starts]

    @property
    def n_economies(self) -> int:
        return len(self.starts)

    def earlier(self, order: int) -> np.ndarray:
        """For each row, the row of the same economy and equation dated ``order`` periods
        before, -1 where there is none.  Rows run by period within an economy's equation, so
        that row lies at most ``order`` positions back."""
        out = np.full(self.nobs, -1)
        key = self.economy * 2 + self.block
        for back in range(1, min(order, self.nobs - 1) + 1):
            hit = (key[back:] == key[:-back]) & (self.period[:-back] == self.period[back:] - order)
            out[back:][hit] = np.flatnonzero(hit)
        return out

    @cached_property
    def uniform(self) -> int | None:
        """The number of rows per economy when every economy has the same rows (equations
        and periods, in the same order), else None: the stack is then one block repeated."""
        r = self.rows_each
        if r is None:
            return None
        n = self.n_economies
        same = ((self.block.reshape(n, r) == self.block[:r]).all()
                and (self.period.reshape(n, r) == self.period[:r]).all())
        return r if same else None

    @cached_property
    def n_periods(self) -> int:
        return int(np.count_nonzero(np.bincount(self.period)))

    @cached_property
    def rows_each(self) -> int | None:
        """The number of rows every economy has, None when they differ."""
        counts = np.diff(np.append(self.starts, self.nobs))
        return int(counts[0]) if len(counts) and (counts == counts[0]).all() else None

    def sums(self, values: np.ndarray, weights: np.ndarray | None = None) -> np.ndarray:
        """Rows of ``values`` (each times its entry of ``weights``) summed within each economy,
        one row per economy present.  When every economy has the same number of rows, the
        rows are a stack of equal blocks and the weighted sums one batched product."""
        r = self.rows_each
        if r is not None and weights is not None and values.ndim == 2:
            n = len(self.starts)
            return (weights.reshape(n, 1, r) @ values.reshape(n, r, -1))[:, 0]
        if weights is not None:
            values = values * (weights[:, None] if values.ndim == 2 else weights)
        return np.add.reduceat(values, self.starts, axis=0)


@dataclass(frozen=True)
class Cells:
    """Stacked rows laid out by equation block (0 differenced, 1 levels) and period.

    ``economy``, ``block`` and ``period`` give each row's place; ``by_cell`` maps each
    (block, period) that has rows to those rows and their economies, so a column can
    be written one period at a time from the grid."""

    economy: np.ndarray
    block: np.ndarray
    period: np.ndarray
    by_cell: dict[tuple[int, int], tuple[np.ndarray, np.ndarray]]

    @classmethod
    def of(cls, present: np.ndarray) -> Cells:
        """The rows where ``present`` (economies x blocks x periods) holds: by economy, then
        block, then period."""
        e, b, t = np.nonzero(present)
        at = np.zeros(present.shape, dtype=np.intp)
        at[e, b, t] = np.arange(len(e))
        by_cell = {}
        for block, period in zip(*np.nonzero(present.any(axis=0)), strict=True):
            econ = np.flatnonzero(present[:, block, period])
            by_cell[int(block), int(period)] = (at[econ, block, period], econ)
        return cls(e, b, t, by_cell)

    @property
    def nobs(self) -> int:
        return len(self.economy)

    def __iter__(self) -> Iterator[tuple[int, int]]:
        return iter(self.by_cell)

    def __contains__(self, cell: object) -> bool:
        return cell in self.by_cell

    def __getitem__(self, cell: tuple[int, int]) -> tuple[np.ndarray, np.ndarray]:
        return self.by_cell[cell]


def _complete(*arrays: np.ndarray) -> np.ndarray:
    """Where every array (economies x periods [x columns]) is finite."""
    ok = np.ones(arrays[0].shape[:2], dtype=bool)
    for a in arrays:
        ok &= np.isfinite(a).all(axis=2) if a.ndim == 3 else np.isfinite(a)
    return ok


def _period_dummies(periods: np.ndarray, used: Sequence[int], drop_first: bool
                    ) -> tuple[np.ndarray, list[int]]:
    keep = list(used[1:] if drop_first else used)
    return (periods[:, None] == np.asarray(keep)[None, :]).astype(float), keep


def _periods_of(t: np.ndarray) -> list[int]:
    """The distinct periods among rows, in order."""
    return np.flatnonzero(np.bincount(t)).tolist()


def _rows(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Economy and period positions of the True cells, economy-major."""
    e, t = np.nonzero(mask)
    return e, t


def levels_design(panel: DynamicPanel, time_effects: bool = True, constant: bool = True
                  ) -> StackedDesign:
    """The equation in levels, on every economy-period with all values present: regressors,
    then (with ``time_effects``) a dummy for each period but the first, then the constant."""
    R = panel.regressors()
    e, t = _rows(panel.complete)
    X = [R[e, t]]
    names = list(panel.regressor_names)
    if time_effects:
        d, keep = _period_dummies(t, _periods_of(t), drop_first=True)
        X.append(d)
        names += [f"period {panel.periods[p]}" for p in keep]
    if constant:
        X.append(np.ones((len(e), 1)))
        names.append("const")
    return StackedDesign(panel.y[e, t], np.column_stack(X), tuple(names), R.shape[2], e, t,
                         np.ones(len(e), dtype=int))




def _time_columns(t: np.ndarray, block: np.ndarray, used: Sequence[int]) -> np.ndarray:
    """Period effects for stacked rows: in levels the dummy of each used period; in the
    differenced equation its difference (1 in that period, -1 in the next).  Read off a small
    table by (equation, period)."""
    periods = int(max(t.max(initial=0), max(used, default=0))) + 1
    level = (np.arange(periods)[:, None] == np.asarray(used, dtype=int)[None, :]).astype(float)
    change = level.copy()
    change[1:] -= level[:-1]
    return np.stack([change, level])[block, t]


def difference_design(panel: DynamicPanel, time_effects: bool = True) -> StackedDesign:
    """The differenced equation instrumented as first-difference 2SLS: the differenced first
    lag of the dependent variable by its level two periods back, every other differenced
    regressor (and period effect) by itself.  Rows need that instrument."""
    if panel.lags < 1:
        raise ValueError("first-difference 2SLS needs the lagged dependent variable")
    dy, dR, ok = panel.differences
    y2 = shift(panel.y, 2)
    ok = ok & np.isfinite(y2)  # a new mask: the cached one serves other estimators
    e, t = _rows(ok)
    block = np.zeros(len(e), dtype=int)
    changes = dR[e, t]
    X = [changes]
    names = list(panel.regressor_names)
    Z = [y2[e, t][:, None], changes[:, 1:]]
    z_names = [lag_name(panel.dependent, 2)] + [f"D.{n}" for n in names[1:]]
    if time_effects:
        used = _periods_of(t)
        d = _time_columns(t, block, used)
        X.append(d)
        Z.append(d)
        periods = [f"period {panel.periods[p]}" for p in used]
        names += periods
        z_names += [f"D.{p}" for p in periods]
    return StackedDesign(dy[e, t], np.column_stack(X), tuple(names), dR.shape[2], e, t, block,
                         np.column_stack(Z), tuple(z_names))


def gmm_design(panel: DynamicPanel, system: bool = False, max_lag: int | None = None,
               collapse: bool = False, treatment: Mapping[str, Treatment] | None = None,
               time_effects: bool = True) -> StackedDesign:
    """The differenced equation (and for ``system`` the levels equation) with the GMM
    instrument matrix.

    Instruments of the differenced equation: the dependent variable dated t-2 and
    earlier (at most ``max_lag`` periods back), one column per period and lag, or
    one per lag when ``collapse``; each regressor by ``treatment`` (default
    exogenous): exogenous ones instrument themselves (differenced), predetermined
    ones by their levels dated t-1 and earlier, endogenous ones t-2 and earlier,
    like the dependent variable.  System GMM adds the levels equation, instrumented
    by the differenced dependent variable dated t-1 (and a predetermined
    regressor's difference dated t, an endogenous one's t-1, an exogenous one's
    difference dated t); period effects are one stacked column per period in both
    equations (dummy in levels, its difference in differences).
    """
    from .instruments import gmm_instruments

    treatment = dict(treatment or {})
    for name, kind in treatment.items():
        if name not in panel.x_names:
            raise InputError(f"'{quote(name)}' is not a regressor"
                             f"{did_you_mean(name, panel.x_names)}", "treatment")
        if kind not in TREATMENTS:
            raise InputError(f"'{quote(kind)}' is not one of {', '.join(TREATMENTS)}",
                             f"treatment.{name}")
    if panel.lags < 1:
        raise ValueError("GMM needs the lagged dependent variable")
    ok_d = panel.differences[2]
    # rows by economy, then the differenced rows before the rows in levels, then period
    cells = Cells.of(np.stack([ok_d, panel.complete & ok_d if system
                               else np.zeros_like(ok_d)], axis=1))
    names = list(panel.regressor_names)
    z_names: list[str]
    extra: list[str] = []  # period effects (or the constant), in both X and Z
    used: list[int] = []
    if time_effects:
        # one effect per period the differences reach: in levels its dummy, in differences
        # the dummy's change.  The differenced equation alone identifies only changes, so
        # there the periods of its rows suffice; system GMM also needs the level of the
        # effect in the period before each differenced row (else the first period's change
        # would tie the levels equation's intercept to zero)
        reached = sorted(p for b, p in cells if b == 0)
        used = sorted(set(reached) | ({p - 1 for p in reached} if system else set()))
        extra = [f"period {panel.periods[p]}" for p in used]
    elif system:
        extra = ["const"]
    kinds = {n: treatment.get(n, "exogenous") for n in panel.x_names}
    Z, z_names = gmm_instruments(panel, cells, kinds, max_lag, collapse, len(extra))
    e, t, block = cells.economy, cells.period, cells.block
    k = len(names)
    ys, Rs = panel.stacked
    X = np.empty((cells.nobs, k + len(extra)))
    X[:, :k] = Rs[block, e, t]
    if extra:
        effects = (_time_columns(t, block, used) if time_effects
                   else block.astype(float)[:, None])  # the constant: 1 in levels
        X[:, k:] = effects
        Z[:, -len(extra):] = effects
    diff = block == 0
    same = (e[1:] == e[:-1]) & diff[1:] & diff[:-1] & (t[1:] == t[:-1] + 1)
    adjacent = np.column_stack([np.nonzero(same)[0], np.nonzero(same)[0] + 1])
    return StackedDesign(ys[block, e, t], X, tuple(names + extra), k, e, t, block, Z,
                         tuple(z_names + extra), adjacent)
