"""Simulation recovery: data made from the model with known shares give them back."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import steadyfit
from conftest import simulated_data_section, write_spec
from steadyfit.demo import TRUE_ALPHA, TRUE_BETA

SPEC = simulated_data_section() + """
[[equation]]
name = "aug"
capital = ["physical", "human_rate"]
[[equation]]
name = "textbook"
"""


def _simulate(rng, n, a, b, noise):
    sk = np.exp(rng.normal(np.log(0.18), 0.4, n))
    sh = np.exp(rng.normal(np.log(0.05), 0.6, n))
    growth = rng.uniform(0.0, 0.035, n)
    ln_y = (8 + a / (1 - a - b) * np.log(sk) + b / (1 - a - b) * np.log(sh)
            - (a + b) / (1 - a - b) * np.log(growth + 0.05) + rng.normal(0, noise, n))
    return pd.DataFrame({"economy": [f"E{i:03d}" for i in range(n)], "y": np.exp(ln_y),
                         "sk": sk, "sh": sh, "n": growth})


def test_large_sample_recovers_the_shares(tmp_path):
    rng = np.random.RandomState(11)
    _simulate(rng, 4000, 0.3, 0.3, 0.2).to_csv(tmp_path / "sim.csv", index=False)
    f = steadyfit.run(write_spec(tmp_path, SPEC))
    r = f.result("aug", "all")
    assert r.share("alpha").estimate.value == pytest.approx(0.3, abs=0.01)
    assert r.share("beta").estimate.value == pytest.approx(0.3, abs=0.01)
    assert not r.f_test.rejects(0.001)


def test_interval_coverage_is_near_nominal(tmp_path):
    """Over 200 simulated samples of 80 economies the 95% delta intervals cover the truth
    in 90% to 99% of them (binomial spread for 200 draws is about 1.5 points)."""
    rng = np.random.RandomState(5)
    hits = 0
    reps = 200
    for _ in range(reps):
        _simulate(rng, 80, 0.33, 0.25, 0.3).to_csv(tmp_path / "sim.csv", index=False)
        text = SPEC.split("[[equation]]\nname = \"text")[0]
        spec = steadyfit.load_spec(write_spec(tmp_path, text))
        e = steadyfit.run(spec).result("aug", "all").share("alpha").estimate
        hits += e.low <= 0.33 <= e.high
    assert 0.90 <= hits / reps <= 0.99


def test_demo_recovers_its_true_shares(demo_dir):
    """The shipped demo data (made with TRUE_ALPHA, TRUE_BETA) give them back within the
    95% intervals on the sample the model describes (no resource exporters)."""
    f = steadyfit.run(demo_dir / "demo.toml")
    for eq in ("with_schooling", "schooling_stock"):
        r = f.result(eq, "no_resource_exporters")
        a, b = r.share("alpha").estimate, r.share("beta").estimate
        assert a.low <= TRUE_ALPHA <= a.high, eq
        assert b.low <= TRUE_BETA <= b.high, eq


def test_demo_table_is_reproducible():
    """The shipped CSV is exactly what the seeded generator makes."""
    from steadyfit.demo import DATA_FILE, generate, shipped_file

    shipped = pd.read_csv(shipped_file(DATA_FILE))
    pd.testing.assert_frame_equal(generate(), shipped, check_dtype=False)


def test_no_steady_state_is_flagged(tmp_path):
    """A restricted slope below -1 implies alpha above 1: no steady state, no ordinary share."""
    rng = np.random.RandomState(3)
    d = _simulate(rng, 200, 0.3, 0.0, 0.05)
    x = np.log(d.sk) - np.log(d.n + 0.05)
    d["y"] = np.exp(8 - 1.6 * x + rng.normal(0, 0.05, len(d)))
    d.to_csv(tmp_path / "sim.csv", index=False)
    spec = SPEC.split("[[equation]]\nname = \"aug\"")[0] + "[[equation]]\nname = \"textbook\"\n"
    r = steadyfit.run(write_spec(tmp_path, spec)).result("textbook", "all")
    assert not r.steady_state
    assert "no steady state" in r.problem.lower() and not r.notes  # said once, as the problem
    from steadyfit.report.tables import compact_table
    from steadyfit.report.text import render_table_text
    from steadyfit.report.verdicts import verdict_lines

    text = render_table_text(compact_table(steadyfit.run(write_spec(tmp_path, spec))))
    assert "no steady state" in text
    assert "no steady state" in verdict_lines(steadyfit.run(write_spec(tmp_path, spec)))[0].lower()
