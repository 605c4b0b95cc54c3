"""The scan job: one record per scan, sent once to each worker, whose query is compiled once there."""

from __future__ import annotations

import pickle
from pathlib import Path

import pytest

from impactscope.changes import load_change_list
from impactscope.corpus.roots import discover
from impactscope.scan import executor
from impactscope.scan.cache import ScanSettings
from impactscope.scan.executor import scan_batch, scan_batch_remote
from impactscope.scan.job import ScanJob
from impactscope.scan.library import prepare_library

from .helpers import CHANGES, build_corpus, write_changes


def _job(tmp_path: Path, *, prefilter: bool = True) -> ScanJob:
    folder = tmp_path / "job"
    folder.mkdir(exist_ok=True)
    changes = load_change_list(write_changes(folder))
    return ScanJob(prepare_library(changes, tmp_path / "r.sqlite"), ScanSettings.of(changes, prefilter=prefilter))


def test_the_job_carries_the_settings_and_the_fingerprint_they_give(tmp_path: Path) -> None:
    job = _job(tmp_path, prefilter=False)
    assert job.prefilter is False and job.changes is job.library.changes
    assert job.fingerprint == job.settings.fingerprint
    assert _job(tmp_path, prefilter=True).fingerprint != job.fingerprint


def test_settings_made_for_another_change_list_are_refused(tmp_path: Path) -> None:
    other = load_change_list(write_changes(tmp_path, CHANGES.replace('release = "3.0"', 'release = "3.1"')))
    with pytest.raises(AssertionError, match="another change list"):
        ScanJob(_job(tmp_path).library, ScanSettings.of(other, prefilter=True))


def test_a_received_job_compiles_its_own_query_once(tmp_path: Path) -> None:
    job = _job(tmp_path)
    job.query  # noqa: B018 - compiled in the sender
    received = pickle.loads(pickle.dumps(job))
    assert "query" not in received.library.__dict__  # the compiled query stays behind
    assert received.query is received.query
    assert received.query.model.returns("heronframe.read_table") == "heronframe.Table"


def test_a_cluster_worker_keeps_the_first_job_of_a_scan_for_its_later_tasks(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(executor, "_WORKER", {})
    job = _job(tmp_path)
    projects = tuple(discover([str(build_corpus(tmp_path / "corpus", projects=2))], library="heronframe"))
    # Each task's job arrives as its own copy (as a cluster may deserialize it per task).
    first = scan_batch_remote(pickle.loads(pickle.dumps(job)), projects[:1])
    kept = executor._WORKER["remote"]
    second = scan_batch_remote(pickle.loads(pickle.dumps(job)), projects[1:])
    assert executor._WORKER["remote"] is kept  # the same job, so the same compiled query
    assert first + second == scan_batch(projects, job)
    # Another scan's job (here: the prefilter off) replaces it.
    other = _job(tmp_path, prefilter=False)
    scan_batch_remote(pickle.loads(pickle.dumps(other)), projects[:1])
    assert executor._WORKER["remote"] is not kept
