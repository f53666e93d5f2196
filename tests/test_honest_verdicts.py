"""Verdicts only from numbers that exist; one treatment of non-convergence everywhere.

Regression tests for false verdicts seen when trying the tool: a levels-versus-growth
check with no standard error reported as "disagree (p < 0.001)" under two clusters, and a
non-converging growth fit shown as "-", "n/a" and a number in different outputs.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

import steadyfit
from conftest import simulated_data_section, write_spec
from steadyfit.cli import main
from steadyfit.report.html import render_html
from steadyfit.report.markdown import render_markdown
from steadyfit.report.text import render_text
from steadyfit.report.verdicts import consistency_lines, verdict_lines


def _two_cluster_spec(demo_dir):
    csv = demo_dir / "demo_economies.csv"
    d = pd.read_csv(csv)
    d["half"] = np.where(np.arange(len(d)) % 2 == 0, "east", "west")
    d.to_csv(csv, index=False)
    spec = demo_dir / "demo.toml"
    text = spec.read_text()
    text = text[:text.index("[[equation]]")] + (
        '[[equation]]\nname = "levels_k"\nform = "levels"\ncapital = ["physical"]\n'
        'samples = ["all"]\n\n[[equation]]\nname = "growth_k"\nform = "growth"\n'
        'capital = ["physical"]\nsamples = ["all"]\n\n[inference]\ncovariance = "cluster"\n'
        'cluster = "half"\n\n[report]\nfigures = "none"\n')
    spec.write_text(text)
    return spec


def test_two_clusters_give_no_consistency_verdict(demo_dir, tmp_path, capsys):
    findings = steadyfit.run(_two_cluster_spec(demo_dir))
    assert findings.consistency
    for c in findings.consistency:
        assert not c.test.available and c.test.rejects(0.05) is None
        assert "2 clusters" in c.test.reason and c.n_clusters == 2
        assert math.isnan(c.test.pvalue)
    lines = consistency_lines(findings)
    assert lines and all("cannot be compared" in line and "not available" in line
                         for line in lines)
    html = render_html(findings, (), {"id": "x", "created": "now", "command": []})
    md = render_markdown(findings)
    for text in (html, md, render_text(findings)):
        assert "differ significantly" not in text and "disagree at" not in text
    # the restriction's Wald test and the shares' standard errors need the singular
    # covariance too: not available, with the reason in the notes
    r = findings.result("levels_k", "all")
    assert not r.wald_test.available and r.f_test.available
    assert not r.share("alpha").estimate.has_se and r.share("alpha").band_status is None
    assert any("2 clusters" in w for w in findings.warnings)
    # results.json: null plus a reason
    assert main(["run", str(demo_dir / "demo.toml"), "--out", str(tmp_path / "o"),
                 "--quiet"]) == 0
    record = json.loads(next((tmp_path / "o" / "demo").iterdir()).joinpath(
        "results.json").read_text())
    test = record["consistency"][0]["test"]
    assert test["p"] is None and test["available"] is False and "clusters" in test["reason"]
    res = record["results"][0]
    assert res["quantities"]["restriction_wald_p"] is None
    assert "restriction_wald_p" in res["unavailable"]
    assert res["unrestricted"]["clusters"] == 2


def test_cluster_count_is_printed_beside_clustered_results(demo_dir):
    findings = steadyfit.run(_two_cluster_spec(demo_dir))
    assert "in 2 clusters" in verdict_lines(findings)[0]
    assert "clusters" in render_text(findings)


def _diverging(tmp_path, rng_seed=4):
    rng = np.random.RandomState(rng_seed)
    n = 120
    sk = np.exp(rng.normal(np.log(0.2), 0.3, n))
    sh = np.exp(rng.normal(np.log(0.06), 0.4, n))
    ngd = rng.uniform(0.005, 0.03, n) + 0.05
    y0 = np.exp(rng.normal(8, 1, n))
    # growth rises with initial income: b0 = +0.09, so no convergence
    growth = 0.5 + 0.09 * np.log(y0) + 0.2 * (np.log(sk) - np.log(ngd)) + rng.normal(0, 0.1, n)
    d = pd.DataFrame({"economy": [f"E{i:03d}" for i in range(n)], "y": y0 * np.exp(growth),
                      "y0": y0, "sk": sk, "sh": sh, "n": ngd - 0.05})
    d.to_csv(tmp_path / "sim.csv", index=False)
    return write_spec(tmp_path, simulated_data_section(start=True) + (
        '[assumptions]\nspan_years = 25\n[[equation]]\nname = "g"\nform = "growth"\n'
        'capital = ["physical"]\n[[target]]\nequation = "g"\nsample = "all"\n'
        'quantity = "lam"\nvalue = -0.0033\ntolerance = 0.002\n[[target]]\nequation = "g"\n'
        'sample = "all"\nquantity = "half_life"\nvalue = 30\ntolerance = 100\n'
        '[report]\nfigures = "none"\n'))


def test_no_convergence_is_one_story_everywhere(tmp_path):
    spec = _diverging(tmp_path)
    findings = steadyfit.run(spec)
    r = findings.result("g", "all")
    lam, half = r.speed_estimate("lam"), r.speed_estimate("half_life")
    b0 = r.restricted.coef[1]
    assert b0 > 0 and lam.value == pytest.approx(-math.log1p(b0) / 25)
    assert lam.remark == "divergence" and lam.has_se
    assert not half.has_value and half.missing == "none" and "no convergence" in half.reason
    assert r.share("alpha").estimate.missing == "no convergence"
    text = render_text(findings)
    html = render_html(findings, (), {"id": "x", "created": "now", "command": []})
    md = render_markdown(findings)
    shown = f"{lam.value:.4f}".replace("-", "\u2212")  # a true minus sign
    for out in (text, html, md):
        assert shown in out and "divergence" in out
        assert "nan" not in out.lower().replace("nance", "")  # no NaN leaks as text
    assert "half-life none (no convergence" in verdict_lines(findings)[0]
    # the warning is said once on the result's card, not again among its notes
    assert html.count(f"Warning</span>: {r.problem}") == 1 and r.problem not in r.notes
    lam_target, half_target = findings.scorecard
    assert lam_target.met and lam_target.ours == pytest.approx(lam.value)
    assert not half_target.met and half_target.ours is None and half_target.reason


def test_half_life_interval_is_unbounded_when_lambda_interval_reaches_zero():
    from steadyfit.inference import speed_estimates

    # b0 = -0.05 (lambda 0.002 over 25 years) with a wide interval reaching b0 > 0
    lam, half = speed_estimates(-0.05, 0.04, np.array([-0.13, 0.03]), 25.0, 0.95, None)
    assert lam.low < 0 < lam.high
    assert half.low > 0 and math.isinf(half.high)
    assert half.exact_low is not None and half.exact_low > 0 and math.isinf(half.exact_high)
    from steadyfit.report.tables import Cell, format_cell

    assert format_cell(Cell("interval", (half.low, half.high)), 1)[0].endswith("unbounded]")


def test_restriction_is_never_said_to_hold(demo_dir):
    findings = steadyfit.run(demo_dir / "demo.toml")
    html = render_html(findings, (), {"id": "x", "created": "now", "command": []})
    assert ">holds<" not in html.lower() and "not rejected at the 5% level" in html


def test_numerical_warnings_never_reach_the_terminal(demo_dir, tmp_path, capfd):
    assert main(["run", str(demo_dir / "demo.toml"), "--out", str(tmp_path / "o"),
                 "--quiet"]) == 0
    err = capfd.readouterr().err
    assert "RuntimeWarning" not in err and "Warning:" not in err


def test_a_warning_raised_while_estimating_becomes_a_note(demo_dir, monkeypatch):
    import warnings

    import steadyfit.pipeline as pipeline

    real = pipeline.restriction_tests

    def noisy(*args, **kwargs):
        warnings.warn("divide by zero encountered in a test", RuntimeWarning, stacklevel=1)
        return real(*args, **kwargs)

    monkeypatch.setattr(pipeline, "restriction_tests", noisy)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning that escaped would fail the test
        findings = steadyfit.run(demo_dir / "demo.toml")
    note = findings.results[0].notes
    assert len([n for n in note if "divide by zero" in n]) == 1
