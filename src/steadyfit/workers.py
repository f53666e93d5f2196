"""Independent jobs drawn on one core or more: forked processes where that is safe.

``run_forked(fns, costs, workers)`` calls every function of ``fns`` and returns
their results in order, spreading them over forked processes in groups of
similar total ``costs``; the results are the same objects (pickled back) as the
serial path gives, which remains for one worker, too few jobs, or where fork is
unavailable.  A group whose process fails is run here afterwards, so the result
never depends on the children.  Nothing here knows what the jobs compute.
"""

from __future__ import annotations

import contextlib
import functools
import os
import pickle
import sys
import threading
import warnings
from collections.abc import Callable, Iterator, Sequence
from typing import Any


def cores() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


@functools.lru_cache(maxsize=1)
def _trim() -> Callable[[int], int] | None:
    """glibc's ``malloc_trim``, where the C library is glibc."""
    if not sys.platform.startswith("linux"):
        return None
    try:
        import ctypes

        return ctypes.CDLL("libc.so.6").malloc_trim  # type: ignore[no-any-return]
    except (OSError, AttributeError):
        return None


def give_back_memory() -> None:
    """Return memory freed by finished stages to the system: the free pages inside the C heap
    (glibc keeps those of arrays freed out of order) and the Arrow pool's unused blocks, as
    Dask's workers trim their heap between tasks.  On large data this keeps a run's peak
    near what it holds; elsewhere it does nothing."""
    if "pyarrow" in sys.modules:
        with contextlib.suppress(Exception):
            sys.modules["pyarrow"].default_memory_pool().release_unused()
    trim = _trim()
    if trim is not None:
        trim(0)


def can_fork() -> bool:
    """Forking is safe here: a POSIX fork (not macOS, where system libraries may not survive
    one) from a process with no other Python threads."""
    return (hasattr(os, "fork") and sys.platform.startswith(("linux", "freebsd"))
            and threading.active_count() == 1)


def _balance(costs: Sequence[float], n: int) -> list[list[int]]:
    """Split job indices into n groups of similar total cost (largest first, to the lightest)."""
    groups: list[list[int]] = [[] for _ in range(n)]
    load = [0.0] * n
    for i in sorted(range(len(costs)), key=lambda i: -costs[i]):
        g = load.index(min(load))
        groups[g].append(i)
        load[g] += costs[i]
    return groups


def _child(fns: list[Callable[[], Any]], group: list[int], fd: int) -> None:
    """In a forked process: run the group's jobs, send their results (and any warnings) down the
    pipe, and leave without running the parent's exit handlers."""
    import signal

    status = 1
    try:
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        with warnings.catch_warnings(record=True) as caught:
            drawn = [(i, fns[i]()) for i in group]
        said = [(str(w.message), w.category, w.filename, w.lineno) for w in caught]
        with os.fdopen(fd, "wb") as pipe:
            pipe.write(pickle.dumps((drawn, said), protocol=pickle.HIGHEST_PROTOCOL))
        status = 0
    finally:
        os._exit(status)


def _run_groups(fns: list[Callable[[], Any]], groups: list[list[int]]
                   ) -> list[Any]:
    """Draw groups[1:] in forked processes and groups[0] here; a group whose process fails is
    drawn here afterwards, so the result never depends on the children."""
    out: list[Any] = [None] * len(fns)
    children: list[tuple[int, int, list[int]]] = []
    try:
        for group in groups[1:]:
            r, w = os.pipe()
            pid = os.fork()
            if pid == 0:
                os.close(r)
                _child(fns, group, w)
            os.close(w)
            children.append((pid, r, group))
        for i in groups[0]:
            out[i] = fns[i]()
        while children:
            pid, r, group = children[0]
            with os.fdopen(r, "rb", closefd=False) as pipe:
                payload = pipe.read()
            _, status = os.waitpid(pid, 0)
            os.close(r)
            children.pop(0)
            try:
                drawn, said = pickle.loads(payload) if status == 0 else (None, ())
            except Exception:
                drawn, said = None, ()
            if drawn is None:
                for i in group:
                    out[i] = fns[i]()
                continue
            for message, category, filename, lineno in said:
                warnings.warn_explicit(message, category, filename, lineno)
            for i, fig in drawn:
                out[i] = fig
    except BaseException:
        import signal

        for pid, r, _ in children:
            for step, arg in ((lambda a: os.kill(a, signal.SIGKILL), pid),
                              (lambda a: os.waitpid(a, 0), pid), (os.close, r)):
                try:
                    step(arg)
                except OSError:
                    pass
        raise
    return out


def run_forked(fns: Sequence[Callable[[], Any]], costs: Sequence[float], workers: int,
               preload: Callable[[], None] | None = None) -> list[Any]:
    """Every ``fns[i]()`` in order, over at most ``workers`` forked processes (this one
    included) when ``workers >= 2`` and fork is safe; serially otherwise.  ``preload`` runs
    once before forking (imports the children should share).  The garbage collector is kept
    off the caller's heap meanwhile (see ``collector_spares_the_heap``)."""
    fns = list(fns)
    n = min(workers, len(fns))
    with collector_spares_the_heap():
        if n >= 2 and can_fork():
            if preload is not None:
                preload()
            return _run_groups(fns, _balance(costs, n))
        return [fn() for fn in fns]


@contextlib.contextmanager
def collector_spares_the_heap() -> Iterator[None]:
    """While the jobs run, the garbage collector looks at the jobs' new objects only, not at the
    rest of the heap (the caller's data, pandas, statsmodels): no full pass over it mid-way,
    and a forked process shares those pages instead of copying them.  Left alone when the
    caller froze objects itself."""
    import gc

    if gc.get_freeze_count():
        yield
        return
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()
