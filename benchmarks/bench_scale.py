"""Benchmark: a whole `steadyfit run` as a process, at the smallest and the largest size.

Two parts, each a ratio measured in this run, baseline and candidate alternating:

- ``imports``: `steadyfit run` on the demo spec (robustness sections left out, figures off)
  against a process that only imports numpy, scipy, pandas, statsmodels, linearmodels,
  matplotlib, jinja2 and pydantic.  Target: at most 1.0.
- ``million``: `steadyfit run` on 1,000,000 simulated economies (the demo spec's equations
  and samples, figures off) against a process that reads the same CSV with pandas and fits
  the same unrestricted and restricted regressions with bare statsmodels (HC1).  Targets: at
  most 2 times its time, at most 1.5 times its peak memory, and a run folder under 20 MB.

Each process is timed from start to exit; its peak memory is the resident set size the
kernel reports for it alone (``os.wait4``).  The simulated economies follow the demo's
model with invented ids (``Sim0000001`` ...).

Run: python benchmarks/bench_scale.py [--part imports|million|all] [--rounds N]
     [--economies N]
"""

from __future__ import annotations

import argparse
import json
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

IMPORTS = "import numpy, scipy, pandas, statsmodels, linearmodels, matplotlib, jinja2, pydantic"

# The demo spec's equations, fitted with bare statsmodels: sample -> equations, each
# equation its unrestricted and restricted regressors (logs of the CSV's columns).
BARE = '''
import sys
import numpy as np, pandas as pd, statsmodels.api as sm
d = pd.read_csv(sys.argv[1])
samples = {
    "all": d,
    "no_resource_exporters": d[d.resource_exporter == 0],
    "large_north_coast": d[(d.population_start >= 5e6) & d.region.isin(["north", "coast"])],
}
equations = {"all": ("physical_only", "with_schooling", "unconditional"),
             "no_resource_exporters": ("physical_only", "with_schooling", "schooling_stock",
                                       "convergence"),
             "large_north_coast": ("with_schooling",)}
for name, chosen in equations.items():
    s = samples[name]
    y, y0 = np.log(s.output_per_worker_end), np.log(s.output_per_worker_start)
    sk, sh = np.log(s.investment_share / 100), np.log(s.secondary_enrolment / 100)
    h, n = np.log(s.schooling_index), np.log(s.workforce_growth / 100 + 0.05)
    fits = {"physical_only": (y, [sk, n], [sk - n]),
            "with_schooling": (y, [sk, n, sh], [sk - n, sh - n]),
            "schooling_stock": (y, [sk, n, h], [sk - n, h]),
            "convergence": (y - y0, [y0, sk, n, sh], [y0, sk - n, sh - n]),
            "unconditional": (y - y0, [y0], [y0])}
    for eq in chosen:
        dep, unrestricted, restricted = fits[eq]
        for regs in (unrestricted, restricted):
            sm.OLS(dep, sm.add_constant(np.column_stack(regs))).fit(cov_type="HC1")
'''


def _spec_text(data_file: Path) -> str:
    """The demo spec without its robustness sections, reading ``data_file``, figures off."""
    from steadyfit.demo import SPEC_FILE, shipped_file

    text = shipped_file(SPEC_FILE).read_text(encoding="utf-8").split("# Robustness")[0]
    text = re.sub(r'(?m)^file = ".*"$', f"file = {json.dumps(str(data_file))}", text, count=1)
    assert tomllib.loads(text)["data"]["file"] == str(data_file)
    return text + '\n[report]\nfigures = "none"\n'


def simulate(n: int, path: Path, seed: int = 5) -> None:
    """``n`` economies from the demo's model (invented ids), written as CSV."""
    import numpy as np
    import pandas as pd

    from steadyfit.demo import G_PLUS_DELTA, SPAN_YEARS, TRUE_ALPHA, TRUE_BETA

    rng = np.random.RandomState(seed)
    a, b = TRUE_ALPHA, TRUE_BETA
    region = np.array(["north", "coast", "highland", "islands"])[rng.randint(0, 4, n)]
    exporter = (rng.uniform(size=n) < 0.18).astype(int)
    invest = np.exp(rng.normal(np.log(16.0), 0.45, n)).clip(3, 45)
    enrol = np.exp(rng.normal(np.log(4.5), 0.7, n)).clip(0.4, 14)
    growth = rng.uniform(0.2, 3.6, n)
    ngd = growth / 100 + G_PLUS_DELTA
    ln_a = 7.9 + rng.normal(0, 0.22, n) + exporter * rng.normal(0.9, 0.5, n)
    ln_ystar = (ln_a + a / (1 - a - b) * np.log(invest / 100)
                + b / (1 - a - b) * np.log(enrol / 100) - (a + b) / (1 - a - b) * np.log(ngd))
    theta = 1 - np.exp(-ngd * (1 - a - b) * SPAN_YEARS)
    y0 = ln_ystar + rng.normal(-0.35, 0.45, n)
    y1 = y0 + 0.02 * SPAN_YEARS + theta * (ln_ystar - y0) + rng.normal(0, 0.12, n)
    pd.DataFrame({
        "economy": [f"Sim{i:07d}" for i in range(1, n + 1)],
        "region": region,
        "resource_exporter": exporter,
        "population_start": np.exp(rng.normal(np.log(8e6), 1.3, n)).round(-3).astype(np.int64),
        "output_per_worker_start": np.exp(y0).round(0),
        "output_per_worker_end": np.exp(y1).round(0),
        "investment_share": invest.round(2),
        "secondary_enrolment": enrol.round(2),
        "schooling_index": np.exp(rng.normal(1.8, 0.4, n)).round(3),
        "workforce_growth": growth.round(3),
        "labour_share": (60 + rng.normal(0, 3, n)).round(1),
    }).to_csv(path, index=False)


