"""A corpus of bad inputs: every case must be refused with exit status 2 and one clear line.

Each folder under ``tests/refusals/`` holds a ``spec.toml``, its data file(s) and an
``expect.toml``::

    about = "one sentence: what is wrong"
    exit = 2
    names = ["..."]          # substrings the error line must contain
    use_out_option = false   # optional: run without --out (default true)

A case is refused well when ``steadyfit run`` returns the expected status, prints
exactly one line ``steadyfit: error: ...`` on standard error (no traceback, at most
400 characters) that names every entry of ``names``, writes no run folder and
leaves every input file byte-for-byte unchanged.

Folders whose names start with ``_`` are valid base cases the corpus is derived
from; they must run with exit status 0.
"""

from __future__ import annotations

import hashlib
import shutil
import tomllib
from pathlib import Path

import pytest

from steadyfit.cli import main

REFUSALS = Path(__file__).parent / "refusals"
MAX_MESSAGE = 400
PREFIX = "steadyfit: error:"


def _folders(base: bool) -> list[Path]:
    if not REFUSALS.is_dir():
        return []
    return sorted(p for p in REFUSALS.iterdir()
                  if p.is_dir() and not p.name.startswith(".")
                  and p.name.startswith("_") == base)


CASES = _folders(base=False)
BASES = _folders(base=True)


def _expect(folder: Path) -> dict:
    return tomllib.loads((folder / "expect.toml").read_text(encoding="utf-8"))


def _hashes(folder: Path) -> dict[str, str]:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _entries(folder: Path) -> list[Path]:
    return sorted(folder.rglob("*")) if folder.exists() else []


def _copy(folder: Path, tmp_path: Path) -> Path:
    work = tmp_path / "case" / folder.name
    shutil.copytree(folder, work)
    return work


def _run(work: Path, out: Path, use_out: bool, capsys) -> tuple[int, str, str]:
    argv = ["run", str(work / "spec.toml")]
    if use_out:
        argv += ["--out", str(out)]
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_corpus_is_large_enough():
    assert len(CASES) >= 60, f"only {len(CASES)} refusal cases in {REFUSALS}"


def test_every_case_has_spec_and_expect():
    for folder in CASES + BASES:
        assert (folder / "spec.toml").is_file(), f"{folder.name}: no spec.toml"
        assert (folder / "expect.toml").is_file(), f"{folder.name}: no expect.toml"
    for folder in CASES:
        expect = _expect(folder)
        assert isinstance(expect.get("about"), str) and expect["about"], folder.name
        assert expect.get("exit") == 2, folder.name
        names = expect.get("names")
        assert isinstance(names, list) and names, folder.name
        assert all(isinstance(n, str) and n for n in names), folder.name
        assert set(expect) <= {"about", "exit", "names", "use_out_option"}, folder.name


@pytest.mark.parametrize("folder", BASES, ids=[p.name for p in BASES])
def test_base_case_runs(folder, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    work = _copy(folder, tmp_path)
    out = tmp_path / "out"
    code, stdout, stderr = _run(work, out, True, capsys)
    assert code == 0, stderr
    assert "Traceback" not in stdout + stderr
    runs = [p for p in out.glob("*/*") if p.is_dir() and not p.name.startswith(".")]
    assert len(runs) == 1, _entries(out)
    assert (runs[0] / "results.json").is_file()


@pytest.mark.parametrize("folder", CASES, ids=[p.name for p in CASES])
def test_refused(folder, tmp_path, monkeypatch, capsys):
    expect = _expect(folder)
    use_out = expect.get("use_out_option", True)
    monkeypatch.chdir(tmp_path)
    work = _copy(folder, tmp_path)
    before = _hashes(work)
    entries_before = set(_entries(work))
    out = tmp_path / "out"

    code, stdout, stderr = _run(work, out, use_out, capsys)

    assert "Traceback" not in stdout and "Traceback" not in stderr, stderr
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, f"expected one line on standard error, got {len(lines)}:\n{stderr}"
    message = lines[0]
    assert message.startswith(PREFIX), message
    assert code == expect["exit"], f"exit {code}: {message}"
    missing = [n for n in expect["names"] if n not in message]
    assert not missing, f"the message does not name {missing}: {message}"
    assert len(message) <= MAX_MESSAGE, f"message of {len(message)} characters: {message[:200]}..."

    # no run folder: nothing written, except perhaps empty hidden scratch folders
    for root in ([out] if use_out else []) + [work]:
        new = [p for p in _entries(root) if p not in entries_before]
        files = [p for p in new if p.is_file()]
        assert not files, f"files written: {files}"
        visible = [p for p in new if any(not part.startswith(".")
                                         for part in p.relative_to(root).parts)]
        assert not visible, f"folders written: {visible}"
    assert not (tmp_path / "reports").exists(), "a run folder went to ./reports"
    # no file of the user's changed
    assert _hashes(work) == before
