"""Benchmark: steadyfit's panel estimators against linearmodels and a bare numpy GMM.

1. The within estimator on a simulated 5,000-economy x 50-year panel with three
   regressors and no lagged dependent variable (``lags=0``).  Like with like:
   economy effects only, no period effects (``within_time_effects=False``
   against ``PanelOLS(..., entity_effects=True)``), both clustered by economy.
   steadyfit is timed from a built :class:`DynamicPanel` (``from_long`` is timed
   on its own line, and once more added to the fit); linearmodels from a
   prepared (economy, year) MultiIndex frame, model construction and fit
   together.  Baseline and candidate alternate within each repeat; the best of
   the repeats is kept.

   Peak memory: each library's fit runs in its own fresh interpreter that has
   built the same data and warmed up on a small slice (so lazy imports are not
   counted).  Two measures, each the extra memory the fit needs over what is
   already held:

   - tracemalloc peak: the largest total of Python and numpy allocations live
     at any moment during the fit (numpy reports its data buffers to
     tracemalloc); exact and repeatable, but blind to memory that BLAS or C
     extensions allocate without telling Python.
   - resident high-water mark: the process's peak resident size (``VmHWM``,
     reset through ``/proc/self/clear_refs`` just before the fit) minus its
     resident size then; sees everything, but counts pages, so memory the
     allocator reuses without returning it to the system is not seen.

   PanelOLS's figures include its own conversion of the frame into panel
   arrays; steadyfit's grid is already built, so a third line gives steadyfit's
   tracemalloc peak of ``from_long`` and the fit together.

2. A 100-replication Monte Carlo of all five estimators (pooled OLS, within,
   first-difference 2SLS, two-step difference GMM, two-step system GMM) on
   200 economies x 6 periods, against a minimal numpy reference written below
   for balanced panels: the same designs built with plain loops over periods
   and lags, one- and two-step GMM, clustered covariances for the one-step
   estimators and the uncorrected two-step covariance, and no diagnostics (no
   Windmeijer correction, over-identification, AR or first-stage tests).  The
   ratio says what steadyfit's general designs (gaps, unbalanced panels,
   treatments) and its diagnostics cost.  Timed from built panels (steadyfit:
   ``DynamicPanel``; reference: arrays), and once more from the long tables.

Run: python benchmarks/bench_panel.py [--repeat N] [--part within|monte-carlo] [--profile]
"""

from __future__ import annotations

import argparse
import gc
import json
import subprocess
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd

WITHIN_ECONOMIES = 5_000
WITHIN_YEARS = 50
WITHIN_BETA = np.array([0.6, -0.3, 0.15])
MC_REPLICATIONS = 100
MC_ECONOMIES = 200
MC_PERIODS = 6
GAMMA = float(np.exp(-0.02 * 5))
B = (1 - GAMMA) * 0.5  # alpha = 1/3


# --- data --------------------------------------------------------------------------------------


def static_panel(n: int = WITHIN_ECONOMIES, years: int = WITHIN_YEARS,
                 seed: int = 0) -> pd.DataFrame:
    """A long table: y on three regressors and an economy effect correlated with them."""
    rng = np.random.default_rng(seed)
    effect = rng.normal(0.0, 1.0, n)
    x = rng.normal(0.0, 1.0, (n, years, 3)) + 0.5 * effect[:, None, None]
    y = x @ WITHIN_BETA + effect[:, None] + rng.normal(0.0, 1.0, (n, years))
    frame = pd.DataFrame(x.reshape(-1, 3), columns=["x1", "x2", "x3"])
    frame.insert(0, "y", y.ravel())
    frame.insert(0, "year", np.tile(np.arange(1950, 1950 + years), n))
    frame.insert(0, "economy", np.repeat([f"E{i:05d}" for i in range(1, n + 1)], years))
    return frame


