"""Running jobs: results in the jobs' order on any executor, and the progress bar shown only
when asked for and only for work that lasts."""

from __future__ import annotations

import io
import time

import pytest

from steadyfit.robust import execute
from steadyfit.robust.execute import Execution, run_jobs


class _Sleep:
    def __init__(self, i: int, seconds: float) -> None:
        self.i, self.seconds = i, seconds

    def __call__(self) -> int:
        time.sleep(self.seconds)
        return self.i * self.i


@pytest.mark.parametrize("workers", [1, 2, 3])
def test_results_come_back_in_the_jobs_order(workers):
    jobs = [_Sleep(i, 0.0) for i in range(7)]
    assert run_jobs(jobs, Execution(workers=workers)) == [i * i for i in range(7)]


def _stderr_of(monkeypatch, capsys, show: bool, seconds: float) -> str:
    monkeypatch.setattr(execute, "SHOW_AFTER", 0.05)
    import rich.console

    real = rich.console.Console

    def to_buffer(*args, **kwargs):  # a terminal-like console writing where we can read it
        kwargs.update(file=buffer, force_terminal=True, width=80)
        kwargs.pop("stderr", None)
        return real(*args, **kwargs)

    buffer = io.StringIO()
    monkeypatch.setattr(rich.console, "Console", to_buffer)
    run_jobs([_Sleep(i, seconds) for i in range(4)], Execution(progress=show), "testing")
    return buffer.getvalue()


def test_the_bar_shows_for_long_work_when_asked(monkeypatch, capsys):
    assert "testing" in _stderr_of(monkeypatch, capsys, True, 0.04)


def test_no_bar_when_not_asked_or_quick(monkeypatch, capsys):
    assert _stderr_of(monkeypatch, capsys, False, 0.04) == ""
    assert _stderr_of(monkeypatch, capsys, True, 0.0) == ""


def test_a_missing_dask_package_is_said_plainly(monkeypatch):
    import builtins

    real_import = builtins.__import__

    def no_distributed(name, *args, **kwargs):
        if name == "distributed":
            raise ImportError(name)
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_distributed)
    from steadyfit.errors import InputError

    with pytest.raises(InputError, match="distributed"):
        run_jobs([_Sleep(1, 0.0)], Execution(scheduler="tcp://127.0.0.1:1"))


def test_an_unreachable_scheduler_is_said_plainly(monkeypatch):
    pytest.importorskip("distributed")
    from steadyfit.errors import InputError

    monkeypatch.setattr(execute, "CONNECT_SECONDS", 1)
    with pytest.raises(InputError) as err:
        run_jobs([_Sleep(1, 0.0)], Execution(scheduler="tcp://127.0.0.1:9"))
    assert "--scheduler" in str(err.value) and "cannot reach" in str(err.value)
