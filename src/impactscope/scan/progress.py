"""How a running scan shows its progress on stderr: a live line on a terminal, plain lines in logs.

`run_scan` calls `start` once (with the number of projects when it could be counted cheaply),
`update` after every project, and `finish` at the end (also when interrupted).
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass
from typing import Protocol, TextIO


@dataclass(frozen=True)
class Tally:
    """Where a scan stands."""

    projects: int
    total: int | None  # projects in the corpus, when known
    files: int
    reused: int  # projects taken over unchanged from the previous scan
    findings: int
    seconds: float

    @property
    def files_per_second(self) -> float:
        return self.files / self.seconds if self.seconds > 0 else 0.0

    @property
    def eta_seconds(self) -> float | None:
        if self.total is None or self.projects == 0 or self.seconds <= 0:
            return None
        return max(self.total - self.projects, 0) * self.seconds / self.projects


class ScanProgress(Protocol):
    def start(self, total: int | None) -> None: ...

    def update(self, tally: Tally) -> None: ...

    def finish(self, tally: Tally) -> None: ...


def _clock(seconds: float | None) -> str:
    if seconds is None:
        return "unknown"
    s = int(round(seconds))
    return f"{s // 3600}:{s // 60 % 60:02d}:{s % 60:02d}" if s >= 3600 else f"{s // 60}:{s % 60:02d}"


def compact(tally: Tally) -> str:
    """The same facts in a terminal-width line."""
    projects = f"{tally.projects}/{tally.total}" if tally.total is not None else str(tally.projects)
    text = f"{projects} projects, {tally.files} files, {tally.files_per_second:.0f} files/s"
    if tally.total is not None:
        text = f"{_clock(tally.eta_seconds)} left, " + text
    return text


def describe(tally: Tally) -> str:
    """One line of plain text about `tally`, in our own wording."""
    projects = f"{tally.projects}/{tally.total}" if tally.total is not None else str(tally.projects)
    text = (
        f"{projects} projects ({tally.reused} unchanged), {tally.files} files, "
        f"{tally.files_per_second:.0f} files/s, {tally.findings} findings"
    )
    if tally.total is not None:
        text += f", about {_clock(tally.eta_seconds)} left"
    return text


class Silent:
    """`--quiet`: show nothing."""

    def start(self, total: int | None) -> None:
        pass

    def update(self, tally: Tally) -> None:
        pass

    def finish(self, tally: Tally) -> None:
        pass


class LogLines:
    """Not a terminal (CI logs, redirected stderr): one plain line every `every` seconds."""

    def __init__(self, stream: TextIO, every: float = 10.0) -> None:
        self._stream = stream
        self._every = every
        self._next = 0.0
        self._total: int | None = None
        self._started = False

    def start(self, total: int | None) -> None:
        self._total = total
        self._next = time.monotonic() + self._every

    def update(self, tally: Tally) -> None:
        if not self._started:  # said once work is under way, so an early error stays one line
            self._started = True
            size = (f"{self._total} project{'' if self._total == 1 else 's'}" if self._total is not None
                    else "projects (count unknown: tar root)")
            print(f"impactscope: scanning {size}", file=self._stream, flush=True)
        now = time.monotonic()
        if now >= self._next:
            self._next = now + self._every
            print(f"impactscope: {describe(tally)}", file=self._stream, flush=True)

    def finish(self, tally: Tally) -> None:
        pass


class LiveLine:
    """An interactive terminal: a live bar (rich) with files, files/s, projects and time left."""

    def __init__(self, stream: TextIO) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, Progress, TextColumn

        self._progress = Progress(
            BarColumn(bar_width=12),
            TextColumn("{task.fields[line]}"),
            console=Console(file=stream),
            transient=True,
            refresh_per_second=4,
        )
        self._task = self._progress.add_task("scan", total=None, line="starting")

    def start(self, total: int | None) -> None:
        self._progress.update(self._task, total=total)
        self._progress.start()

    def update(self, tally: Tally) -> None:
        self._progress.update(self._task, completed=tally.projects, line=compact(tally))

    def finish(self, tally: Tally) -> None:
        self._progress.stop()


def for_stream(stream: TextIO | None = None, *, quiet: bool = False, every: float = 10.0) -> ScanProgress:
    """The display that suits `stream` (stderr by default): nothing, a live bar, or log lines."""
    if quiet:
        return Silent()
    target = stream if stream is not None else sys.stderr
    isatty = getattr(target, "isatty", None)
    if callable(isatty) and isatty():
        return LiveLine(target)
    return LogLines(target, every)


__all__ = ["LiveLine", "LogLines", "ScanProgress", "Silent", "Tally", "compact", "describe", "for_stream"]