def growth_panel(seed: int, n: int = MC_ECONOMIES, periods: int = MC_PERIODS,
                 burn_in: int = 30) -> pd.DataFrame:
    """A mean-stationary dynamic growth panel (economy effects correlated with the regressors,
    trending period effects), long form with ln_y, ln_sk and ln_ngd."""
    rng = np.random.default_rng(seed)
    total = burn_in + periods
    level = rng.normal(0.0, 0.4, n)
    mu = (1 - GAMMA) * (8.0 + level)

    def persistent(sd: float) -> np.ndarray:
        out = np.empty((n, total))
        out[:, 0] = rng.normal(0.0, sd / np.sqrt(1 - 0.49), n)
        for t in range(1, total):
            out[:, t] = 0.7 * out[:, t - 1] + rng.normal(0.0, sd, n)
        return out

    ln_sk = np.log(0.2) + 0.5 * level[:, None] + persistent(0.3)
    ln_ngd = np.log(0.07) - 0.2 * level[:, None] + persistent(0.05)
    # period effects that make ln y grow by g tau = 0.1 per period; the start is each economy's
    # own steady-state path at t = -1 plus a deviation independent of its effect
    eta = 0.1 * (GAMMA + (1 - GAMMA) * np.arange(total)) + rng.normal(0.0, 0.01, total)
    steady = 8.0 + level + B * (np.log(0.2 / 0.07) + 0.7 * level) / (1 - GAMMA) - 0.1
    prev = steady + rng.normal(0.0, 0.1 / np.sqrt(1 - GAMMA**2), n)
    y = np.empty((n, total))
    for t in range(total):
        y[:, t] = (GAMMA * prev + B * (ln_sk[:, t] - ln_ngd[:, t]) + mu + eta[t]
                   + rng.normal(0.0, 0.1, n))
        prev = y[:, t]
    kept = slice(burn_in, total)
    return pd.DataFrame({
        "economy": np.repeat([f"E{i:03d}" for i in range(1, n + 1)], periods),
        "period": np.tile(1960 + 5 * np.arange(periods), n),
        "ln_y": y[:, kept].ravel(),
        "ln_sk": ln_sk[:, kept].ravel(),
        "ln_ngd": ln_ngd[:, kept].ravel(),
    })


# --- the reference: a minimal numpy dynamic panel for balanced panels ----------------------------


def _flat(a: np.ndarray) -> np.ndarray:
    """(economies x rows x columns) -> (economies * rows) x columns."""
    return a.reshape(-1, a.shape[2])


