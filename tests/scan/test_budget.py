"""The time budget per file: a file over it is stopped and recorded, the alarm never outlives it.

Slowness is injected (the evaluator sleeps, or spins, on one path): real code that takes a minute
per file is what the budget is for, and no test should wait that long.
"""

from __future__ import annotations

import multiprocessing
import signal
import threading
import time
from pathlib import Path

import pytest

from impactscope.corpus.limits import Limits
from impactscope.reasons import Reason
from impactscope.resolve import evaluate
from impactscope.scan.budget import FileClock, FileOverBudget, OverBudget
from impactscope.scan.run import run_scan

from .helpers import build_corpus, snapshot, write_changes

forked = pytest.mark.skipif(
    multiprocessing.get_start_method() != "fork",
    reason="the slow file is injected by patching this process before the pool forks its workers",
)

SLOW = "pkg0/io.py"  # proj000's module that uses the library (others import nothing from it)


def _spin(seconds: float) -> str:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        pass
    return "done"


def _disarmed() -> bool:
    return signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0) and signal.getsignal(signal.SIGALRM) is signal.SIG_DFL


def test_work_within_budget_returns_and_is_charged() -> None:
    clock = FileClock(5)
    assert clock.run("a.py", _spin, 0.05) == "done"
    assert clock.run("a.py", lambda *, x: x, x=3) == 3
    assert 0.05 <= clock.spent["a.py"] < 1 and clock.over == {}
    assert _disarmed()


def test_work_over_budget_is_stopped_and_recorded() -> None:
    clock = FileClock(0.2)
    started = time.monotonic()
    with pytest.raises(FileOverBudget, match="limit file_seconds"):
        clock.run("slow.py", _spin, 30)
    assert time.monotonic() - started < 5  # stopped, not waited for
    assert "file_seconds" in clock.over["slow.py"] and "\n" not in clock.over["slow.py"]
    assert _disarmed()
    # The budget is the file's, across its stages: a spent file is refused at once.
    with pytest.raises(FileOverBudget):
        clock.run("slow.py", lambda: "never")
    assert clock.run("other.py", lambda: "fine") == "fine"


def test_the_stop_passes_through_the_analysis_own_nets() -> None:
    """The resolver isolates statements with `except Exception`: the stop must not be taken for a
    fault there and the work carried on."""
    carried_on = []

    def guarded() -> None:
        try:
            _spin(30)
        except Exception:  # noqa: BLE001 - what the resolver does
            carried_on.append(True)
            _spin(30)

    with pytest.raises(FileOverBudget):
        FileClock(0.2).run("a.py", guarded)
    assert carried_on == [] and issubclass(OverBudget, BaseException) and not issubclass(OverBudget, Exception)


def test_an_error_in_the_work_propagates_and_disarms() -> None:
    with pytest.raises(KeyError):
        FileClock(5).run("a.py", {}.__getitem__, "missing")
    assert _disarmed()


def test_off_the_main_thread_time_is_counted_but_not_enforced() -> None:
    clock = FileClock(0.1)
    out: list[str] = []
    worker = threading.Thread(target=lambda: out.append(clock.run("a.py", _spin, 0.3)))
    worker.start()
    worker.join()
    assert out == ["done"] and clock.spent["a.py"] >= 0.3 and _disarmed()


def test_a_timer_someone_else_set_is_left_alone() -> None:
    rang: list[int] = []
    previous = signal.signal(signal.SIGALRM, lambda *_: rang.append(1))
    try:
        signal.setitimer(signal.ITIMER_REAL, 0.3)
        assert FileClock(0.05).run("a.py", _spin, 0.1) == "done"  # not ours to arm
        _spin(0.4)
        assert rang == [1]  # their alarm rang, as set
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def _slow_on(monkeypatch: pytest.MonkeyPatch, path: str) -> None:
    real_run = evaluate.ModuleEvaluator.run

    def run(self, cells):  # type: ignore[no-untyped-def]
        if self.path == path:
            time.sleep(60)
        return real_run(self, cells)

    monkeypatch.setattr(evaluate.ModuleEvaluator, "run", run)


@pytest.mark.parametrize("jobs", [1, pytest.param(2, marks=forked)])
def test_a_scan_records_a_slow_file_and_goes_on(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, jobs: int) -> None:
    changes, root = write_changes(tmp_path), build_corpus(tmp_path / "corpus", projects=3)
    run_scan(changes, [root], tmp_path / "clean.sqlite", jobs=jobs)
    _slow_on(monkeypatch, SLOW)
    out = tmp_path / "r.sqlite"
    started = time.monotonic()
    run_scan(changes, [root], out, jobs=jobs, limits=Limits(file_seconds=1))
    assert time.monotonic() - started < 30  # the 60 s sleep was cut short
    assert _disarmed()
    files = {(p, f.path): f for p, f in snapshot(out)["files"]}  # type: ignore[union-attr]
    slow = files[("proj000", SLOW)]
    assert (slow.status, slow.reason) == ("skipped", Reason.OVER_TIME_BUDGET) and "file_seconds = 1" in slow.detail
    clean = snapshot(tmp_path / "clean.sqlite")
    # Every file is still accounted for, and every other file's findings are those of a clean scan.
    assert len(files) == len(clean["files"])  # type: ignore[arg-type]
    assert [f for f in snapshot(out)["findings"] if (f.project, f.file) != ("proj000", SLOW)] == [  # type: ignore[union-attr]
        f for f in clean["findings"] if (f.project, f.file) != ("proj000", SLOW)  # type: ignore[union-attr]
    ]
    # The stopped module is read at token level: each line the clean scan found a use on is
    # still found, at possible, so "at most" stays a bound.
    assert slow.detail.endswith("; read at token level")
    kept = {(f.line, f.change) for f in snapshot(out)["findings"] if (f.project, f.file) == ("proj000", SLOW)}  # type: ignore[union-attr]
    assert {f.confidence.label for f in snapshot(out)["findings"] if (f.project, f.file) == ("proj000", SLOW)} <= {"possible"}  # type: ignore[union-attr]
    assert {(f.line, f.change) for f in clean["findings"] if (f.project, f.file) == ("proj000", SLOW)} <= kept  # type: ignore[union-attr]
