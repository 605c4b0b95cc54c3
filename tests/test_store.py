"""The results store: whole projects per transaction, cache keys, resuming, pruning."""

from __future__ import annotations

import sqlite3
from pathlib import Path

from impactscope.changes import parse_change_list
from impactscope.findings import Confidence, Finding
from impactscope.scan.project import FileOutcome, ProjectResult
import pytest

from impactscope.store import CachedProject, ResultStore, StoreError

TEXT = """\
[library]
name = "heronframe"

[[change]]
member = "heronframe.stack"
kind = "removed"
"""


def _changes(text: str = TEXT):
    return parse_change_list(text.encode(), Path("changes.toml"))


def _result(name: str, findings: int = 1) -> ProjectResult:
    return ProjectResult(
        name=name,
        origin=f"/corpus/{name}",
        files=[FileOutcome("a.py", "parsed", digest="d", kind="module"), FileOutcome("b.txt", "skipped", "not source")],
        findings=[Finding(name, "a.py", None, n + 1, 0, "heronframe.stack", Confidence.RESOLVED, "p")
                  for n in range(findings)],
        uses_library=True,
        manifests={"requirements.txt": b"heronframe\n"},
    )


def test_wal_mode_and_keys_written_with_the_project(tmp_path):
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    store.add_project(_result("p1", 2), "k1")
    store.add_project(_result("p2"), None)  # no key: never reused
    assert store.cached() == {"p1": CachedProject("k1", 2, 2)}
    store.close()
    with sqlite3.connect(out) as db:
        assert db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"


def test_uncommitted_projects_are_lost_whole(tmp_path):
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    store.add_project(_result("p1"), "k1", commit=False)
    store.commit()
    store.add_project(_result("p2"), "k2", commit=False)
    store.close()  # closing without commit: like a kill before the batch was committed
    reader = ResultStore.open(out)
    assert [p.name for p in reader.projects()] == ["p1"]
    assert {p for p, _ in reader.files()} == {"p1"}
    assert {f.project for f in reader.findings()} == {"p1"}
    reader.close()


def test_resume_keeps_only_matching_settings_and_change_list(tmp_path):
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    store.add_project(_result("p1"), "k1")
    store.set_meta(complete="1")
    store.close()

    store, kept = ResultStore.resume(out, _changes(), TEXT, settings="s1")
    assert kept and store.cached()["p1"].key == "k1"
    assert store.meta()["complete"] == "0"  # until the resumed scan finishes
    store.close()

    store, kept = ResultStore.resume(out, _changes(), TEXT, settings="s2")
    assert not kept and store.cached() == {} and store.projects() == []
    store.close()

    other = TEXT.replace('name = "heronframe"', 'name = "heronframe"\nrelease = "3.0"')
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    store.add_project(_result("p1"), "k1")
    store.close()
    store, kept = ResultStore.resume(out, _changes(other), other, settings="s1")
    assert not kept
    store.close()


def test_a_file_that_is_not_a_store_is_never_overwritten(tmp_path):
    out = tmp_path / "notes.txt"
    out.write_bytes(b"not sqlite at all" * 100)
    with pytest.raises(StoreError, match="is not an impactscope results file"):
        ResultStore.resume(out, _changes(), TEXT, settings="s1")
    with pytest.raises(StoreError, match="is not an impactscope results file"):
        ResultStore.create(out, _changes(), TEXT, settings="s1")
    other = tmp_path / "other.sqlite"
    with sqlite3.connect(other) as db:
        db.execute("CREATE TABLE t (x)")
    with pytest.raises(StoreError):
        ResultStore.resume(other, _changes(), TEXT, settings="s1")
    assert out.read_bytes() == b"not sqlite at all" * 100
    empty = tmp_path / "empty.sqlite"
    empty.touch()
    store, kept = ResultStore.resume(empty, _changes(), TEXT, settings="s1")
    assert not kept
    store.close()


def test_rewriting_a_project_replaces_its_rows_and_prune_drops_the_gone(tmp_path):
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    store.add_project(_result("p1", 3), "k1")
    store.add_project(_result("p2", 1), "k2")
    store.add_project(_result("p1", 1), "k1b")
    assert len([f for f in store.findings() if f.project == "p1"]) == 1
    assert store.cached()["p1"] == CachedProject("k1b", 2, 1)
    assert store.prune({"p1"}) == 1
    assert [p.name for p in store.projects()] == ["p1"]
    assert store.manifests("p2") == {} and "p2" not in store.cached()
    store.close()
