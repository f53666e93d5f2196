"""Many least-squares fits of one design at once, from sufficient statistics.

A bootstrap or a specification sweep refits the same regression thousands of
times on reweighted rows (resample counts, sample masks) or on new responses
(the wild bootstrap).  Each fit needs only sums over rows of ``w x x'`` and
``w x y``: with the per-row products ``x_i x_i'`` and ``x_i y_i`` stacked once,
every fit's cross-products are one matrix product of the weights with them, and
the coefficients follow from a batch of small solves.  Residuals come back as
one ``(B, n)`` product for the robust and cluster-robust covariances.

:func:`fit_batch` agrees with :func:`steadyfit.estimators.fit_ols` (statsmodels)
on every draw, covariance by covariance, including statsmodels' small-sample
scaling (HC1's ``n/(n - k)``; cluster ``G/(G - 1) (n - 1)/(n - k)``).  A row
weight of ``m`` counts that row ``m`` times, exactly as if it were duplicated;
a resampled cluster counts as a new cluster each time it is drawn.

:func:`implied_batch` maps the restricted slopes of every draw through the
form table's own maps and Jacobians (:mod:`steadyfit.equations`), which
broadcast over draws: nothing here knows a form's formulas.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
from scipy.special import erfc

from ..equations import ModelForm
from ..estimators import CovarianceName


@dataclass(frozen=True, eq=False)
class BatchFit:
    """``B`` least-squares fits of one design: row ``b`` of each array is draw ``b``.

    ``coef`` (B, k); ``cov`` (B, k, k) under ``covariance``; ``ssr`` and ``nobs``
    (B,); ``n_clusters`` (B,) under cluster covariance, else None.
    """

    coef: np.ndarray
    cov: np.ndarray
    ssr: np.ndarray
    nobs: np.ndarray
    covariance: str
    n_clusters: np.ndarray | None = None

    @property
    def draws(self) -> int:
        return int(self.coef.shape[0])

    @property
    def se(self) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            return np.sqrt(np.einsum("bii->bi", self.cov))

    def __repr__(self) -> str:
        return (f"BatchFit({self.draws} fits of {self.coef.shape[1]} coefficients, "
                f"{self.covariance} covariance)")


def one_restriction_p(wald: np.ndarray) -> np.ndarray:
    """The p-value of Wald statistics of one restriction, ``P(chi2(1) > w) = erfc(sqrt(w/2))``:
    the same tail as scipy's chi-square function (to about 1e-14), fifty times faster over
    many draws."""
    with np.errstate(invalid="ignore"):
        return np.asarray(erfc(np.sqrt(np.asarray(wald, dtype=float) / 2.0)))


def _outer_rows(x: np.ndarray) -> np.ndarray:
    """Each row's outer product ``x_i x_i'``, flattened: shape (n, k*k)."""
    return (x[:, :, None] * x[:, None, :]).reshape(len(x), -1)


def _dot(pairs: Iterable[tuple[np.ndarray, np.ndarray]], size: int) -> np.ndarray:
    out = np.zeros(size)
    for a, b in pairs:
        out += a * b
    return out


def inverse_entries(m: np.ndarray) -> np.ndarray:
    """Inverses of symmetric positive definite matrices laid out (k, k, B), each entry a
    contiguous vector over the batch; returns the same layout.

    A Cholesky factorisation written entry by entry: for the small cross-product matrices
    of these designs (k of 6 or fewer) an order of magnitude faster than looping LAPACK
    over the batch.  A matrix that is not positive definite gives NaN in its place.
    """
    k, size = m.shape[0], m.shape[2]
    chol: list[list[np.ndarray]] = [[np.zeros(0)] * k for _ in range(k)]
    low: list[list[np.ndarray]] = [[np.zeros(0)] * k for _ in range(k)]
    out = np.empty((k, k, size))
    with np.errstate(invalid="ignore", divide="ignore"):
        for j in range(k):
            diag = m[j, j] - _dot(((chol[j][q], chol[j][q]) for q in range(j)), size)
            chol[j][j] = np.sqrt(np.where(diag > 0, diag, np.nan))
            for i in range(j + 1, k):
                dot = _dot(((chol[i][q], chol[j][q]) for q in range(j)), size)
                chol[i][j] = (m[i, j] - dot) / chol[j][j]
        # the inverse of the lower factor by forward substitution
        for i in range(k):
            low[i][i] = 1.0 / chol[i][i]
            for j in range(i):
                low[i][j] = -_dot(((chol[i][q], low[q][j]) for q in range(j, i)),
                                  size) / chol[i][i]
        for i in range(k):  # (L^-T L^-1)[i, j] = sum over q >= max(i, j) of low[q][i] low[q][j]
            for j in range(i + 1):
                out[i, j] = _dot(((low[q][i], low[q][j]) for q in range(i, k)), size)
                out[j, i] = out[i, j]
    return out


def batch_inverse(a: np.ndarray) -> np.ndarray:
    """Inverses of a batch of symmetric positive definite matrices, shape (B, k, k)
    (see :func:`inverse_entries`)."""
    inv = inverse_entries(np.ascontiguousarray(np.moveaxis(a, 0, -1)))
    return np.moveaxis(inv, -1, 0)


def fit_batch(x: np.ndarray, y: np.ndarray, covariance: CovarianceName = "classical", *,
              weights: np.ndarray | None = None, responses: np.ndarray | None = None,
              clusters: np.ndarray | None = None,
              cluster_counts: np.ndarray | None = None) -> BatchFit:
    """Least squares of ``y`` (or each row of ``responses``) on ``x``, once per draw.

    Parameters
    ----------
    x
        The design, (n, k), constant included.
    y
        The response, (n,); ignored where ``responses`` is given.
    covariance
        As :func:`steadyfit.estimators.fit_ols`: classical, HC0 to HC3 or cluster.
    weights
        (B, n) non-negative row weights: resample counts, or 0/1 sample masks.
    responses
        (B, n) responses, one per draw, on the same rows (the wild bootstrap).
    clusters
        Integer cluster codes 0..G-1 of the rows, (n,); needed for cluster covariance and
        for ``cluster_counts``.
    cluster_counts
        (B, G) how often each cluster is drawn (the pairs bootstrap by cluster): row
        weights follow from it, and every draw of a cluster is a cluster of its own.

    Returns
    -------
    BatchFit
    """
    x = np.asarray(x, dtype=float)
    n, k = x.shape
    codes = None if clusters is None else np.asarray(clusters, dtype=np.intp)
    if cluster_counts is not None:
        if codes is None:
            raise ValueError("cluster_counts need the rows' cluster codes")
        weights = np.asarray(cluster_counts, dtype=float)[:, codes]
    if responses is not None:
        ys = np.asarray(responses, dtype=float)
        draws = ys.shape[0]
    else:
        ys = np.asarray(y, dtype=float)[None, :]
        draws = 1 if weights is None else weights.shape[0]
    w = None if weights is None else np.asarray(weights, dtype=float)

    outer = _outer_rows(x)
    if w is None:  # the same rows in every draw: one cross-product matrix
        inv = np.broadcast_to(np.linalg.inv(x.T @ x)[None], (draws, k, k))
        xty = ys @ x
        nobs = np.full(draws, float(n))
    elif responses is None:  # one product gives every cross-product, with y'y for the ssr
        xtx, xty, yty, nobs = _split(_products(x, ys[0], w), k)
        if covariance == "classical":
            return _classical(xtx, xty, yty, nobs)
        inv = np.moveaxis(inverse_entries(xtx), -1, 0)
        xty = xty.T
    else:
        inv = batch_inverse((w @ outer).reshape(draws, k, k))
        xty = (w * ys) @ x
        nobs = w.sum(axis=1)
    coef = np.einsum("bij,bj->bi", inv, xty)
    df = nobs - k

    n_clusters = None
    resid = ys - coef @ x.T
    wr = resid if w is None else w * resid
    ssr = np.einsum("bi,bi->b", wr, resid)
    if covariance == "classical":
        cov = inv * (ssr / df)[:, None, None]
    elif covariance == "cluster":
        if codes is None:
            raise ValueError("cluster covariance needs the rows' cluster codes")
        groups = int(codes.max()) + 1
        member = np.zeros((n, groups))
        member[np.arange(n), codes] = 1.0
        if cluster_counts is not None:
            counts = np.asarray(cluster_counts, dtype=float)
            # every draw of a cluster is a cluster: sum count_g s_g s_g' over unweighted s_g
            scores = np.einsum("bi,ij,ig->bgj", resid, x, member)
            meat = np.einsum("bg,bgj,bgl->bjl", counts, scores, scores)
            n_clusters = counts.sum(axis=1)
        else:
            scores = np.einsum("bi,ij,ig->bgj", wr, x, member)
            meat = np.einsum("bgj,bgl->bjl", scores, scores)
            present = member.T @ (np.ones(n) if w is None else w.T)
            n_clusters = (np.atleast_2d(present.T) > 0).sum(axis=1).astype(float)
            if w is None:
                n_clusters = np.full(draws, float(groups))
        scale = n_clusters / (n_clusters - 1) * (nobs - 1) / df
        cov = scale[:, None, None] * (inv @ meat @ inv)
        # G clusters give a covariance of rank at most G - 1: singular with G <= k, so no
        # number comes from it (steadyfit.estimators.covariance_problem, the one-fit rule)
        cov[n_clusters <= k] = np.nan
    else:
        squared = resid ** 2
        if covariance in ("HC2", "HC3"):
            leverage = np.einsum("ij,bjl,il->bi", x, inv, x)
            squared = squared / ((1 - leverage) if covariance == "HC2" else (1 - leverage) ** 2)
        elif covariance not in ("HC0", "HC1"):
            raise ValueError(f"unknown covariance '{covariance}'")
        weighted = squared if w is None else w * squared
        meat = (weighted @ outer).reshape(draws, k, k)
        cov = inv @ meat @ inv
        if covariance == "HC1":
            cov = cov * (nobs / df)[:, None, None]
    return BatchFit(coef, cov, ssr, nobs, covariance, n_clusters)


def _row_products(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Each row's ``x x'`` (flattened), ``x y``, ``y^2`` and 1: what every sum needs."""
    return np.column_stack([_outer_rows(x), x * y[:, None], y ** 2, np.ones(len(y))])


