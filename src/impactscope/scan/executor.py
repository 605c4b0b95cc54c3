"""Executors: run `scan_project` over batches of projects here or in a pool of worker processes.

Work is cut by project, so cross-module resolution stays inside one worker; small projects travel
in batches to keep the cost per task low. Each result comes back with the project's cache key,
computed from the very listing the scan used. Results are yielded as batches finish; the caller
writes them, so the store has one writer. The output does not depend on the number of workers.
"""

from __future__ import annotations

import multiprocessing
import multiprocessing.connection
import os
import pickle
import signal
import threading
from collections import deque
from concurrent.futures import Future, ProcessPoolExecutor
from dataclasses import dataclass
from typing import Generator, Iterable, Iterator, Sequence

from impactscope.changes import ChangeList
from impactscope.corpus.roots import Entry, Project
from impactscope.resolve.query import Query
from impactscope.scan.cache import origin_stamp, project_key
from impactscope.scan.project import ProjectResult, scan_project

Batch = tuple[Project, ...]

# Per worker process: the query is compiled once (by the pool initializer, or on a cluster worker
# by its first task), not per task. This is the one sanctioned per-process cache.
_WORKER: dict[str, object] = {}


@dataclass(frozen=True)
class Scanned:
    """One project's results and the cache key of the listing they came from."""

    result: ProjectResult
    key: str


def scan_keyed(project: Project, query: Query, prefilter: bool, fingerprint: str) -> Scanned:
    """Scan `project` and key the result by what was listed (the file stamp is taken first)."""
    stamp = origin_stamp(project.origin)
    seen: list[Entry] = []

    def listing() -> Iterator[Entry]:
        for entry in project.entries():
            seen.append(entry)
            yield entry

    recorded = Project(project.name, project.origin, listing)
    result = scan_project(recorded, query, prefilter=prefilter)
    return Scanned(result, project_key(fingerprint, project, stamp, seen))


def scan_batch(batch: Sequence[Project], query: Query, prefilter: bool, fingerprint: str) -> list[Scanned]:
    return [scan_keyed(project, query, prefilter, fingerprint) for project in batch]


# ------------------------------------------------------------------ in this process


def run_inline(batches: Iterable[Batch], query: Query, prefilter: bool, fingerprint: str) -> Generator[Scanned, None, None]:
    for batch in batches:
        for project in batch:
            yield scan_keyed(project, query, prefilter, fingerprint)


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


def _init_worker(changes: ChangeList, prefilter: bool, fingerprint: str) -> None:
    # Ctrl-C is the parent's to handle: it commits what is done and stops the pool.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _exit_with_parent()
    _WORKER["query"] = Query(changes)
    _WORKER["prefilter"] = prefilter
    _WORKER["fingerprint"] = fingerprint


def _scan_in_worker(batch: Batch) -> list[Scanned]:
    query = _WORKER["query"]
    assert isinstance(query, Query)
    return scan_batch(batch, query, bool(_WORKER["prefilter"]), str(_WORKER["fingerprint"]))


def run_pool(
    batches: Iterable[Batch], changes: ChangeList, query: Query, jobs: int, prefilter: bool, fingerprint: str
) -> Generator[Scanned, None, None]:
    """Yield results as batches finish; a few batches per worker are in flight at most."""
    window = jobs * 3
    pending: deque[Future[list[Scanned]]] = deque()
    pool = ProcessPoolExecutor(max_workers=jobs, initializer=_init_worker, initargs=(changes, prefilter, fingerprint))
    finished = False
    try:
        for batch in batches:
            if not picklable_batch(batch):
                # Cannot travel (e.g. holds an open archive): scan it here.
                yield from scan_batch(batch, query, prefilter, fingerprint)
                continue
            pending.append(pool.submit(_scan_in_worker, batch))
            while len(pending) >= window or (pending and pending[0].done()):
                yield from pending.popleft().result()
        while pending:
            yield from pending.popleft().result()
        finished = True
    finally:
        if finished:
            pool.shutdown(wait=True)
        else:
            # Interrupted or failed: drop queued work and stop the workers now, not after their tasks.
            processes = list((getattr(pool, "_processes", None) or {}).values())
            pool.shutdown(wait=False, cancel_futures=True)
            for process in processes:
                process.terminate()


def picklable_batch(batch: Batch) -> bool:
    try:
        pickle.dumps(batch)
    except Exception:  # noqa: BLE001 - anything unpicklable is scanned in this process instead
        return False
    return True


# ------------------------------------------------------------------ cluster workers


def scan_batch_remote(changes: ChangeList, prefilter: bool, fingerprint: str, batch: Batch) -> list[Scanned]:
    """The task a cluster worker runs: compile the query once per worker process, scan the batch."""
    cached = _WORKER.get("remote")
    if isinstance(cached, tuple) and cached[0] == changes.digest:
        query = cached[1]
    else:
        query = Query(changes)
        _WORKER["remote"] = (changes.digest, query)
    return scan_batch(batch, query, prefilter, fingerprint)


__all__ = ["Batch", "Scanned", "run_inline", "run_pool", "scan_batch", "scan_batch_remote", "scan_keyed"]
