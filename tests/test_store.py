"""The results store: whole projects per transaction, cache keys, resuming, pruning."""

from __future__ import annotations

import sqlite3
from pathlib import Path

from impactscope.changes import parse_change_list
import pytest

from impactscope.findings import Confidence, Finding, Reading
from impactscope.outcomes import FileOutcome, FileStatus, ProjectResult
from impactscope.store import FORMAT, CachedProject, ResultStore, StoreError

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


def test_outcomes_and_findings_come_back_as_values(tmp_path):
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    result = _result("p1")
    token = Finding("p1", "old.py", None, 2, 0, "heronframe.stack", Confidence.POSSIBLE, "stack", Reading.TOKEN_LEVEL)
    result.files.append(FileOutcome("old.py", FileStatus.UNPARSED, "python 2", digest="e", kind="module"))
    result.findings.append(token)
    store.add_project(result, "k1")
    store.close()
    reader = ResultStore.open(out)
    files = dict((o.path, o) for _, o in reader.files())
    assert files["b.txt"].status is FileStatus.SKIPPED and files["old.py"].status is FileStatus.UNPARSED
    found = reader.findings()
    assert token in found and found[found.index(token)].reading is Reading.TOKEN_LEVEL
    assert {f.reading for f in found if f.file == "a.py"} == {Reading.SYNTAX_TREE}
    reader.close()


def _older_layout(path: Path) -> None:
    """A results file as the version before `format` wrote it: no such meta key, no reading column."""
    store = ResultStore.create(path, _changes(), TEXT, settings="s1")
    store.add_project(_result("p1"), "k1")
    store.close()
    with sqlite3.connect(path) as db:
        db.execute("DELETE FROM meta WHERE key = 'format'")
        db.execute("ALTER TABLE findings DROP COLUMN reading")


def test_a_file_of_an_older_layout_is_refused_for_reading_and_started_afresh_by_a_scan(tmp_path):
    out = tmp_path / "r.sqlite"
    _older_layout(out)
    with pytest.raises(StoreError, match="older version .*lacks format.*--fresh"):
        ResultStore.open(out)
    store, kept = ResultStore.resume(out, _changes(), TEXT, settings="s1")
    assert not kept and store.projects() == [] and store.meta()["format"] == FORMAT
    store.close()


def test_a_file_of_another_layout_is_refused_with_both_layouts_named(tmp_path):
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, _changes(), TEXT, settings="s1")
    store.set_meta(format="99")
    store.close()
    with pytest.raises(StoreError, match=f"layout 99, and this version reads layout {FORMAT}"):
        ResultStore.open(out)
    store, kept = ResultStore.resume(out, _changes(), TEXT, settings="s1")
    assert not kept
    store.close()