def _products(x: np.ndarray, y: np.ndarray, w: np.ndarray, rows: np.ndarray | None = None
              ) -> np.ndarray:
    """Every draw's sums laid out by entry, (k*k + k + 2, B): X'WX, X'Wy, y'Wy and the sum
    of weights, from one product of the rows' cross-products (``rows``, when already at
    hand) with the weights."""
    return (_row_products(x, y) if rows is None else rows).T @ w.T


def _split(stats: np.ndarray, k: int
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """X'WX (k, k, B), X'Wy (k, B), y'Wy and the weights' sum from :func:`_products`."""
    return (stats[:k * k].reshape(k, k, -1), stats[k * k:k * k + k], stats[-2], stats[-1])


def _classical(xtx: np.ndarray, xty: np.ndarray, yty: np.ndarray, nobs: np.ndarray
               ) -> BatchFit:
    """Classical least squares from cross-products laid out by entry: ``xtx`` (k, k, B),
    ``xty`` (k, B); the residual sum of squares is ``y'Wy - b'X'Wy``.  The fit's arrays are
    views of that layout."""
    k = xtx.shape[0]
    inv = inverse_entries(xtx)
    coef = np.einsum("ijb,jb->ib", inv, xty)
    ssr = yty - np.einsum("ib,ib->b", coef, xty)
    cov = inv * ((ssr / (nobs - k))[None, None, :])
    return BatchFit(coef.T, np.moveaxis(cov, -1, 0), ssr, nobs, "classical")


def combination(x: np.ndarray, z: np.ndarray) -> np.ndarray | None:
    """``T`` with ``z = x T`` exactly (each column of ``z`` a fixed combination of ``x``'s),
    or None: how a restricted design derives from the unrestricted one, found from the data
    rather than from the form."""
    t = np.asarray(np.round(np.linalg.lstsq(x, z, rcond=None)[0], 12), dtype=float)
    scale = max(float(np.abs(z).max()), 1.0)
    return t if np.max(np.abs(x @ t - z)) <= 1e-12 * scale else None


def fit_pair(unrestricted: np.ndarray, restricted: np.ndarray, y: np.ndarray,
             covariance: CovarianceName = "classical", *,
             weights: np.ndarray | None = None, responses: np.ndarray | None = None,
             clusters: np.ndarray | None = None, cluster_counts: np.ndarray | None = None
             ) -> tuple[BatchFit, BatchFit]:
    """The unrestricted and the restricted fit on the same draws (arguments as
    :func:`fit_batch`).

    Classical fits on reweighted rows share one product of the weights with the
    unrestricted cross-products when the restricted regressors are combinations of the
    unrestricted ones (``X_r = X_u T``, so ``X_r'WX_r = T' X_u'WX_u T``)."""
    t = combination(unrestricted, restricted)
    if (t is None or covariance != "classical" or weights is None or responses is not None
            or cluster_counts is not None):
        kw = dict(weights=weights, responses=responses, clusters=clusters,
                  cluster_counts=cluster_counts)
        return (fit_batch(unrestricted, y, covariance, **kw),  # type: ignore[arg-type]
                fit_batch(restricted, y, covariance, **kw))  # type: ignore[arg-type]
    return _both_classical(_products(unrestricted, y, np.asarray(weights, dtype=float)), t)


def _both_classical(stats: np.ndarray, t: np.ndarray) -> tuple[BatchFit, BatchFit]:
    """Both fits from the unrestricted sums: the restricted ones are ``T' X'WX T`` and
    ``T' X'Wy``, one small product each."""
    k, k_r = t.shape
    xtx, xty, yty, nobs = _split(stats, k)
    xtx_r = (np.kron(t, t).T @ stats[:k * k]).reshape(k_r, k_r, -1)
    return (_classical(xtx, xty, yty, nobs), _classical(xtx_r, t.T @ xty, yty, nobs))


def classical_pair_in_blocks(unrestricted: np.ndarray, restricted: np.ndarray, y: np.ndarray,
                             blocks: Iterable[np.ndarray]) -> tuple[BatchFit, BatchFit] | None:
    """Classical fits of both designs from row weights that arrive in blocks of draws.

    Each block's cross-products are taken as it arrives, so the weights of a whole chunk
    never sit in memory at once: the counting and the product stay within the processor's
    cache, several times faster on large chunks.  None where the restricted design is no
    combination of the unrestricted one (the caller then fits from whole weights).
    """
    t = combination(unrestricted, restricted)
    if t is None:
        return None
    rows = _row_products(unrestricted, y)
    return _both_classical(np.hstack([_products(unrestricted, y, b, rows) for b in blocks]), t)


def classical_pairs(designs: list[tuple[np.ndarray, np.ndarray, np.ndarray]], y: np.ndarray
                    ) -> tuple[BatchFit, BatchFit] | None:
    """Classical fits of both designs for several designs of the same rows at once: each
    ``(unrestricted, restricted, weights)`` contributes its draws (rows of ``weights``), and
    every draw of every design is solved in one batch.  The restricted regressors must be
    the same combination of the unrestricted ones in every design (as when only a column's
    values change); None where they are no combination."""
    t = combination(designs[0][0], designs[0][1])
    if t is None:
        return None
    weights = designs[0][2]
    if any(w is not weights for _, _, w in designs):
        return _both_classical(np.hstack([_products(xu, y, w) for xu, _, w in designs]), t)
    # the same weights for every design: one product of all designs' row sums with them,
    # laid out as the designs' products side by side
    rows = np.hstack([_row_products(xu, y) for xu, _, _ in designs])
    stats = (rows.T @ np.asarray(weights, dtype=float).T).reshape(len(designs), -1,
                                                                  len(weights))
    return _both_classical(stats.transpose(1, 0, 2).reshape(stats.shape[1], -1), t)


@dataclass(frozen=True, eq=False)
class BatchImplied:
    """The structural parameters of every draw: ``names`` in the order of the form's
    forward map plus the shares' sum (where there are two shares); ``value`` and ``se``
    (delta method under the draw's own covariance) have one row per name and one column per
    draw; ``ordinary`` is False where a draw implies no steady state or no convergence."""

    names: tuple[str, ...]
    value: np.ndarray
    se: np.ndarray
    ordinary: np.ndarray

    def row(self, name: str) -> int:
        return self.names.index(name)


def implied_batch(form: ModelForm, restricted: BatchFit) -> BatchImplied:
    """Implied shares (and their sum), and the speed of convergence, for every draw."""
    pmap = form.parameters
    slopes = restricted.coef[:, 1:].T  # (k, B): the maps broadcast over draws
    v = np.moveaxis(restricted.cov, 0, -1)[1:, 1:]  # (k, k, B)
    with np.errstate(all="ignore"):
        value = pmap.forward.value(slopes)
        jac = pmap.forward.jacobian(slopes)  # (names, k, B)
        var = np.einsum("nlb,nlb->nb", np.einsum("nkb,klb->nlb", jac, v), jac)
        names = list(pmap.names)
        share_rows = [names.index(s) for s in pmap.shares]
        ordinary = pmap.domain(slopes) > 0
        if share_rows:
            ordinary &= value[share_rows].sum(axis=0) < 1
        if len(share_rows) > 1:
            names.append("+".join(pmap.shares))
            total = jac[share_rows].sum(axis=0)
            value = np.vstack([value, value[share_rows].sum(axis=0)])
            var = np.vstack([var, np.einsum("lb,lb->b", np.einsum("kb,klb->lb", total, v),
                                            total)])
        se = np.sqrt(np.where(var >= 0, var, np.nan))
    ordinary &= np.isfinite(value).all(axis=0)
    return BatchImplied(tuple(names), value, se, ordinary)
