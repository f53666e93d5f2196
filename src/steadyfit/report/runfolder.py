"""Writing a run folder atomically: a temporary sibling, renamed into place at the end.

An interrupted run leaves no half-written folder, and an earlier run is never
overwritten: a run id that exists already gets a numeric suffix.
"""

from __future__ import annotations

import json
import os
import shutil
import sys
from datetime import UTC, datetime
from pathlib import Path

from ..findings import Findings
from .markdown import render_markdown, render_table_md
from .record import to_record
from .tables import all_tables

# A copy of the data goes into the run folder when it is at most this large
# (common practice, no source: keep run folders small enough to mail).
_MAX_DATA_COPY = 20 * 1024 * 1024


def new_run_id(now: datetime) -> str:
    return now.strftime("%Y%m%dT%H%M%SZ")


def _unique(root: Path, run_id: str) -> Path:
    target = root / run_id
    n = 2
    while target.exists():
        target = root / f"{run_id}-{n}"
        n += 1
    return target


def write_run(findings: Findings, out_root: str | Path = "reports",
              command: list[str] | None = None) -> Path:
    """Write the run folder ``<out_root>/<spec-stem>/<run-id>/`` and return its path.

    Files: ``summary.md``, ``results.json``, ``tables/*.md`` and ``inputs/``
    (the spec and, when small, the data file).
    """
    now = datetime.now(UTC)
    run_id = new_run_id(now)
    root = Path(out_root) / findings.spec_stem
    root.mkdir(parents=True, exist_ok=True)
    tmp = root / f".partial-{run_id}-{os.getpid()}"
    try:
        tmp.mkdir()
        (tmp / "tables").mkdir()
        (tmp / "inputs").mkdir()
        _write(tmp / "summary.md", render_markdown(findings, run_id))
        for table in all_tables(findings):
            _write(tmp / "tables" / f"{table.key}.md", render_table_md(table) + "\n")
        prov = findings.provenance
        if prov.spec_path and Path(prov.spec_path).exists():
            shutil.copyfile(prov.spec_path, tmp / "inputs" / Path(prov.spec_path).name)
        data = Path(prov.data_path)
        if data.exists() and data.stat().st_size <= _MAX_DATA_COPY:
            shutil.copyfile(data, tmp / "inputs" / data.name)
        run = {"id": run_id, "created": now.isoformat(timespec="seconds"),
               "command": command if command is not None else list(sys.argv)}
        record = to_record(findings, run)
        _write(tmp / "results.json", json.dumps(record, indent=2, allow_nan=False) + "\n")
        target = _unique(root, run_id)
        record["run"]["folder"] = target.name
        _write(tmp / "results.json", json.dumps(record, indent=2, allow_nan=False) + "\n")
        os.rename(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        try:
            root.rmdir()  # only when empty: a stem folder this run created and left unused
        except OSError:
            pass
        raise
    return target


def _write(path: Path, text: str) -> None:
    path.write_text(text, encoding="utf-8")
