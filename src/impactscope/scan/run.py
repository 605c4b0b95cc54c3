"""Drive a scan: change list and roots in, a results store out."""

from __future__ import annotations

import os
import sys
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Sequence

from impactscope.changes import ChangeList, load_change_list
from impactscope.corpus.roots import check_roots, discover
from impactscope.resolve.query import Query
from impactscope.scan.executor import run_inline, run_pool
from impactscope.store import ResultStore


@dataclass(frozen=True)
class ScanSummary:
    projects: int
    files: int
    findings: int
    seconds: float
    out: Path


def run_scan(
    changes_path: str | os.PathLike[str],
    roots: Sequence[str | os.PathLike[str]],
    out: str | os.PathLike[str],
    *,
    single: bool = False,
    jobs: int = 1,
    prefilter: bool = True,
    progress: Callable[[int, int, str], None] | None = None,
) -> ScanSummary:
    changes = load_change_list(changes_path)
    check_roots(roots)
    text = Path(changes_path).read_text(encoding="utf-8")
    query = Query(changes)
    store = ResultStore.create(out, changes, text)
    started = time.perf_counter()
    projects = files = findings = 0
    try:
        found = discover(roots, single=single, library=changes.import_name)
        if jobs > 1:
            results = run_pool(found, changes, query, jobs, prefilter)
        else:
            results = run_inline(found, query, prefilter)
        for result in results:
            store.add_project(result)
            projects += 1
            files += len(result.files)
            findings += len(result.findings)
            if progress is not None:
                progress(projects, files, result.name)
        store.set_meta(complete="1")
    finally:
        store.close()
    return ScanSummary(projects, files, findings, time.perf_counter() - started, Path(out))


def stderr_progress(every: int = 50) -> Callable[[int, int, str], None]:
    def report(projects: int, files: int, name: str) -> None:
        if projects % every == 0:
            print(f"  ... {projects} projects, {files} files", file=sys.stderr)

    return report


__all__ = ["run_scan", "ScanSummary", "ChangeList"]
