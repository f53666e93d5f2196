"""Writing a run folder atomically: built in one hidden place, renamed into place at the end.

Every run folder is first written under ``<output root>/.steadyfit-partial/``
and renamed to ``<output root>/<spec-stem>/<run-id>/`` only when complete, so
an interrupted run leaves nothing that looks like a run.  The writing process
holds an exclusive lock on a file inside its temporary folder; SIGTERM and
SIGINT remove the folder before the process ends, and a folder whose lock is
free (its process was killed, even with SIGKILL) is removed by the next run.
An earlier run is never overwritten: a run id that exists already gets a
numeric suffix.
"""

from __future__ import annotations

import json
import os
import shutil
import sys
import time
from collections.abc import Callable, Mapping, Sequence
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ..errors import InputError, Terminated
from ..findings import Findings
from .figures import all_figures
from .html import render_html
from .latex import render_table_latex
from .markdown import render_markdown, render_table_md
from .package import descriptive_tables, package_files
from .record import to_record
from .tables import all_tables

# A copy of the data goes into the run folder when it is at most this large
# (common practice, no source: keep run folders small enough to mail).
MAX_DATA_COPY = 20 * 1024 * 1024


def new_run_id(now: datetime) -> str:
    return now.strftime("%Y%m%dT%H%M%SZ")


def _inside(path: Path, root: Path) -> bool:
    return path.resolve().is_relative_to(root.resolve())