def _ols(y: np.ndarray, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """OLS on (economies x rows [x columns]) arrays, covariance clustered by economy."""
    Xf = _flat(X)
    bread = np.linalg.inv(Xf.T @ Xf)
    coef = bread @ (Xf.T @ y.ravel())
    g = (X * (y - X @ coef)[:, :, None]).sum(axis=1)  # one score per economy
    return coef, bread @ (g.T @ g) @ bread


def _gmm(y: np.ndarray, X: np.ndarray, Z: np.ndarray, H: np.ndarray, steps: int
         ) -> tuple[np.ndarray, np.ndarray]:
    """One- or two-step GMM with the one-step weight (sum_i Z_i'H Z_i)^-1; the one-step
    covariance is the clustered sandwich, the two-step one (X'Z W2 Z'X)^-1 uncorrected."""
    Zf = _flat(Z)
    A = _flat(X).T @ Zf
    zy = Zf.T @ y.ravel()
    W = np.linalg.inv(Zf.T @ _flat(H @ Z))  # H @ Z: the same H for every economy
    bread = np.linalg.inv(A @ W @ A.T)
    coef = bread @ (A @ W @ zy)
    g = (Z * (y - X @ coef)[:, :, None]).sum(axis=1)  # one moment per economy
    M = bread @ A @ W
    cov = M @ (g.T @ g) @ M.T
    if steps == 2:
        W = np.linalg.inv(g.T @ g)
        cov = np.linalg.inv(A @ W @ A.T)
        coef = cov @ (A @ W @ zy)
    return coef, cov


def reference_estimates(y: np.ndarray, x: np.ndarray) -> dict[str, np.ndarray]:
    """The five estimators on a balanced panel: ``y`` (economies x periods), ``x``
    (economies x periods x regressors).  Columns as steadyfit orders them: lagged y, the
    regressors, then the period effects (and the constant)."""
    n, T, k = x.shape
    out: dict[str, np.ndarray] = {}

    # levels: periods 1..T-1, period dummies for 2..T-1
    lev = np.arange(1, T)
    dummies = (lev[:, None] == np.arange(2, T)[None, :]).astype(float)
    Xl = np.concatenate([y[:, :-1, None], x[:, 1:], np.broadcast_to(dummies, (n, T - 1, T - 2))],
                        axis=2)
    const = np.ones((n, T - 1, 1))
    out["pooled_ols"] = _ols(y[:, 1:], np.concatenate([Xl, const], axis=2))[0]
    demean = lambda a: a - a.mean(axis=1, keepdims=True)  # noqa: E731
    out["within"] = _ols(demean(y[:, 1:]), demean(Xl))[0]

    # differences: periods 2..T-1; period effects as differenced dummies of periods 2..T-1
    m = T - 2
    dif = np.arange(2, T)
    dtime = ((dif[:, None] == dif[None, :]).astype(float)
             - (dif[:, None] - 1 == dif[None, :]).astype(float))
    dtime_n = np.broadcast_to(dtime, (n, m, m))
    dy = y[:, 2:] - y[:, 1:-1]
    dx = x[:, 2:] - x[:, 1:-1]
    Xd = np.concatenate([(y[:, 1:-1] - y[:, :-2])[:, :, None], dx, dtime_n], axis=2)

    # first-difference 2SLS: exactly identified, so b = (Z'X)^-1 Z'y with a clustered sandwich
    Zfd = np.concatenate([y[:, :-2, None], dx, dtime_n], axis=2)
    inv = np.linalg.inv(_flat(Zfd).T @ _flat(Xd))
    coef = inv @ (_flat(Zfd).T @ dy.ravel())
    g = (Zfd * (dy - Xd @ coef)[:, :, None]).sum(axis=1)
    out["first_difference_iv"] = coef
    out["first_difference_iv_cov"] = inv @ (g.T @ g) @ inv.T

    # difference GMM: y dated t-2 and earlier, one column per period and lag
    cols = []
    for r, t in enumerate(dif):
        for lag in range(2, t + 1):
            c = np.zeros((n, m))
            c[:, r] = y[:, t - lag]
            cols.append(c)
    Zy = np.stack(cols, axis=2)
    Zd = np.concatenate([Zy, dx, dtime_n], axis=2)
    H = 2 * np.eye(m) - np.eye(m, k=1) - np.eye(m, k=-1)
    out["difference_gmm"] = _gmm(dy, Xd, Zd, H, 2)[0]

    # system GMM: the differenced rows, then the levels rows of the same periods instrumented
    # by the differenced y dated t-1 (one column per period); x instruments itself (its
    # difference) in each equation; period effects one stacked column per period 1..T-1 (the
    # dummy in levels, its change in differences), so the levels equation has a free intercept
    zero = lambda cols_: np.zeros((n, m, cols_))  # noqa: E731
    dyl = np.zeros((n, m, m))
    for r, t in enumerate(dif):
        dyl[:, r, r] = y[:, t - 1] - y[:, t - 2]
    periods = np.arange(1, T)
    time_d = np.broadcast_to((dif[:, None] == periods[None, :]).astype(float)
                             - (dif[:, None] - 1 == periods[None, :]).astype(float), (n, m, m + 1))
    time_l = np.broadcast_to((dif[:, None] == periods[None, :]).astype(float), (n, m, m + 1))
    Zs = np.concatenate([
        np.concatenate([Zy, zero(m), dx, zero(k), time_d], axis=2),
        np.concatenate([zero(Zy.shape[2]), dyl, zero(k), dx, time_l], axis=2),
    ], axis=1)
    Xs = np.concatenate([
        np.concatenate([Xd[:, :, :1 + k], time_d], axis=2),
        np.concatenate([y[:, 1:-1, None], x[:, 2:], time_l], axis=2),
    ], axis=1)
    ys = np.concatenate([dy, y[:, 2:]], axis=1)
    Hs = np.zeros((2 * m, 2 * m))
    Hs[:m, :m] = H
    Hs[m:, m:] = np.eye(m)
    out["system_gmm"] = _gmm(ys, Xs, Zs, Hs, 2)[0]
    return out


def to_arrays(frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """A balanced long table to (economies x periods) arrays, sorted by economy and period."""
    f = frame.sort_values(["economy", "period"])
    n = f["economy"].nunique()
    y = f["ln_y"].to_numpy().reshape(n, -1)
    x = f[["ln_sk", "ln_ngd"]].to_numpy().reshape(n, -1, 2)
    return y, x


# --- timing and memory ---------------------------------------------------------------------------


METHODS = ("pooled_ols", "within", "first_difference_iv", "difference_gmm", "system_gmm")


def _timed(fn) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def _alternate(baseline, candidate, repeat: int) -> tuple[float, float]:
    """Best of ``repeat`` for each, baseline and candidate alternating within a repeat."""
    base, cand = [], []
    for _ in range(repeat):
        base.append(_timed(baseline))
        cand.append(_timed(candidate))
    return min(base), min(cand)


def _status_kb(field: str) -> int:
    with open("/proc/self/status") as f:
        return next(int(line.split()[1]) for line in f if line.startswith(field + ":"))


def memory_probe(which: str) -> None:
    """Run in a fresh interpreter: build the data, warm up, then measure one fit."""
    frame = static_panel()
    if which == "steadyfit":
        from steadyfit.panel.design import DynamicPanel
        from steadyfit.panel.estimators import estimate

        def build(f):
            return DynamicPanel.from_long(f, "economy", "year", "y", ["x1", "x2", "x3"], lags=0)

        data = build(frame)
        small = build(frame[frame.economy < "E00050"])

        def fit(d):
            return estimate(d, "within", within_time_effects=False)
    else:
        from linearmodels.panel import PanelOLS

        data = frame.set_index(["economy", "year"])
        small = data.iloc[:2_000]

        def fit(d):
            return PanelOLS(d["y"], d[["x1", "x2", "x3"]], entity_effects=True).fit(
                cov_type="clustered", cluster_entity=True)
    fit(small)  # lazy imports and caches, not counted
    gc.collect()
    rss = None
    try:
        with open("/proc/self/clear_refs", "w") as f:
            f.write("5")  # reset the high-water mark to the current resident size
        before = _status_kb("VmRSS")
        result = fit(data)
        rss = (_status_kb("VmHWM") - before) * 1024
        del result
    except OSError:
        pass
    gc.collect()
    tracemalloc.start()
    fit(data)  # the peak covers the whole call, the result included
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    with_build = None
    if which == "steadyfit":  # the grid from the long table too, PanelOLS's own conversion
        gc.collect()
        tracemalloc.start()
        fit(build(frame))
        with_build = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
    print(json.dumps({"tracemalloc": peak, "rss": rss, "with_build": with_build}))


def _probe(which: str) -> dict[str, int | None]:
    out = subprocess.run([sys.executable, str(Path(__file__).resolve()), "--memory-probe", which],
                         check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=7)
    ap.add_argument("--memory-probe", choices=("steadyfit", "linearmodels"), help=argparse.SUPPRESS)
    ap.add_argument("--part", choices=("all", "within", "monte-carlo"), default="all",
                    help="run one part only")
    ap.add_argument("--profile", action="store_true",
                    help="print the top functions of steadyfit's Monte Carlo run (cProfile)")
    args = ap.parse_args()
    if args.memory_probe:
        memory_probe(args.memory_probe)
        return
    if args.part in ("all", "within"):
        within_part(args.repeat)
    if args.part in ("all", "monte-carlo"):
        monte_carlo_part(args.repeat, args.profile)


def within_part(repeat: int) -> None:
    """1. within: steadyfit against PanelOLS."""
    from linearmodels.panel import PanelOLS

    from steadyfit.panel.design import DynamicPanel
    from steadyfit.panel.estimators import estimate

    frame = static_panel()
    regressors = ["x1", "x2", "x3"]
    indexed = frame.set_index(["economy", "year"])

    def build() -> DynamicPanel:
        return DynamicPanel.from_long(frame, "economy", "year", "y", regressors, lags=0)

    panel = build()

    def ours():
        return estimate(panel, "within", within_time_effects=False)

    def theirs():
        return PanelOLS(indexed["y"], indexed[regressors], entity_effects=True).fit(
            cov_type="clustered", cluster_entity=True)

    ours(), theirs()  # warm up
    t_lm, t_sf = _alternate(theirs, ours, repeat)
    t_build = min(_timed(build) for _ in range(repeat))
    gap = float(np.max(np.abs(ours().coef[:3] - theirs().params[regressors].to_numpy())))
    se_gap = float(np.max(np.abs(ours().se[:3] - theirs().std_errors[regressors].to_numpy())))
    mem = {which: _probe(which) for which in ("steadyfit", "linearmodels")}

    n_rows = f"{WITHIN_ECONOMIES:,} x {WITHIN_YEARS}"
    print(f"within, {n_rows}, 3 regressors, economy effects only, clustered by economy")
    print(f"  PanelOLS (model + fit, MultiIndex frame ready): {t_lm * 1e3:8.1f} ms")
    print(f"  steadyfit estimate (DynamicPanel ready):        {t_sf * 1e3:8.1f} ms"
          f"   speed-up {t_lm / t_sf:6.1f}x (target >= 10)")
    print(f"  steadyfit DynamicPanel.from_long:               {t_build * 1e3:8.1f} ms")
    print(f"  steadyfit from_long + estimate:                 {(t_build + t_sf) * 1e3:8.1f} ms"
          f"   speed-up {t_lm / (t_build + t_sf):6.1f}x")
    print(f"  max |coef difference| {gap:.2e}; max |clustered se difference| {se_gap:.2e}")
    for key, label in (("tracemalloc", "tracemalloc peak"), ("rss", "resident high-water")):
        a, b = mem["steadyfit"][key], mem["linearmodels"][key]
        if a is None or b is None:
            print(f"  {label}: not measurable here")
            continue
        print(f"  {label}: steadyfit {a / 2**20:6.1f} MiB, PanelOLS {b / 2**20:6.1f} MiB,"
              f" ratio {a / b:5.2f} (target <= 1.5)")
    a, b = mem["steadyfit"]["with_build"], mem["linearmodels"]["tracemalloc"]
    print(f"  tracemalloc peak, steadyfit from_long + estimate: {a / 2**20:6.1f} MiB,"
          f" ratio {a / b:5.2f}")



def monte_carlo_part(repeat: int, profile: bool) -> None:
    """2. Monte Carlo: five estimators against the numpy reference."""
    from steadyfit.panel.design import DynamicPanel
    from steadyfit.panel.estimators import estimate

    frames = [growth_panel(seed) for seed in range(MC_REPLICATIONS)]

    def sf_panel(f: pd.DataFrame) -> DynamicPanel:
        return DynamicPanel.from_long(f, "economy", "period", "ln_y", ["ln_sk", "ln_ngd"],
                                      lags=1)

    panels = [sf_panel(f) for f in frames]
    arrays = [to_arrays(f) for f in frames]

    def sf_all(p: DynamicPanel) -> dict[str, np.ndarray]:
        return {m: estimate(p, m, steps=2).coef for m in METHODS}

    def sf_run() -> None:
        for p in panels:
            sf_all(p)

    def ref_run() -> None:
        for y, x in arrays:
            reference_estimates(y, x)

    def sf_run_long() -> None:
        for f in frames:
            sf_all(sf_panel(f))

    def ref_run_long() -> None:
        for f in frames:
            reference_estimates(*to_arrays(f))

    worst = dict.fromkeys(METHODS, 0.0)
    for p, (y, x) in zip(panels, arrays, strict=True):
        ours_, ref = sf_all(p), reference_estimates(y, x)
        for m in METHODS:
            worst[m] = max(worst[m], float(np.max(np.abs(ours_[m] - ref[m]))))
    t_ref, t_mc = _alternate(ref_run, sf_run, repeat)
    t_ref_long, t_mc_long = _alternate(ref_run_long, sf_run_long, max(1, repeat // 2))

    fits = MC_REPLICATIONS * len(METHODS)
    print(f"Monte Carlo: {MC_REPLICATIONS} replications x 5 estimators, {MC_ECONOMIES} economies"
          f" x {MC_PERIODS} periods")
    print(f"  numpy reference (arrays ready):     {t_ref * 1e3:8.1f} ms"
          f"   {t_ref / fits * 1e3:6.2f} ms per fit")
    print(f"  steadyfit (DynamicPanel ready):     {t_mc * 1e3:8.1f} ms"
          f"   {t_mc / fits * 1e3:6.2f} ms per fit   ratio {t_mc / t_ref:5.2f} (target <= 3)")
    print(f"  both from the long tables: ref {t_ref_long * 1e3:7.1f} ms, steadyfit "
          f"{t_mc_long * 1e3:7.1f} ms   ratio {t_mc_long / t_ref_long:5.2f}")
    short = dict(zip(METHODS, ("pooled", "within", "FD-2SLS", "diff GMM", "sys GMM"),
                     strict=True))
    print("  max |coef difference| from the reference: "
          + ", ".join(f"{short[m]} {worst[m]:.1e}" for m in METHODS[:3]))
    print("    " + ", ".join(f"{short[m]} {worst[m]:.1e}" for m in METHODS[3:]))
    per_fit = {m: min(_timed(lambda m=m: [estimate(p, m, steps=2) for p in panels])
                      for _ in range(repeat)) / MC_REPLICATIONS for m in METHODS}
    print("  steadyfit per fit: "
          + ", ".join(f"{short[m]} {per_fit[m] * 1e3:.2f}" for m in METHODS) + " ms")

    if profile or t_mc / t_ref > 3:
        print("  where steadyfit's Monte Carlo time goes (cProfile, one pass; cumulative, own"
              " time, calls):")
        for line in _top_functions(sf_run, 12):
            print("    " + line)


def _top_functions(fn, count: int) -> list[str]:
    """The functions of a profiled call with the largest cumulative time, one short line
    each; wrappers that only dispatch (estimate, panel_gmm, the loop itself) are left out."""
    import cProfile
    import pstats

    prof = cProfile.Profile()
    prof.enable()
    fn()
    prof.disable()
    rows = []
    skip = {"estimate", "panel_gmm", "sf_run", "sf_all", "<dictcomp>", "<listcomp>",
            "disable"}
    for (path, line, name), (_, calls, own, cum, _) in pstats.Stats(prof).stats.items():
        if name in skip:
            continue
        where = Path(path).name if path != "~" else "builtin"
        label = f"{where}:{line} {name}" if line else name
        rows.append((cum, f"{label[:52]:<52} {cum * 1e3:7.1f} {own * 1e3:7.1f} ms {calls:6d}"))
    rows.sort(reverse=True)
    return [text for _, text in rows[:count]]

if __name__ == "__main__":
    main()
