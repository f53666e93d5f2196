"""Where batches of independent jobs run: here, in forked processes, or on a Dask cluster.

Jobs are picklable calls that return their results (bootstrap chunks, sweep
cells, leave-one-out batches); :func:`run_jobs` returns them in the jobs' order,
so a result never depends on where or how many ways the jobs ran.  A progress
bar (``rich``, on standard error) appears when the work has taken more than
about a second, only where :attr:`Execution.progress` is on (a terminal, no
``--quiet``).  Nothing here knows what the jobs compute.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any, TypeVar

from ..workers import run_forked

T = TypeVar("T")

# the bar appears once the work has run this long (seconds)
SHOW_AFTER = 1.0
# how long to try reaching a Dask scheduler before saying it cannot be reached (seconds)
CONNECT_SECONDS = 10


@dataclass(frozen=True)
class Execution:
    """How to run jobs: ``workers`` local processes, or the Dask scheduler at ``scheduler``
    (``tcp://host:port``; needs the optional ``distributed`` package); ``progress`` shows a
    bar for long work."""

    workers: int = 1
    scheduler: str | None = None
    progress: bool = False


class _Bar:
    """A progress bar that starts only after :data:`SHOW_AFTER` seconds."""

    def __init__(self, label: str, total: int, show: bool) -> None:
        self.label, self.total, self.show = label, total, show
        self.start = time.perf_counter()
        self.done = 0
        self.bar: Any = None
        self.task: Any = None

    def advance(self, n: int) -> None:
        self.done += n
        if not self.show:
            return
        if self.bar is None and time.perf_counter() - self.start > SHOW_AFTER:
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

            self.bar = Progress(TextColumn("{task.description}"), BarColumn(),
                                MofNCompleteColumn(), console=Console(stderr=True),
                                transient=True)
            self.bar.start()
            self.task = self.bar.add_task(self.label, total=self.total, completed=self.done)
        elif self.bar is not None:
            self.bar.update(self.task, completed=self.done)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.stop()


@contextmanager
def progress_bar(label: str, total: int, show: bool) -> Iterator[_Bar]:
    bar = _Bar(label, total, show)
    try:
        yield bar
    finally:
        bar.close()


def _call(job: Callable[[], T]) -> T:
    return job()


def run_jobs(jobs: Sequence[Callable[[], T]], execution: Execution, label: str = "working"
             ) -> list[T]:
    """Every job's result, in the jobs' order (see the module docstring)."""
    jobs = list(jobs)
    with progress_bar(label, len(jobs), execution.progress) as bar:
        if execution.scheduler:
            return _on_dask(jobs, execution.scheduler, bar)
        out: list[T] = []
        wave = max(1, execution.workers)
        for start in range(0, len(jobs), wave):
            part = jobs[start:start + wave]
            out += run_forked(part, [1.0] * len(part), execution.workers)
            bar.advance(len(part))
        return out


def _on_dask(jobs: list[Callable[[], T]], address: str, bar: _Bar) -> list[T]:
    try:
        from distributed import Client, as_completed
    except ImportError:
        from ..errors import InputError

        raise InputError("running on a Dask scheduler needs the optional package "
                         "'distributed' (pip install \"steadyfit[distributed]\")",
                         "--scheduler") from None
    try:
        client = Client(address, timeout=CONNECT_SECONDS)
    except (OSError, ValueError, TypeError) as exc:
        from ..errors import InputError

        raise InputError(f"cannot reach a Dask scheduler at '{address}' ({exc}); give its "
                         "address as tcp://host:port", "--scheduler") from None
    with client:
        futures = client.map(_call, jobs, pure=False)
        order = {f.key: i for i, f in enumerate(futures)}
        out: list[Any] = [None] * len(jobs)
        for future in as_completed(futures):
            out[order[future.key]] = future.result()
            bar.advance(1)
    return out
