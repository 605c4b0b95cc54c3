"""Faults of the machine, injected together into one pooled scan: a worker killed from outside and
a disk that fills while results are being written. Whatever committed before the disk filled is
kept whole, nothing else is claimed, no worker is left running, and the same command run again
ends with exactly the results of a scan that met no fault.

The full disk is SQLite's own SQLITE_FULL, made with `PRAGMA max_page_count` set to the pages the
file has at that moment (the SQLite documentation, PRAGMA max_page_count: past it a write fails
with "database or disk is full"), which is what a full disk gives the store.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
from pathlib import Path

import pytest

from impactscope.scan.run import run_scan
from impactscope.store import ResultStore, StoreError

from .helpers import build_corpus, snapshot, write_changes

pytestmark = pytest.mark.skipif(
    multiprocessing.get_start_method() != "fork",
    reason="the store is patched in this process; the workers must be this process's own forks",
)

PROJECTS = 16
KILL_AT = 2  # the worker is killed when this many projects have come back
FULL_AT = 6  # the disk is full from this project on


def _by_project(shot: dict[str, object], names: set[str]) -> tuple[list, list]:
    files = [(p, f) for p, f in shot["files"] if p in names]  # type: ignore[union-attr]
    findings = [f for f in shot["findings"] if f.project in names]  # type: ignore[union-attr]
    return files, findings


def test_killed_workers_and_a_full_disk_in_one_scan(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    changes, root = write_changes(tmp_path), build_corpus(tmp_path / "corpus", projects=PROJECTS)
    clean = tmp_path / "clean.sqlite"
    run_scan(changes, [root], clean, jobs=2)
    expected = snapshot(clean)
    # Processes an earlier test left (a local Dask cluster's, say) are not this scan's workers.
    others = {p.pid for p in multiprocessing.active_children()}

    # Small batches and commits of two projects, so that the faults fall between commits.
    monkeypatch.setattr("impactscope.scan.run.BATCH_PROJECTS", 2)
    monkeypatch.setattr("impactscope.scan.run.COMMIT_PROJECTS", 2)
    real_add, real_commit = ResultStore.add_project, ResultStore.commit
    added: list[str] = []
    pending: list[str] = []
    committed: set[str] = set()
    killed: list[int] = []

    def add_project(self, result, key=None, *, commit=True):  # type: ignore[no-untyped-def]
        added.append(result.name)
        if len(added) == KILL_AT:
            workers = [p for p in multiprocessing.active_children() if p.pid not in others]
            assert workers, "the pool should be running"
            os.kill(workers[0].pid, signal.SIGKILL)
            killed.append(workers[0].pid)
        if len(added) == FULL_AT:
            pages = self._db.execute("PRAGMA page_count").fetchone()[0]
            self._db.execute(f"PRAGMA max_page_count = {pages}")
        try:
            real_add(self, result, key, commit=commit)
        except StoreError:
            pending.clear()  # the store rolled its open transaction back: those were never kept
            raise
        pending.append(result.name)

    def commit(self):  # type: ignore[no-untyped-def]
        try:
            real_commit(self)
        except StoreError:
            pending.clear()  # rolled back, as above
            raise
        committed.update(pending)
        pending.clear()

    monkeypatch.setattr(ResultStore, "add_project", add_project)
    monkeypatch.setattr(ResultStore, "commit", commit)
    out = tmp_path / "r.sqlite"
    with pytest.raises(StoreError, match=r"cannot write the results file .*disk is full.*resumes$"):
        run_scan(changes, [root], out, jobs=2)
    assert killed and len(added) >= FULL_AT
    assert [p for p in multiprocessing.active_children() if p.pid not in others] == []  # no worker outlives the scan
    monkeypatch.undo()

    # Every project committed before the disk filled is kept, exactly as a clean scan has it;
    # no other project is in the file, and the file does not claim to be complete.
    kept = snapshot(out)
    names = {p.name for p in kept["projects"]}  # type: ignore[union-attr]
    assert KILL_AT <= len(committed) < PROJECTS and names == committed
    assert _by_project(kept, committed) == _by_project(expected, committed)
    assert kept["complete"] != "1"

    # The same command again: it resumes, and ends with what a scan without faults found.
    summary = run_scan(changes, [root], out, jobs=2)
    assert summary.reused == len(committed) and summary.faults == {}
    final = snapshot(out)
    assert final["files"] == expected["files"]
    assert set(final["findings"]) == set(expected["findings"])  # type: ignore[arg-type]
    assert final["manifests"] == expected["manifests"] and final["complete"] == "1"
