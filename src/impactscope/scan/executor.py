"""Executors: run `scan_project` over projects in this process or in a pool of workers.

Work is cut by project, so cross-module resolution stays inside one worker. Results are
yielded as projects finish; the caller writes them, so the store has one writer.
"""

from __future__ import annotations

import pickle
from collections import deque
from concurrent.futures import Future, ProcessPoolExecutor
from typing import Iterable, Iterator

from impactscope.changes import ChangeList
from impactscope.corpus.roots import Project
from impactscope.resolve.query import Query
from impactscope.scan.project import ProjectResult, scan_project

# Per worker process: the query is compiled once by the pool initializer, not per task.
_WORKER: dict[str, object] = {}


def _init_worker(changes: ChangeList, prefilter: bool) -> None:
    _WORKER["query"] = Query(changes)
    _WORKER["prefilter"] = prefilter


def _scan_in_worker(project: Project) -> ProjectResult:
    return scan_project(project, _WORKER["query"], prefilter=bool(_WORKER["prefilter"]))  # type: ignore[arg-type]


def run_inline(projects: Iterable[Project], query: Query, prefilter: bool) -> Iterator[ProjectResult]:
    for project in projects:
        yield scan_project(project, query, prefilter=prefilter)


def run_pool(
    projects: Iterable[Project], changes: ChangeList, query: Query, jobs: int, prefilter: bool
) -> Iterator[ProjectResult]:
    """Yield results as workers finish; at most a few tasks per worker are in flight."""
    window = jobs * 4
    pending: deque[Future[ProjectResult]] = deque()
    with ProcessPoolExecutor(max_workers=jobs, initializer=_init_worker, initargs=(changes, prefilter)) as pool:
        for project in projects:
            if not _picklable(project):
                # A project read from inside an archive root holds an open archive: scan it here.
                yield scan_project(project, query, prefilter=prefilter)
                continue
            pending.append(pool.submit(_scan_in_worker, project))
            while len(pending) >= window or (pending and pending[0].done()):
                yield pending.popleft().result()
        while pending:
            yield pending.popleft().result()


def _picklable(project: Project) -> bool:
    try:
        pickle.dumps(project)
    except Exception:  # noqa: BLE001 - anything unpicklable is scanned in this process instead
        return False
    return True
