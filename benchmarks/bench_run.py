"""Benchmark: a whole run against the bare regressions it contains, timed in the same process.

The baseline is the least any tool must do for the demo spec: read the CSV and
fit the same unrestricted and restricted OLS regressions with statsmodels.  The
ratio says what validation, samples, tests, delta method and verdicts add.
A second figure times `steadyfit --help` against a bare interpreter start.

Run: python benchmarks/bench_run.py [--repeat N]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path


def _plain(text: str) -> dict:
    """The demo spec without its robustness sections (timed on their own elsewhere)."""
    body = tomllib.loads(text)
    for section in ("bootstrap", "influence", "sweep"):
        body.pop(section, None)
    return body


def _best(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=7)
    args = ap.parse_args()

    import numpy as np
    import pandas as pd
    import statsmodels.api as sm

    import steadyfit
    from steadyfit.demo import write_demo
    from steadyfit.report.runfolder import write_run

    folder = Path(tempfile.mkdtemp())
    spec_path = write_demo(folder)
    spec_text = spec_path.read_text(encoding="utf-8")
    spec = steadyfit.spec_from_dict(_plain(spec_text), folder)

    def baseline() -> None:
        d = pd.read_csv(folder / "demo_economies.csv")
        for sample in (d, d[d.resource_exporter == 0],
                       d[(d.population_start >= 5e6) & d.region.isin(["north", "coast"])]):
            y = np.log(sample.output_per_worker_end)
            sk = np.log(sample.investment_share / 100)
            sh = np.log(sample.secondary_enrolment / 100)
            ngd = np.log(sample.workforce_growth / 100 + 0.05)
            sm.OLS(y, sm.add_constant(np.column_stack([sk, ngd]))).fit(cov_type="HC1")
            sm.OLS(y, sm.add_constant(sk - ngd)).fit(cov_type="HC1")
            sm.OLS(y, sm.add_constant(np.column_stack([sk, ngd, sh]))).fit(cov_type="HC1")
            sm.OLS(y, sm.add_constant(np.column_stack([sk - ngd, sh - ngd]))).fit(cov_type="HC1")

    baseline()
    steadyfit.run(spec)  # warm imports
    t_base = _best(baseline, args.repeat)
    t_run = _best(lambda: steadyfit.run(spec), args.repeat)
    out = Path(tempfile.mkdtemp())
    findings = steadyfit.run(spec)
    t_write = _best(lambda: write_run(findings, out, command=["bench"]), max(1, args.repeat // 3))

    from steadyfit.estimators import fit_ols
    from steadyfit.pipeline import plan
    from steadyfit.structural import minimum_distance, nonlinear_least_squares

    cell = next(c for c in plan(spec).cells if c.structural)
    d = cell.design
    res = fit_ols(d.y, d.x_restricted, d.names_restricted, d.labels_restricted, "HC1")
    unres = fit_ols(d.y, d.x_unrestricted, d.names_unrestricted, d.labels_unrestricted, "HC1")
    start = d.form.parameters.forward.value(res.slopes()[0])
    t_ols = _best(lambda: fit_ols(d.y, d.x_restricted, d.names_restricted,
                                  d.labels_restricted, "HC1"), args.repeat)
    t_nls = _best(lambda: nonlinear_least_squares(d, start, float(res.coef[0]), "HC1", 0.95),
                  args.repeat)
    t_md = _best(lambda: minimum_distance(d.form, unres, start, 0.95), args.repeat)

    from steadyfit.report.figures import RASTER_ABOVE, all_figures

    n_figures = len(all_figures(findings))  # counted once, outside the timed baseline

    def figure_baseline() -> None:
        import io

        import matplotlib.pyplot as plt

        rng = np.random.RandomState(0)
        for _ in range(n_figures):
            fig, ax = plt.subplots()
            ax.scatter(rng.normal(size=90), rng.normal(size=90))
            fig.savefig(io.StringIO(), format="svg")
            plt.close(fig)

    fig_repeat = max(5, args.repeat)  # the same repeats for the baseline and for ours
    t_fig_base = _best(figure_baseline, fig_repeat)
    t_fig = _best(lambda: all_figures(findings), fig_repeat)
    t_fig_serial = _best(lambda: all_figures(findings, workers=1), fig_repeat)
    t_fig_both = _best(lambda: all_figures(findings, ("svg", "pdf")), max(2, fig_repeat // 3))

    # the input checks (delimiter, ids, codes, units, mixed units) on a large table, against
    # a bare pandas read of the same file
    from steadyfit.data import load_data

    big = folder / "big.csv"
    rng = np.random.RandomState(1)
    rows = 100_000
    pd.DataFrame({
        "economy": [f"E{i:06d}" for i in range(rows)],
        "region": rng.choice(["north", "coast", "islands", "highland"], rows),
        "resource_exporter": rng.randint(0, 2, rows),
        "population_start": rng.uniform(1e5, 1e8, rows),
        "output_per_worker_start": np.exp(rng.normal(8, 1, rows)),
        "output_per_worker_end": np.exp(rng.normal(8.5, 1, rows)),
        "investment_share": rng.uniform(5, 35, rows),
        "secondary_enrolment": rng.uniform(1, 12, rows),
        "schooling_index": rng.uniform(1, 20, rows),
        "workforce_growth": rng.uniform(0.2, 3.5, rows),
        "labour_share": rng.uniform(50, 75, rows),
    }).to_csv(big, index=False)
    big_spec = steadyfit.spec_from_dict(
        {**_plain(spec_text), "data": {**tomllib.loads(spec_text)["data"],
                                              "file": str(big)}}, folder)
    t_read = _best(lambda: pd.read_csv(big), 3)
    t_load = _best(lambda: load_data(big_spec), 3)

    # the figures of a 10,000-economy run (the first rows of the large table): their size,
    # with the markers of large samples rasterised
    many = 10_000
    many_csv = folder / "many.csv"
    pd.read_csv(big, nrows=many).to_csv(many_csv, index=False)
    many_spec = steadyfit.spec_from_dict(
        {**_plain(spec_text), "data": {**tomllib.loads(spec_text)["data"],
                                              "file": str(many_csv)}}, folder)
    many_findings = steadyfit.run(many_spec)
    t0 = time.perf_counter()
    many_figures = all_figures(many_findings)
    t_many = time.perf_counter() - t0
    many_svg = sum(len(f.svg.encode("utf-8")) for f in many_figures)

    def cli(argv: list[str]) -> float:
        return statistics.median(
            _timed_proc([sys.executable, *argv]) for _ in range(max(3, args.repeat // 2)))

    t_python = cli(["-c", "pass"])
    t_help = cli(["-m", "steadyfit", "--help"])

    n_cells = len(findings.results)
    print(f"demo spec: {n_cells} equation x sample cells, {2 * n_cells} regressions")
    base = "baseline (read CSV + bare statsmodels fits, 3 samples x 4 fits):"
    print(f"{base} {t_base * 1e3:8.1f} ms")
    print(f"steadyfit.run (validate, samples, fits, tests, delta method):   {t_run * 1e3:8.1f} ms"
          f"   ratio {t_run / t_base:5.2f}")
    print(f"restricted OLS fit (statsmodels, HC1), growth form:           {t_ols * 1e3:8.1f} ms")
    print(f"nonlinear least squares, same equation:                       {t_nls * 1e3:8.1f} ms"
          f"   ratio {t_nls / t_ols:5.2f}")
    print(f"minimum distance, same equation:                              {t_md * 1e3:8.1f} ms"
          f"   ratio {t_md / t_ols:5.2f}")
    label = f"figures: bare scatter + SVG save, {n_figures} plots:"
    print(f"{label:<62}{t_fig_base * 1e3:8.1f} ms")
    print(f"figures: steadyfit all_figures (SVG; cores where it pays):      {t_fig * 1e3:8.1f} ms"
          f"   ratio {t_fig / t_fig_base:5.2f}")
    print(f"figures: steadyfit all_figures, one process:                   "
          f"{t_fig_serial * 1e3:8.1f} ms   ratio {t_fig_serial / t_fig_base:5.2f}")
    print(f"figures: steadyfit all_figures, SVG and PDF:                   "
          f"{t_fig_both * 1e3:8.1f} ms   ratio {t_fig_both / t_fig_base:5.2f}")
    print(f"figures of a {many:,}-economy run: {len(many_figures)} figures, SVG total "
          f"{many_svg / 1e6:5.2f} MB (markers rasterised above {RASTER_ABOVE:,} points), "
          f"drawn in {t_many * 1e3:6.0f} ms")
    print(f"write_run (everything rendered and written atomically):        {t_write * 1e3:8.1f} ms")
    print(f"reading {rows:,} economies: bare pandas read_csv:               {t_read * 1e3:8.1f} ms")
    print(f"steadyfit load_data (all input checks, canonical columns):    {t_load * 1e3:8.1f} ms"
          f"   ratio {t_load / t_read:5.2f}")
    print(f"python -c pass: {t_python * 1e3:6.0f} ms; steadyfit --help: {t_help * 1e3:6.0f} ms"
          f"   ratio {t_help / t_python:5.2f}")


def _timed_proc(argv: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(argv, check=True, capture_output=True)
    return time.perf_counter() - t0


if __name__ == "__main__":
    main()