def measured(argv: list[str], cwd: Path) -> tuple[float, float]:
    """Wall seconds and peak resident megabytes of one process (its own, from wait4)."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, cwd=cwd, stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    seconds = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    err = proc.stderr.read().decode() if proc.stderr else ""
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(argv)} failed ({proc.returncode}):\n{err}")
    return seconds, usage.ru_maxrss / 1024  # kilobytes on Linux


def folder_megabytes(root: Path) -> float:
    return sum(p.stat().st_size for p in root.rglob("*") if p.is_file()) / 1e6


def alternate(baseline: list[str], candidate: list[str], rounds: int, cwd: Path,
              before_candidate=None) -> tuple[list, list]:
    base, cand = [], []
    for _ in range(rounds):
        base.append(measured(baseline, cwd))
        if before_candidate is not None:
            before_candidate()
        cand.append(measured(candidate, cwd))
    return base, cand


def part_imports(work: Path, rounds: int) -> None:
    from steadyfit.demo import DATA_FILE, shipped_file

    spec = work / "demo_plain.toml"
    spec.write_text(_spec_text(shipped_file(DATA_FILE)), encoding="utf-8")
    out = work / "demo_runs"
    base, cand = alternate([sys.executable, "-c", IMPORTS],
                           [sys.executable, "-m", "steadyfit", "run", str(spec), "--quiet",
                            "--out", str(out)], rounds, work,
                           lambda: shutil.rmtree(out, ignore_errors=True))
    tb, tc = statistics.median(t for t, _ in base), statistics.median(t for t, _ in cand)
    print(f"imports only ({IMPORTS[7:]}): median {tb * 1e3:7.0f} ms over {rounds} runs")
    print(f"steadyfit run, demo, figures off:                     median {tc * 1e3:7.0f} ms"
          f"   ratio {tc / tb:5.2f}  (target <= 1.0)")


def part_million(work: Path, rounds: int, economies: int) -> None:
    data = work / "simulated.csv"
    t0 = time.perf_counter()
    simulate(economies, data)
    print(f"simulated {economies:,} economies ({data.stat().st_size / 1e6:.0f} MB CSV) in "
          f"{time.perf_counter() - t0:.1f} s")
    spec = work / "simulated.toml"
    spec.write_text(_spec_text(data), encoding="utf-8")
    bare = work / "bare.py"
    bare.write_text(BARE, encoding="utf-8")
    out = work / "runs"
    base, cand = alternate([sys.executable, str(bare), str(data)],
                           [sys.executable, "-m", "steadyfit", "run", str(spec), "--quiet",
                            "--out", str(out)], rounds, work,
                           lambda: shutil.rmtree(out, ignore_errors=True))
    tb, tc = statistics.median(t for t, _ in base), statistics.median(t for t, _ in cand)
    mb, mc = max(m for _, m in base), max(m for _, m in cand)
    size = folder_megabytes(out)
    print(f"bare statsmodels (read CSV, 16 OLS fits, HC1):  median {tb:6.1f} s, peak "
          f"{mb:6.0f} MB")
    print(f"steadyfit run, figures off:                      median {tc:6.1f} s, peak "
          f"{mc:6.0f} MB   time ratio {tc / tb:4.2f} (target <= 2), memory ratio "
          f"{mc / mb:4.2f} (target <= 1.5)")
    print(f"run folder: {size:.2f} MB (target < 20 MB)")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--part", choices=("imports", "million", "all"), default="all")
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--economies", type=int, default=1_000_000)
    args = ap.parse_args()
    work = Path(tempfile.mkdtemp(prefix="steadyfit-bench-"))
    try:
        if args.part in ("imports", "all"):
            part_imports(work, max(args.rounds, 5))
        if args.part in ("million", "all"):
            part_million(work, args.rounds, args.economies)
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
