"""Valid but awkward names: economy ids with TeX-like text, pipes, newlines and missing-value
look-alikes, an odd spec file name, and CSV files with other delimiters.

Every run draws all figures, so labels pass through matplotlib, and every run must end with
exit status 0 and a complete run folder inside the output root.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from conftest import small_data_section
from steadyfit.cli import main

PLAIN = ["Brakmoor", "Celvane", "Dunmarsh", "Eskarrow", "Fornholt", "Glimmerby", "Harrowend",
         "Ilsquay", "Jorvale", "Kestermere", "Lunhaven", "Morwick"]
COLUMNS = ["economy", "income_end", "invest", "school", "growth"]

SPEC = """\
title = "Awkward names"

""" + small_data_section("{data}") + """
[[equation]]
name = "levels_human"
form = "levels"
capital = ["physical", "human_rate"]

[report]
figures = "all"
"""

# hostile ids used in the estimation, and hostile ids dropped from it (their schooling is
# blank), so that they appear in the dropped-economies table of summary.md
DOLLAR_USED = ["$\\alpha$ \\ Port", "Vell $\\qux{^$ Reach"]
DOLLAR_DROPPED = ["Low $\\beta$ Ford"]
PIPE_USED = ["Upper | Lower Vask"]
PIPE_DROPPED = ["Lower | Upper Vask"]
NA_USED = ["NA", "N/A", "None"]
NEWLINE_USED = ["North\nMarrow Isle"]
NEWLINE_DROPPED = ["South\nMarrow Isle"]

CASES = {
    "dollar-backslash": (DOLLAR_USED, DOLLAR_DROPPED),
    "pipe": (PIPE_USED, PIPE_DROPPED),
    "na-none": (NA_USED, []),
    "newline": (NEWLINE_USED, NEWLINE_DROPPED),
    "all-together": (DOLLAR_USED + PIPE_USED + NA_USED + NEWLINE_USED,
                     DOLLAR_DROPPED + PIPE_DROPPED + NEWLINE_DROPPED),
}


def _rows(used_hostile: list[str], dropped: list[str], seed: int = 11) -> list[list[str]]:
    """Invented economies that roughly follow the augmented model; the hostile ones get the
    largest residuals so the fit figure labels them."""
    names = PLAIN + used_hostile + dropped
    n = len(names)
    rng = np.random.RandomState(seed)
    invest = rng.uniform(10, 35, n)
    school = rng.uniform(2, 12, n)
    growth = rng.uniform(0.5, 3.5, n)
    ln_y = (8.0 + 0.5 * np.log(invest / 100) + 0.4 * np.log(school / 100)
            - 0.9 * np.log(growth / 100 + 0.05) + rng.normal(0, 0.05, n))
    shock = np.zeros(n)
    for k, name in enumerate(used_hostile):
        size = 0.9 if "$" in name else 0.45
        shock[len(PLAIN) + k] = size if k % 2 == 0 else -size
    income = np.exp(ln_y + shock)
    rows = []
    for i, name in enumerate(names):
        school_text = "" if name in dropped else f"{school[i]:.3f}"
        rows.append([name, f"{income[i]:.1f}", f"{invest[i]:.3f}", school_text,
                     f"{growth[i]:.3f}"])
    return rows


def _write_csv(path: Path, rows: list[list[str]], delimiter: str = ",") -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        writer = csv.writer(fh, delimiter=delimiter, lineterminator="\n")
        writer.writerow(COLUMNS)
        writer.writerows(rows)


def _write_case(folder: Path, rows: list[list[str]], spec_name: str = "names.toml",
                delimiter: str = ",") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    _write_csv(folder / "economies.csv", rows, delimiter)
    spec = folder / spec_name
    spec.write_text(SPEC.format(data="economies.csv"), encoding="utf-8")
    return spec


def _run(spec: Path, root: Path, capsys) -> Path:  # type: ignore[no-untyped-def]
    """Run in-process (--debug: a failure shows its traceback); return the run folder."""
    capsys.readouterr()
    status = main(["--debug", "run", str(spec), "--out", str(root), "--quiet"])
    out = capsys.readouterr().out
    assert status == 0
    folder = Path(out.strip().splitlines()[-1])
    assert folder.is_dir(), f"no run folder at {folder}"
    assert folder.resolve().parent.parent == root.resolve(), \
        f"run folder {folder.resolve()} is not ROOT/<spec-stem>/<run-id> under {root.resolve()}"
    for name in ("results.json", "report.html", "summary.md", "tables", "figures", "inputs"):
        assert (folder / name).exists(), f"{name} missing from {folder}"
    return folder


def _assert_markdown_rows_whole(text: str, where: str) -> None:
    for number, line in enumerate(text.splitlines(), 1):
        if line.startswith("|"):
            assert line.endswith("|"), f"{where} line {number} is a broken table row: {line!r}"


@pytest.mark.parametrize("case", list(CASES))
def test_hostile_ids_run_and_render(tmp_path, capsys, case):
    used, dropped = CASES[case]
    spec = _write_case(tmp_path / "in", _rows(used, dropped))
    root = tmp_path / "out"
    folder = _run(spec, root, capsys)

    record = json.loads((folder / "results.json").read_text(encoding="utf-8"))
    members = {x["name"]: x["members"] for x in record["samples"]}
    for result in record["results"]:
        dropped_ids = [d["economy"] for d in result["dropped"]]
        economies = [e for e in members[result["sample"]] if e not in dropped_ids]
        for name in used:
            assert name in economies, f"{name!r} not among the economies used: {economies}"
            assert name not in dropped_ids
        for name in dropped:
            assert name in dropped_ids, f"{name!r} not listed as dropped: {dropped_ids}"
        assert len(economies) == len(PLAIN) + len(used)

    summary = (folder / "summary.md").read_text(encoding="utf-8")
    _assert_markdown_rows_whole(summary, "summary.md")
    if "|" in "".join(dropped):
        for name in dropped:
            if "|" in name:
                assert name.replace("|", "\\|") in summary, f"{name!r} not escaped as \\|"
                assert name not in summary, f"{name!r} appears with a bare pipe"


def test_dollar_ids_are_drawn_as_plain_text(tmp_path, capsys):
    spec = _write_case(tmp_path / "in", _rows(DOLLAR_USED, []))
    folder = _run(spec, tmp_path / "out", capsys)
    svg = "".join(p.read_text(encoding="utf-8") for p in (folder / "figures").glob("*.svg"))
    assert svg, "no figures were drawn"
    # the two economies with the largest residuals are labelled in the fit figure; drawn as
    # plain text, their ids appear verbatim in the SVG text (no mathtext symbols)
    for name in DOLLAR_USED:
        assert name in svg, f"{name!r} is not drawn verbatim in any figure"


def test_blank_id_is_still_missing(tmp_path, capsys):
    rows = _rows([], [])
    rows[3][0] = ""
    spec = _write_case(tmp_path / "in", rows)
    status = main(["run", str(spec), "--out", str(tmp_path / "out"), "--quiet"])
    assert status == 2
    assert "data.id" in capsys.readouterr().err
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").rglob("results.json"))


def test_spec_named_dots_stays_inside_the_output_root(tmp_path, capsys):
    spec = _write_case(tmp_path / "in", _rows([], []), spec_name="...toml")
    root = tmp_path / "out"
    before = sorted(p.name for p in tmp_path.iterdir())
    folder = _run(spec, root, capsys)
    assert folder.resolve().is_relative_to(root.resolve())
    assert sorted(p.name for p in tmp_path.iterdir()) == before + ["out"], \
        "the run wrote outside its output root"
    assert sorted(p.name for p in (tmp_path / "in").iterdir()) == ["...toml", "economies.csv"]


@pytest.mark.parametrize("delimiter", [";", "\t"], ids=["semicolon", "tab"])
def test_other_delimiters_give_the_same_estimates(tmp_path, capsys, delimiter):
    rows = _rows(["Port Elvane", "Quarry Hollow"], [])
    estimates = {}
    for label, sep in (("comma", ","), ("other", delimiter)):
        spec = _write_case(tmp_path / label, rows, delimiter=sep)
        folder = _run(spec, tmp_path / f"out-{label}", capsys)
        record = json.loads((folder / "results.json").read_text(encoding="utf-8"))
        result = record["results"][0]
        estimates[label] = (result["quantities"]["alpha"], result["observations"],
                            sorted(record["samples"][0]["members"]))
    if delimiter == ";":
        assert ";" in (tmp_path / "other" / "economies.csv").read_text(encoding="utf-8")
    assert estimates["other"][1:] == estimates["comma"][1:]
    assert estimates["other"][0] == pytest.approx(estimates["comma"][0], rel=1e-12, abs=1e-12)
