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


def _outer_rows(x: np.ndarray) -> np.ndarray:
    """Each row's outer product ``x_i x_i'``, flattened: shape (n, k*k)."""
    return (x[:, :, None] * x[:, None, :]).reshape(len(x), -1)


def batch_inverse(a: np.ndarray) -> np.ndarray:
    """Inverses of a batch of symmetric positive definite matrices, shape (B, k, k).

    A Cholesky factorisation written entry by entry, each entry a vector over the batch:
    for the small cross-product matrices of these designs (k of 6 or fewer) it is an order
    of magnitude faster than looping LAPACK over the batch.  A matrix that is not positive
    definite gives NaN in its place.
    """
    k = a.shape[1]
    m = np.ascontiguousarray(np.moveaxis(a, 0, -1))  # (k, k, B): each entry a vector
    chol: list[list[np.ndarray]] = [[np.zeros(0)] * k for _ in range(k)]
    low: list[list[np.ndarray]] = [[np.zeros(0)] * k for _ in range(k)]
    with np.errstate(invalid="ignore", divide="ignore"):
        for j in range(k):
            diag = m[j, j] - sum((chol[j][q] * chol[j][q] for q in range(j)),
                                 start=np.zeros(m.shape[2]))
            chol[j][j] = np.sqrt(np.where(diag > 0, diag, np.nan))
            for i in range(j + 1, k):
                dot = sum((chol[i][q] * chol[j][q] for q in range(j)),
                          start=np.zeros(m.shape[2]))
                chol[i][j] = (m[i, j] - dot) / chol[j][j]
        # the inverse of the lower factor by forward substitution
        for i in range(k):
            low[i][i] = 1.0 / chol[i][i]
            for j in range(i):
                dot = sum((chol[i][q] * low[q][j] for q in range(j, i)),
                          start=np.zeros(m.shape[2]))
                low[i][j] = -dot / chol[i][i]
    out = np.empty((a.shape[0], k, k))
    for i in range(k):  # (L^-T L^-1)[i, j] = sum over q >= max(i, j) of low[q][i] low[q][j]
        for j in range(i + 1):
            entry = sum((low[q][i] * low[q][j] for q in range(i, k)),
                        start=np.zeros(m.shape[2]))
            out[:, i, j] = entry
            out[:, j, i] = entry
    return out


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
        xtx, xty, yty, nobs = _products(x, ys[0], w)
        if covariance == "classical":
            return _classical(xtx, xty, yty, nobs)
        inv = batch_inverse(xtx)
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
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Every draw's X'WX (B, k, k), X'Wy (B, k), y'Wy and sum of weights, from one product of
    the weights with the rows' cross-products (``rows``, when already at hand)."""
    k = x.shape[1]
    stats = w @ (_row_products(x, y) if rows is None else rows)
    return (stats[:, :k * k].reshape(-1, k, k), stats[:, k * k:k * k + k], stats[:, -2],
            stats[:, -1])


def _classical(xtx: np.ndarray, xty: np.ndarray, yty: np.ndarray, nobs: np.ndarray
               ) -> BatchFit:
    """Classical least squares from cross-products; the residual sum of squares is
    ``y'Wy - b'X'Wy``."""
    inv = batch_inverse(xtx)
    coef = np.einsum("bij,bj->bi", inv, xty)
    ssr = yty - np.einsum("bi,bi->b", coef, xty)
    df = nobs - xtx.shape[1]
    return BatchFit(coef, inv * (ssr / df)[:, None, None], ssr, nobs, "classical")


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


def _both_classical(products: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray],
                    t: np.ndarray) -> tuple[BatchFit, BatchFit]:
    xtx, xty, yty, nobs = products
    return (_classical(xtx, xty, yty, nobs),
            _classical(t.T @ xtx @ t, xty @ t, yty, nobs))


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
    parts = [_products(unrestricted, y, block, rows) for block in blocks]
    joined = tuple(np.concatenate([p[i] for p in parts]) for i in range(4))
    return _both_classical(joined, t)  # type: ignore[arg-type]


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
    v = restricted.cov[:, 1:, 1:]
    with np.errstate(all="ignore"):
        value = pmap.forward.value(slopes)
        jac = pmap.forward.jacobian(slopes)  # (names, k, B)
        rows = np.ascontiguousarray(jac.transpose(2, 0, 1))  # (B, names, k)
        var = np.einsum("bnk,bnk->nb", rows @ v, rows)
        names = list(pmap.names)
        share_rows = [names.index(s) for s in pmap.shares]
        ordinary = pmap.domain(slopes) > 0
        if share_rows:
            ordinary &= value[share_rows].sum(axis=0) < 1
        if len(share_rows) > 1:
            names.append("+".join(pmap.shares))
            total = jac[share_rows].sum(axis=0)
            value = np.vstack([value, value[share_rows].sum(axis=0)])
            total_rows = total.T[:, None, :]  # (B, 1, k)
            var = np.vstack([var, np.einsum("bik,bik->b", total_rows @ v, total_rows)])
        se = np.sqrt(np.where(var >= 0, var, np.nan))
    ordinary &= np.isfinite(value).all(axis=0)
    return BatchImplied(tuple(names), value, se, ordinary)
