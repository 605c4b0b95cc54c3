"""Executors: run `scan_project` over batches of projects here or in a pool of worker processes.

Work is cut by project, so cross-module resolution stays inside one worker; small projects travel
in batches to keep the cost per task low. Each result comes back with the project's cache key,
computed from the very listing the scan used. Results are yielded as projects finish; the caller
writes them, so the store has one writer. The output does not depend on the number of workers.

Faults cost as little as they can. An exception escaping `scan_project` (it isolates files itself,
so this is a bug outside any one file) marks that project's files "analysis error". A worker that
dies (recursion in C code, memory exhaustion, a signal) is replaced; the projects of its batch
that finished are kept, the ones it had not started are sent again, and the one it held is retried
alone once, then recorded with reason "worker died". The pool is our own small one, not
`concurrent.futures`, because that one breaks as a whole when a worker dies and cannot say which
task the dead worker held.
"""

from __future__ import annotations

import multiprocessing
import multiprocessing.connection
import os
import pickle
import signal
import threading
from collections import deque
from dataclasses import dataclass
from typing import Any, Generator, Iterable, Iterator, Sequence

from impactscope.corpus.roots import Entry, Project
from impactscope.reasons import Reason
from impactscope.resolve.faults import describe
from impactscope.scan.cache import origin_stamp, project_key
from impactscope.scan.job import ScanJob
from impactscope.scan.project import ProjectResult, failed_project, scan_project

Batch = tuple[Project, ...]

# Per cluster worker process: the job it was sent, whose query is compiled once and kept for its
# later tasks. The one sanctioned per-process cache (pool workers hold theirs in a local variable).
_WORKER: dict[str, ScanJob] = {}


@dataclass(frozen=True)
class Scanned:
    """One project's results and the cache key of the listing they came from (None: not to be
    reused by a rescan, because the project failed as a whole and may fare better next time)."""

    result: ProjectResult
    key: str | None


def scan_keyed(project: Project, job: ScanJob) -> Scanned:
    """Scan `project` and key the result by what was listed (the file stamp is taken first)."""
    stamp = origin_stamp(project.origin)
    seen: list[Entry] = []

    def listing() -> Iterator[Entry]:
        for entry in project.entries():
            seen.append(entry)
            yield entry

    recorded = Project(project.name, project.origin, listing, project.limits)  # its limits go along
    try:
        result = scan_project(recorded, job.query, prefilter=job.prefilter)
    except Exception as exc:  # noqa: BLE001 - a bug outside any one file costs this project only
        return Scanned(failed_project(project, Reason.ANALYSIS_ERROR, describe(exc, stage="project")), None)
    return Scanned(result, project_key(job.fingerprint, project, stamp, seen))


def scan_batch(batch: Sequence[Project], job: ScanJob) -> list[Scanned]:
    return [scan_keyed(project, job) for project in batch]


# ------------------------------------------------------------------ in this process


def run_inline(batches: Iterable[Batch], job: ScanJob) -> Generator[Scanned, None, None]:
    for batch in batches:
        for project in batch:
            yield scan_keyed(project, job)


# ------------------------------------------------------------------ process pool


def _exit_with_parent() -> None:
    """A worker whose parent was killed (SIGKILL leaves no time to stop the pool) ends too."""
    parent = multiprocessing.parent_process()
    if parent is None:
        return

    def watch() -> None:
        multiprocessing.connection.wait([parent.sentinel])
        os._exit(1)

    threading.Thread(target=watch, name="impactscope-parent-watch", daemon=True).start()


def _worker_main(conn: multiprocessing.connection.Connection, job: ScanJob) -> None:
    """A pool worker: receive a batch, send back one `Scanned` per project in order, then None."""
    # Ctrl-C is the parent's to handle: it commits what is done and stops the workers.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # The parent's SIGTERM handler (end the scan like Ctrl-C) is not the worker's: stopped, it just ends.
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    _exit_with_parent()
    # Forked: the query compiled by the parent came along. Spawned: compiled here, once, from
    # the surface JSON that was sent; the library's source is never read by a worker.
    job.query  # noqa: B018 - compiled now, kept by the job for every batch
    while True:
        try:
            batch = conn.recv()
        except EOFError:
            return
        if batch is None:
            return
        for project in batch:
            conn.send(scan_keyed(project, job))
        conn.send(None)


@dataclass
class _Task:
    batch: Batch
    retry: bool = False  # the batch is one project whose worker died once already
    done: int = 0  # projects of the batch whose results came back


@dataclass
class _Worker:
    process: Any  # multiprocessing.Process (of whichever start method)
    conn: multiprocessing.connection.Connection
    task: _Task | None = None


