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
from typing import Any

from ..errors import InputError
from ..findings import Findings
from .figures import all_figures
from .html import render_html
from .latex import render_table_latex
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

    Files: ``report.html``, ``summary.md``, ``results.json``, ``tables/*.tex``
    and ``tables/*.md``, ``figures/*.svg``, and ``inputs/`` (the spec and,
    when small, the data file).
    """
    now = datetime.now(UTC)
    run_id = new_run_id(now)
    root = Path(out_root) / findings.spec_stem
    created_root = not root.exists()
    run: dict[str, Any] = {"id": run_id, "created": now.isoformat(timespec="seconds"),
                           "command": command if command is not None else list(sys.argv)}
    # everything is rendered before anything is written
    s = findings.settings
    tables = all_tables(findings)
    figures = all_figures(findings)
    files: dict[str, str] = {
        "summary.md": render_markdown(findings, run_id),
        "report.html": render_html(findings, figures, run),
    }
    for table in tables:
        files[f"tables/{table.key}.md"] = render_table_md(table, s.digits) + "\n"
        files[f"tables/{table.key}.tex"] = render_table_latex(table, s.digits, s.stars)
    for fig in figures:
        files[f"figures/{fig.key}.svg"] = fig.svg + "\n"
    try:
        root.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder '{root}': {exc.strerror or exc}",
                         "output folder") from None
    tmp = root / f".partial-{run_id}-{os.getpid()}"
    try:
        for sub in ("tables", "figures", "inputs"):
            (tmp / sub).mkdir(parents=True)
        for name, text in files.items():
            (tmp / name).write_text(text, encoding="utf-8")
        prov = findings.provenance
        if prov.spec_path and Path(prov.spec_path).exists():
            shutil.copyfile(prov.spec_path, tmp / "inputs" / Path(prov.spec_path).name)
        data = Path(prov.data_path)
        if data.exists() and data.stat().st_size <= _MAX_DATA_COPY:
            shutil.copyfile(data, tmp / "inputs" / data.name)
        target = _unique(root, run_id)
        run["folder"] = target.name
        record = to_record(findings, run)
        (tmp / "results.json").write_text(json.dumps(record, indent=2, allow_nan=False) + "\n",
                                          encoding="utf-8")
        os.rename(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if created_root:
            shutil.rmtree(root, ignore_errors=True)
        raise
    return target
