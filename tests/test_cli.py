"""The command line through a subprocess: run, check, demo, and bad input (exit 2)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest


def steadyfit(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "steadyfit", *map(str, args)],
                          capture_output=True, text=True, timeout=180, cwd=cwd)


def test_help_answers():
    proc = steadyfit("--help")
    assert proc.returncode == 0 and "run" in proc.stdout and "demo" in proc.stdout


def test_help_does_not_load_heavy_libraries():
    code = ("import sys, steadyfit.cli as c\n"
            "try:\n    c.main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print(sorted(m for m in ('pandas', 'statsmodels', 'scipy') if m in sys.modules))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.stdout.strip().endswith("[]")


def test_demo_writes_a_run_folder(tmp_path):
    proc = steadyfit("demo", "--out", tmp_path / "d")
    assert proc.returncode == 0, proc.stderr
    assert "Key results" in proc.stdout
    runs = list((tmp_path / "d" / "reports" / "demo").iterdir())
    assert len(runs) == 1 and (runs[0] / "summary.md").exists()


def test_run_and_check(demo_dir, tmp_path):
    proc = steadyfit("check", demo_dir / "demo.toml")
    assert proc.returncode == 0, proc.stderr
    assert "with_schooling [levels:physical+human_rate] on no_resource_exporters: 80" in proc.stdout
    proc = steadyfit("run", demo_dir / "demo.toml", "--out", tmp_path / "o", "--quiet")
    assert proc.returncode == 0, proc.stderr
    assert Path(proc.stdout.strip()).parent == tmp_path / "o" / "demo"


def test_check_lists_dropped_economies(demo_dir):
    csv = demo_dir / "demo_economies.csv"
    lines = csv.read_text().splitlines()
    head = lines[0].split(",")
    row = lines[1].split(",")
    row[head.index("secondary_enrolment")] = ""
    lines[1] = ",".join(row)
    csv.write_text("\n".join(lines) + "\n")
    proc = steadyfit("check", demo_dir / "demo.toml")
    assert proc.returncode == 0, proc.stderr
    assert f"- {row[0]}: missing schooling ('secondary_enrolment')" in proc.stdout


def _edit(demo_dir, old, new, csv=None):
    spec = demo_dir / "demo.toml"
    text = spec.read_text()
    assert old in text
    spec.write_text(text.replace(old, new, 1))
    if csv:
        path = demo_dir / "demo_economies.csv"
        path.write_text(csv(path.read_text()))
    return spec


def _set_investment(value):
    def edit(text):
        lines = text.splitlines()
        i = lines[0].split(",").index("investment_share")
        row = lines[3].split(",")
        row[i] = value
        lines[3] = ",".join(row)
        return "\n".join(lines) + "\n"

    return edit


BAD = {
    "malformed TOML": (("[data]", "[data"), None, "malformed TOML"),
    "unknown key": (("id = \"economy\"", "id = \"economy\"\nfle = 1"), None,
                    "unknown key 'fle'; did you mean 'file'?"),
    "missing column": (("income = \"output_per_worker_end\"", "income = \"output_per_worker\""),
                       None, "no column 'output_per_worker'"),
    "percent as fraction": (("invest = \"percent\"", "invest = \"fraction\""), None,
                            "look like percent"),
    "zero investment": (("title", "title"), _set_investment("0"), "invest <= 0 (value 0)"),
    "negative investment": (("title", "title"), _set_investment("-4.5"),
                            "invest <= 0 (value -4.5)"),
    "too few observations": (("large_north_coast = \"", "large_north_coast = \"population_start"
                              " > 3e8 and "), None, "needs at least 6 economies"),
    "collinear regressors": (("schooling = \"secondary_enrolment\"",
                              "schooling = \"investment_share\""), None,
                             "regressor ln(sₕ) is perfectly collinear"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input_gives_one_line_and_exit_2(demo_dir, tmp_path, case):
    (old, new), csv, fragment = BAD[case]
    spec = _edit(demo_dir, old, new, csv)
    before = {p: p.read_bytes() for p in demo_dir.iterdir()}
    out = tmp_path / "runs"
    proc = steadyfit("run", spec, "--out", out)
    assert proc.returncode == 2, proc.stdout + proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("steadyfit: error: "), proc.stderr
    assert fragment in lines[0]
    assert "Traceback" not in proc.stderr
    assert not out.exists()  # no run folder, not even an empty one
    assert {p: p.read_bytes() for p in demo_dir.iterdir()} == before  # nothing changed


def test_debug_shows_the_traceback(tmp_path):
    proc = steadyfit("--debug", "run", tmp_path / "missing.toml")
    assert proc.returncode != 0 and "Traceback" in proc.stderr


def test_demo_refuses_to_overwrite_a_different_file(tmp_path):
    (tmp_path / "d").mkdir()
    (tmp_path / "d" / "demo.toml").write_text("mine")
    proc = steadyfit("demo", "--out", tmp_path / "d")
    assert proc.returncode == 2 and "differs" in proc.stderr
    assert (tmp_path / "d" / "demo.toml").read_text() == "mine"


def test_repository_demo_spec_matches_the_shipped_one():
    """specs/demo.toml is the packaged demo spec with only the data path changed."""
    from steadyfit.demo import SPEC_FILE, shipped_file

    root = Path(__file__).parent.parent
    ours = (root / "specs" / "demo.toml").read_text().splitlines()
    shipped = shipped_file(SPEC_FILE).read_text().splitlines()
    diff = [(a, b) for a, b in zip(ours, shipped, strict=True) if a != b]
    assert diff == [('file = "../src/steadyfit/demo/demo_economies.csv"',
                     'file = "demo_economies.csv"')]


def test_output_folder_that_cannot_be_made_exits_2(demo_dir, tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    proc = steadyfit("run", demo_dir / "demo.toml", "--out", blocker)
    assert proc.returncode == 2 and "cannot create the output folder" in proc.stderr
    assert blocker.read_text() == "not a folder"


def test_numeric_looking_ids_keep_their_leading_zeros(tmp_path):
    import pandas as pd

    import steadyfit as sf
    from steadyfit.demo import write_demo

    spec = write_demo(tmp_path / "d")
    csv = tmp_path / "d" / "demo_economies.csv"
    d = pd.read_csv(csv)
    d["economy"] = [f"{i:03d}" for i in range(len(d))]
    d.to_csv(csv, index=False)
    f = sf.run(spec)
    assert "000" in f.result("physical_only", "all").economies
