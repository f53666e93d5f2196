"""Runs stopped at any moment: SIGKILL, SIGTERM and SIGINT against `steadyfit run`.

A run builds its folder in one hidden place, ``ROOT/.steadyfit-partial/<something>/``,
and renames it into ``ROOT/<spec-stem>/<run-id>/`` at the end.  Whenever the process
dies, nothing under ``ROOT/<spec-stem>/`` may look like a run unless it is a complete
one; a signalled run removes its temporary folder; the next run removes the stale
temporary folders of killed runs.
"""

from __future__ import annotations

import json
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

PARTIAL = ".steadyfit-partial"
COMPLETE_FILES = ("results.json", "report.html", "summary.md")
POLL = 0.005  # seconds between looks at the file system
RUN_TIMEOUT = 180  # seconds; a demo run takes a few


def _start(spec: Path, root: Path, log: Path) -> subprocess.Popen:
    # stdout to /dev/null and stderr to a file: a full pipe must never stall the run and
    # shift the moment it is killed at
    return subprocess.Popen(
        [sys.executable, "-m", "steadyfit", "run", str(spec), "--out", str(root)],
        stdout=subprocess.DEVNULL, stderr=log.open("wb"))


def _finish(proc: subprocess.Popen) -> int:
    return proc.wait(timeout=RUN_TIMEOUT)


def _temp_folders(root: Path) -> list[Path]:
    try:
        return sorted((root / PARTIAL).iterdir())
    except OSError:  # absent, or removed while looking
        return []


def _wait_for_temp(proc: subprocess.Popen, root: Path) -> bool:
    """Poll until something exists in ROOT/.steadyfit-partial/; False when the run ended first."""
    deadline = time.monotonic() + RUN_TIMEOUT
    while time.monotonic() < deadline:
        if _temp_folders(root):
            return True
        if proc.poll() is not None:
            return bool(_temp_folders(root))
        time.sleep(POLL)
    raise AssertionError("the run neither finished nor created a temporary folder in time")


def _complete(folder: Path) -> bool:
    return folder.is_dir() and all((folder / f).is_file() for f in COMPLETE_FILES)


def _assert_only_complete_runs(root: Path, stem: str = "demo") -> list[Path]:
    """Every entry under ROOT/<stem>/ (hidden ones included) is a complete run folder."""
    runs_root = root / stem
    if not runs_root.exists():
        return []
    entries = sorted(runs_root.iterdir())
    for entry in entries:
        inside = sorted(p.name for p in entry.iterdir()) if entry.is_dir() else "a file"
        assert _complete(entry), f"incomplete run folder left behind: {entry} holds {inside}"
        json.loads((entry / "results.json").read_text(encoding="utf-8"))  # written in full
    return entries


def _log(log: Path) -> str:
    return log.read_text(encoding="utf-8", errors="replace")[-2000:]


def _run_to_completion(spec: Path, root: Path) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "steadyfit", "run", str(spec), "--out", str(root), "--quiet"],
        capture_output=True, text=True, timeout=RUN_TIMEOUT)


def _start_and_catch_temp(spec: Path, root: Path, log: Path, attempts: int = 2):
    """Start a run and return it as soon as its temporary folder exists.

    The folder may exist for only a few milliseconds; a run that ends before the poll sees
    it is retried once before the test gives up.
    """
    for _ in range(attempts):
        proc = _start(spec, root, log)
        if _wait_for_temp(proc, root) and proc.poll() is None:
            return proc
        rc = _finish(proc)
        _assert_only_complete_runs(root)
    raise AssertionError(
        f"no temporary folder ever appeared in {root / PARTIAL} while the run was going "
        f"(last exit status {rc}); stderr: {_log(log)}")


def _wait_for_anything(proc: subprocess.Popen, root: Path) -> None:
    """Poll until the run has written anything at all under ROOT (or has ended)."""
    deadline = time.monotonic() + RUN_TIMEOUT
    while time.monotonic() < deadline and proc.poll() is None:
        try:
            if any(root.iterdir()):
                return
        except OSError:
            pass
        time.sleep(POLL)


@pytest.mark.parametrize(
    "moment", [0.2, 1.0, 3.0, "first-write", "temp+20ms"],
    ids=["start-0.2s", "estimating-1s", "later-3s", "first-write-under-root",
         "temp-folder+20ms"])
def test_sigkill_leaves_only_complete_run_folders(demo_dir, tmp_path, moment):
    spec, root, log = demo_dir / "demo.toml", tmp_path / "runs", tmp_path / "stderr.txt"
    if moment == "temp+20ms":
        proc = _start_and_catch_temp(spec, root, log)
        time.sleep(0.02)
    elif moment == "first-write":
        proc = _start(spec, root, log)
        _wait_for_anything(proc, root)
    else:
        proc = _start(spec, root, log)
        time.sleep(moment)
    proc.kill()
    _finish(proc)
    _assert_only_complete_runs(root)


def test_sigkill_when_temp_folder_appears_then_next_run_removes_it(demo_dir, tmp_path):
    spec, root, log = demo_dir / "demo.toml", tmp_path / "runs", tmp_path / "stderr.txt"
    for _ in range(3):
        proc = _start_and_catch_temp(spec, root, log)
        proc.kill()
        assert _finish(proc) == -signal.SIGKILL
        _assert_only_complete_runs(root)
        if _temp_folders(root):
            break
        # the rename won the race against the kill: no stale folder to test with; again
    assert _temp_folders(root), "could not kill a run while its temporary folder existed"
    # the killed process is gone (reaped above): its temporary folder is stale
    done = _run_to_completion(spec, root)
    assert done.returncode == 0, done.stderr
    assert _temp_folders(root) == [], f"stale temporary folders remain: {_temp_folders(root)}"
    runs = _assert_only_complete_runs(root)
    assert Path(done.stdout.strip()) in runs


def test_sigterm_removes_temp_folder_and_exits_143(demo_dir, tmp_path):
    spec, root, log = demo_dir / "demo.toml", tmp_path / "runs", tmp_path / "stderr.txt"
    for _ in range(3):
        proc = _start_and_catch_temp(spec, root, log)
        proc.send_signal(signal.SIGTERM)
        rc = _finish(proc)
        if rc != 0:
            break
        # rc 0: the run finished between the poll and the signal; try again
    # 143 is the exit status asked for.  -15 (death by SIGTERM) is accepted too: a process
    # that cleans up and then re-raises SIGTERM with the default action (the usual Unix way
    # of passing the signal on, which a shell reports as 143) shows up like that in Popen.
    # A process that did not clean up fails the check on the temporary folder below.
    assert rc in (143, -signal.SIGTERM), f"exit status {rc}; stderr: {_log(log)}"
    assert _temp_folders(root) == [], f"temporary folder left behind: {_temp_folders(root)}"
    _assert_only_complete_runs(root)


def test_sigint_mid_run_exits_130_and_leaves_nothing(demo_dir, tmp_path):
    spec, root, log = demo_dir / "demo.toml", tmp_path / "runs", tmp_path / "stderr.txt"
    proc = _start(spec, root, log)
    time.sleep(1.0)
    proc.send_signal(signal.SIGINT)
    rc = _finish(proc)
    # as for SIGTERM: -2 means cleaned up, then re-raised with the default action
    assert rc in (130, -signal.SIGINT), f"exit status {rc}; stderr: {_log(log)}"
    assert _temp_folders(root) == []
    assert _assert_only_complete_runs(root) == []