def _catch_sigterm() -> Any:
    """Turn SIGTERM into an exception while writing (main thread only), so the temporary
    folder is removed; returns the handler to restore."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        return None
    return signal.signal(signal.SIGTERM, _raise_terminated)


def _restore_sigterm(previous: Any) -> None:
    import signal

    if previous is not None:
        signal.signal(signal.SIGTERM, previous)


def _unique(root: Path, run_id: str) -> Path:
    target = root / run_id
    n = 2
    while target.exists():
        target = root / f"{run_id}-{n}"
        n += 1
    return target


PARTIAL = ".steadyfit-partial"
_LOCK = ".lock"


def _raise_terminated(signum: int, frame: Any) -> None:
    raise Terminated(signum)


def remove_stale(root: Path) -> None:
    """Remove temporary folders under ``root/.steadyfit-partial`` whose writer is gone."""
    import fcntl

    place = root / PARTIAL
    if not place.is_dir():
        return
    for folder in place.iterdir():
        lock = folder / _LOCK
        if not lock.exists():
            try:  # a writer makes its lock right after its folder: give it a moment
                if time.time() - folder.stat().st_mtime < 30:
                    continue
            except OSError:
                continue
        try:
            with lock.open("a") as fh:
                fcntl.flock(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            continue  # a live run is writing it
        except OSError:
            pass  # no lock file: killed before it was made
        shutil.rmtree(folder, ignore_errors=True)


def write_run(findings: Findings, out_root: str | Path = "reports",
              command: list[str] | None = None) -> Path:
    """Write the run folder ``<out_root>/<spec-stem>/<run-id>/`` and return its path.

    Files: ``report.html``, ``summary.md``, ``results.json``, ``tables/*.tex``
    and ``tables/*.md`` (the descriptive statistics among them), ``figures/*.svg`` and
    ``figures/*.pdf`` (as ``report.figure_formats`` asks),
    ``inputs/`` (the spec and, when small, the data file), and the replication
    package: ``data/analysis.csv``, ``data/codebook.csv``, ``data/codebook.md``,
    ``README.md``, ``references.txt`` and ``references.bib``.
    """
    now = datetime.now(UTC)
    run_id = new_run_id(now)
    run: dict[str, Any] = {"id": run_id, "created": now.isoformat(timespec="seconds"),
                           "command": command if command is not None else list(sys.argv)}
    # everything is rendered before anything is written
    s = findings.settings
    tables = all_tables(findings)
    # the HTML report inlines SVG whatever files are asked for
    figures = all_figures(findings, ("svg", *(f for f in s.figure_formats if f != "svg")))
    files: dict[str, str | bytes] = {
        "summary.md": render_markdown(findings, run_id),
        "report.html": render_html(findings, figures, run),
    }
    for table in (*tables, *descriptive_tables(findings)):
        files[f"tables/{table.key}.md"] = render_table_md(table, s.digits) + "\n"
        files[f"tables/{table.key}.tex"] = render_table_latex(
            table, s.digits, s.significance_marks, s.latex_max_columns, s.latex_landscape)
    for fig in figures:
        if "svg" in s.figure_formats:
            files[f"figures/{fig.key}.svg"] = fig.svg + "\n"
        if fig.pdf is not None:
            files[f"figures/{fig.key}.pdf"] = fig.pdf
    prov = findings.provenance
    copies = [Path(prov.spec_path)] if prov.spec_path and Path(prov.spec_path).exists() else []
    data = Path(prov.data_path)
    if data.exists() and data.stat().st_size <= MAX_DATA_COPY:
        copies.append(data)
    if findings.analysis is not None:
        files |= package_files(findings, run, [*files, "results.json",
                                               *(f"inputs/{p.name}" for p in copies)])
    return write_folder(out_root, findings.spec_stem, run, files, copies,
                        lambda r: to_record(findings, r), ("tables", "figures", "inputs"))


def write_folder(out_root: str | Path, stem: str, run: dict[str, Any],
                 files: Mapping[str, str | bytes], copies: Sequence[Path],
                 record: Callable[[dict[str, Any]], dict[str, Any]],
                 folders: Sequence[str] = ("inputs",)) -> Path:
    """Write a run folder ``<out_root>/<stem>/<run id>/`` atomically and return its path.

    ``files`` maps paths inside the folder to their content, ``copies`` are input files
    copied into ``inputs/``, and ``record(run)`` gives ``results.json`` once ``run`` knows
    the folder's name; ``folders`` are made even when empty.  Everything is written into a
    locked temporary folder first and renamed into place at the end; on any failure (or
    SIGTERM) nothing is left behind."""
    out = Path(out_root)
    root = out / stem
    created_root = not root.exists()
    run_id = run["id"]
    try:
        out.mkdir(parents=True, exist_ok=True)
        remove_stale(out)
        (out / PARTIAL).mkdir(exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder '{out}': {exc.strerror or exc}",
                         "output folder") from None
    previous = _catch_sigterm()
    tmp = out / PARTIAL / f"{stem}-{run_id}-{os.getpid()}"
    try:
        import fcntl

        tmp.mkdir()
        with (tmp / _LOCK).open("w") as lock:
            fcntl.flock(lock, fcntl.LOCK_EX | fcntl.LOCK_NB)
            for sub in folders:
                (tmp / sub).mkdir(parents=True)
            for name, content in files.items():
                (tmp / name).parent.mkdir(parents=True, exist_ok=True)
                if isinstance(content, bytes):
                    (tmp / name).write_bytes(content)
                else:
                    (tmp / name).write_text(content, encoding="utf-8")
            for source in copies:
                shutil.copyfile(source, tmp / "inputs" / source.name)
            root.mkdir(parents=True, exist_ok=True)
            target = _unique(root, run_id)
            if target.resolve().parent != root.resolve() or not _inside(target, out):
                raise InputError(f"the run folder '{target}' would lie outside '{out}'",
                                 "output folder")
            run["folder"] = target.name
            (tmp / "results.json").write_text(json.dumps(record(run), indent=2, allow_nan=False)
                                              + "\n", encoding="utf-8")
            os.rename(tmp, target)  # still locked: no other run takes it for stale
        (target / _LOCK).unlink()
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if created_root:
            try:
                root.rmdir()  # only when empty
            except OSError:
                pass
        raise
    finally:
        _restore_sigterm(previous)
        try:
            (out / PARTIAL).rmdir()  # only when empty: other runs may be writing
        except OSError:
            pass
    return target