class _Pool:
    """`jobs` worker processes, each fed one batch at a time over its own pipe."""

    def __init__(self, jobs: int, job: ScanJob) -> None:
        self._context = multiprocessing.get_context()
        self._job = job
        self._jobs = jobs
        self.workers: list[_Worker] = []

    def _start(self) -> _Worker:
        if self._context.get_start_method() == "fork":
            # Compiled once, here, before the first fork: every worker inherits it as it is.
            self._job.query  # noqa: B018 - the property compiles and keeps the query
        ours, theirs = self._context.Pipe(duplex=True)
        process = self._context.Process(
            target=_worker_main, args=(theirs, self._job), name="impactscope-worker", daemon=True
        )
        process.start()
        theirs.close()
        worker = _Worker(process, ours)
        self.workers.append(worker)
        return worker

    def has_room(self) -> bool:
        return len(self.workers) < self._jobs or any(w.task is None for w in self.workers)

    def idle(self) -> _Worker:
        for worker in self.workers:
            if worker.task is None:
                return worker
        return self._start()

    def busy(self) -> list[_Worker]:
        return [w for w in self.workers if w.task is not None]

    def replace(self, dead: _Worker) -> None:
        self.workers.remove(dead)
        dead.conn.close()
        dead.process.join(timeout=1)

    def stop(self, *, now: bool) -> None:
        for worker in self.workers:
            if now:
                worker.process.terminate()
            else:
                try:
                    worker.conn.send(None)
                except OSError:
                    pass
        for worker in self.workers:
            worker.process.join(timeout=None if not now else 5)
            worker.conn.close()
        self.workers.clear()


def _death(process: Any) -> str:
    code = process.exitcode
    if code is not None and code < 0:
        try:
            return f"killed by {signal.Signals(-code).name}"
        except ValueError:
            return f"killed by signal {-code}"
    return f"exit code {code}"


def _died_twice(project: Project, how: str) -> Scanned:
    detail = (
        f"the worker process died while scanning this project, twice ({how}); "
        "likely causes: recursion too deep for C code, memory exhausted, a signal"
    )
    return Scanned(failed_project(project, Reason.WORKER_DIED, detail), None)


def run_pool(batches: Iterable[Batch], job: ScanJob, jobs: int) -> Generator[Scanned, None, None]:
    """Yield results as projects finish. Each worker holds one batch at a time; the next batch
    is planned while the workers run. A dead worker's batch is dealt with as the module says."""
    pool = _Pool(jobs, job)
    work = iter(batches)
    again: deque[_Task] = deque()  # sent again after a worker died: first in line
    planned: deque[_Task] = deque()
    exhausted = False
    finished = False

    def plan() -> _Task | None:
        nonlocal exhausted
        batch = None if exhausted else next(work, None)
        exhausted = batch is None
        return None if batch is None else _Task(batch)

    def next_task() -> _Task | None:
        if again:
            return again.popleft()
        if planned:
            return planned.popleft()
        return plan()

    try:
        while True:
            inline: list[Batch] = []
            while pool.has_room():
                task = next_task()
                if task is None:
                    break
                worker = pool.idle()
                try:
                    worker.conn.send(task.batch)  # pickled whole before a byte is written
                except OSError:
                    # It died idle (a signal from outside): no project of this batch is to blame.
                    pool.replace(worker)
                    again.appendleft(task)
                    continue
                except Exception:  # noqa: BLE001 - cannot travel (e.g. holds an open archive)
                    inline.append(task.batch)
                    continue
                worker.task = task
            for batch in inline:
                yield from scan_batch(batch, job)
            busy = pool.busy()
            if not busy:
                if again or planned or not exhausted:
                    continue
                break
            if not exhausted and len(planned) < jobs:
                # Plan ahead while the workers run (listing a project is I/O done here).
                task = plan()
                if task is not None:
                    planned.append(task)
            ready = multiprocessing.connection.wait(
                [w.conn for w in busy] + [w.process.sentinel for w in busy]
            )
            for worker in busy:
                if worker.conn in ready or worker.process.sentinel in ready:
                    yield from _collect(pool, worker, again)
        finished = True
    finally:
        pool.stop(now=not finished)


def _collect(pool: _Pool, worker: _Worker, again: deque[_Task]) -> Iterator[Scanned]:
    """Take what `worker` has sent; if it died, deal with the batch it held."""
    task = worker.task
    assert task is not None
    died = False
    while True:
        try:
            if not worker.conn.poll():
                break
            message = worker.conn.recv()
        except (EOFError, OSError, pickle.UnpicklingError):
            died = True
            break
        if message is None:
            worker.task = None
            return
        task.done += 1
        yield message
    if not died and worker.process.is_alive():
        return
    worker.process.join(timeout=5)
    how = _death(worker.process)
    pool.replace(worker)
    if task.done >= len(task.batch):
        return  # it died after its last result: nothing was lost
    held = task.batch[task.done]
    rest = task.batch[task.done + 1 :]
    if rest:
        again.append(_Task(rest))
    if task.retry:
        yield _died_twice(held, how)
    else:
        again.appendleft(_Task((held,), retry=True))


def picklable_batch(batch: Batch) -> bool:
    try:
        pickle.dumps(batch)
    except Exception:  # noqa: BLE001 - anything unpicklable is scanned in this process instead
        return False
    return True


# ------------------------------------------------------------------ cluster workers


def scan_batch_remote(job: ScanJob, batch: Batch) -> list[Scanned]:
    """The task a cluster worker runs: compile the query once per worker process from the job it
    was sent (never from the library's source), then scan the batch."""
    kept = _WORKER.get("remote")
    if kept is None or kept.settings != job.settings:
        _WORKER["remote"] = kept = job  # its query, compiled on first use, stays with it
    return scan_batch(batch, kept)


__all__ = [
    "Batch",
    "Scanned",
    "run_inline",
    "run_pool",
    "scan_batch",
    "scan_batch_remote",
    "scan_keyed",
]
