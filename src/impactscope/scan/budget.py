"""A time budget per file: a file whose analysis runs past it is stopped and recorded, not waited for.

The process that analyses a file arms a one-shot interval timer (SIGALRM) for the time the file
has left; when it rings, the handler raises `OverBudget` wherever the analysis is. That is a
BaseException on purpose: the resolver's own nets (`except Exception`, which isolate a statement
or a module) must not take it for a fault of theirs and carry on. `FileClock.run` turns it back
into `FileOverBudget`, an ordinary exception, where a file's failure is recorded, and remembers
the file's detail in `FileClock.over`.

What a timer cannot do: native code (libcst's parser) is not interrupted, the handler runs when it
returns, so a file may overrun by one parse, which the byte limits keep short. Only the main
thread of a process can take signals: elsewhere (a Dask worker's task thread, a scan run in a
thread) and when something else already holds SIGALRM or the real-time timer, the time is counted
but not enforced.
"""

from __future__ import annotations

import contextlib
import signal
import threading
import time
from collections.abc import Callable, Iterator
from typing import TypeVar

__all__ = ["FileClock", "FileOverBudget", "OverBudget"]

T = TypeVar("T")


class OverBudget(BaseException):
    """Raised by the timer inside a file's analysis (see the module docstring for why a BaseException)."""


class FileOverBudget(Exception):
    """A file's analysis was stopped by its time budget; `FileClock.over` holds its detail, and
    the file is skipped as Reason.OVER_TIME_BUDGET (the limits table's file_seconds reason)."""


class FileClock:
    """Seconds spent per file of one project, each file held to `seconds` in all its stages."""

    def __init__(self, seconds: float) -> None:
        self.seconds = seconds
        self.spent: dict[str, float] = {}
        self.over: dict[str, str] = {}  # path -> one-line detail, for the files that were stopped

    def run(self, path: str, work: Callable[..., T], *args: object, **kwargs: object) -> T:
        """`work(*args, **kwargs)`, charged to `path`; FileOverBudget once `path` has used its budget."""
        left = self.seconds - self.spent.get(path, 0.0)
        started = time.monotonic()
        try:
            if left <= 0:
                raise OverBudget
            with _alarm(left):
                return work(*args, **kwargs)
        except OverBudget:
            self.over[path] = (
                f"analysis stopped after {self.seconds:g} s (limit file_seconds = {self.seconds:g}); "
                "raise it with --limit file_seconds=N"
            )
            raise FileOverBudget(self.over[path]) from None
        finally:
            self.spent[path] = self.spent.get(path, 0.0) + time.monotonic() - started


def _ring(signum: int, frame: object) -> None:
    raise OverBudget


@contextlib.contextmanager
def _alarm(seconds: float) -> Iterator[None]:
    """Raise OverBudget in this thread after `seconds`, if this thread can take signals and no one
    else uses SIGALRM; the timer is disarmed and the old handler back on every way out."""
    if (
        threading.current_thread() is not threading.main_thread()
        or signal.getsignal(signal.SIGALRM) not in (signal.SIG_DFL, signal.SIG_IGN, None)
        or signal.getitimer(signal.ITIMER_REAL)[0] > 0
    ):
        yield
        return
    previous = signal.signal(signal.SIGALRM, _ring)
    try:
        signal.setitimer(signal.ITIMER_REAL, seconds)
        yield
    finally:
        # Disarm first: a ring between the two calls still meets our handler, and its OverBudget
        # is caught by FileClock.run like any other.
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
