"""Scans give the same results for any number of jobs, warm or cold, interrupted or not."""

from __future__ import annotations

import io
import os
import pickle
from pathlib import Path

import pytest

import impactscope.corpus.archives.tar as tar_module
import impactscope.corpus.archives.zip as zip_module
import impactscope.corpus.folders as folders_module
import impactscope.corpus.roots as roots_module
from impactscope.corpus.roots import discover
from impactscope.scan import cache as cache_module
from impactscope.scan.cache import held, picklable, replayed, streamed
from impactscope.scan.progress import LiveLine, LogLines, Silent, Tally, for_stream
from impactscope.scan.run import count_projects, run_scan
from impactscope import store as store_module

from .helpers import CHANGES, build_archive_roots, build_corpus, snapshot, write_changes


@pytest.fixture()
def corpus(tmp_path: Path) -> tuple[Path, list[Path]]:
    root = build_corpus(tmp_path / "corpus", projects=8)
    zip_root, tar_root = build_archive_roots(tmp_path)
    return write_changes(tmp_path), [root, zip_root, tar_root]


def test_jobs_one_and_two_give_identical_results(corpus, tmp_path):
    changes, roots = corpus
    one = run_scan(changes, roots, tmp_path / "one.sqlite", jobs=1)
    two = run_scan(changes, roots, tmp_path / "two.sqlite", jobs=2)
    a, b = snapshot(tmp_path / "one.sqlite"), snapshot(tmp_path / "two.sqlite")
    assert a == b
    assert a["complete"] == "1"
    assert (one.projects, one.files, one.findings) == (two.projects, two.files, two.findings)
    assert one.findings > 20 and {f.project for f in a["findings"]} >= {"proj000", "proj001", "proj002", "zp0", "tp0"}
    statuses = {outcome.status for _, outcome in a["files"]}
    assert statuses == {"parsed", "skipped", "unparsed"}


def test_warm_rescan_reuses_everything_and_reads_no_file(corpus, tmp_path, monkeypatch):
    changes, roots = corpus
    roots = roots[:2]  # a tar root can only be streamed, so it is read again; see test below
    out = tmp_path / "r.sqlite"
    cold = run_scan(changes, roots, out, jobs=1)
    before = snapshot(out)

    reads: list[str] = []

    def counting(name):
        def refuse(*args, **kwargs):
            reads.append(name)
            raise AssertionError(f"{name} called during a warm rescan")
        return refuse

    for module, name in ((folders_module, "read_path"), (zip_module, "read_zip"), (tar_module, "read_tar"),
                         (roots_module, "archive_file_entries"), (roots_module, "file_entries")):
        monkeypatch.setattr(module, name, counting(name))
    warm = run_scan(changes, roots, out, jobs=1)
    assert reads == []
    assert warm.reused == warm.projects == cold.projects
    assert (warm.files, warm.findings) == (cold.files, cold.findings)
    assert snapshot(out) == before


def test_warm_rescan_trusts_stamps_and_sees_changed_ones(corpus, tmp_path):
    """Rewrite a file with the same size and mtime: a warm scan keeps the old results, which it
    could not if it had read the file; once the mtime moves, the project is scanned again."""
    changes, roots = corpus
    out = tmp_path / "r.sqlite"
    run_scan(changes, roots, out, jobs=1)
    before = snapshot(out)
    target = roots[0] / "proj000" / "pkg0" / "io.py"
    info = target.stat()
    text = target.read_text()
    blanked = text.replace("t.stack_rows(t)", "t.other_rows(t)")
    assert len(blanked) == len(text)
    target.write_text(blanked)
    os.utime(target, ns=(info.st_atime_ns, info.st_mtime_ns))
    warm = run_scan(changes, roots, out, jobs=2)
    assert warm.reused == warm.projects
    assert snapshot(out) == before

    os.utime(target, ns=(info.st_atime_ns, info.st_mtime_ns + 1_000_000_000))
    again = run_scan(changes, roots, out, jobs=2)
    assert again.reused == again.projects - 1
    fresh = run_scan(changes, roots, tmp_path / "fresh.sqlite", jobs=1)
    assert snapshot(out) == snapshot(tmp_path / "fresh.sqlite")
    assert again.findings == fresh.findings == before_count(before) - 1


def before_count(snap) -> int:
    return len(snap["findings"])


def test_change_list_tool_version_prefilter_and_fresh_invalidate(corpus, tmp_path, monkeypatch):
    changes, roots = corpus
    out = tmp_path / "r.sqlite"
    run_scan(changes, roots, out, jobs=1)
    assert run_scan(changes, roots, out, jobs=1).reused == 9 + 6
    assert run_scan(changes, roots, out, jobs=1, fresh=True).reused == 0
    assert run_scan(changes, roots, out, jobs=1, prefilter=False).reused == 0
    assert run_scan(changes, roots, out, jobs=1, prefilter=False).reused == 15
    monkeypatch.setattr(cache_module, "__version__", "99.0")
    monkeypatch.setattr(store_module, "__version__", "99.0")
    assert run_scan(changes, roots, out, jobs=1, prefilter=False).reused == 0
    monkeypatch.undo()
    other = write_changes(tmp_path, CHANGES.replace('release = "3.0"', 'release = "3.1"'))
    assert run_scan(other, roots, out, jobs=1).reused == 0
    assert snapshot(out)["findings"] == snapshot(out)["findings"]


def test_projects_gone_from_the_corpus_leave_the_results(corpus, tmp_path):
    changes, roots = corpus
    out = tmp_path / "r.sqlite"
    run_scan(changes, roots, out, jobs=1)
    (roots[0] / "proj001.zip").unlink()
    summary = run_scan(changes, roots, out, jobs=1)
    assert summary.removed == 1
    run_scan(changes, roots, tmp_path / "fresh.sqlite", jobs=1)
    assert snapshot(out) == snapshot(tmp_path / "fresh.sqlite")


class _StopAfter:
    """A progress display that presses Ctrl-C after `n` projects."""

    def __init__(self, n: int) -> None:
        self.n = n

    def start(self, total):
        pass

    def update(self, tally: Tally) -> None:
        if tally.projects == self.n:
            raise KeyboardInterrupt

    def finish(self, tally):
        pass


@pytest.mark.parametrize("jobs", [1, 2])
def test_keyboard_interrupt_keeps_finished_projects_and_resume_completes(corpus, tmp_path, jobs):
    changes, roots = corpus
    out = tmp_path / "r.sqlite"
    with pytest.raises(KeyboardInterrupt):
        run_scan(changes, roots, out, jobs=jobs, progress=_StopAfter(5))
    partial = snapshot(out)
    assert partial["complete"] == "0"
    assert 5 <= len(partial["projects"]) < 15
    resumed = run_scan(changes, roots, out, jobs=jobs)
    assert resumed.reused >= 5
    run_scan(changes, roots, tmp_path / "whole.sqlite", jobs=1)
    assert snapshot(out) == snapshot(tmp_path / "whole.sqlite")


def test_projects_travel_pickled_or_replayed(corpus):
    _, roots = corpus
    for project in discover(roots, library="heronframe"):
        if streamed(project) or not picklable(project):
            # Zip and tar root projects hold an open archive: replayed from held bytes instead.
            copy = replayed(project, [held(e) for e in project.entries()])
            assert picklable(copy)
            again = pickle.loads(pickle.dumps(copy))
            assert [e.path for e in again.entries()] == [e.path for e in copy.entries()]
        else:
            assert project.origin.startswith(str(roots[0]))


def test_count_projects_is_known_for_folder_and_zip_roots_only(corpus):
    _, roots = corpus
    assert count_projects(roots[:2], single=False, library="heronframe") == 9 + 3
    assert count_projects(roots, single=False, library="heronframe") is None
    assert count_projects(roots, single=True, library="heronframe") == 3


def test_progress_displays(corpus, tmp_path):
    changes, roots = corpus
    log = io.StringIO()
    run_scan(changes, roots[:1], tmp_path / "a.sqlite", progress=LogLines(log, every=0.0))
    lines = log.getvalue().splitlines()
    assert lines[0] == "impactscope: scanning 9 projects"
    assert lines[-1].startswith("impactscope: 9/9 projects (0 unchanged)") and "files/s" in lines[-1]

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    term = Terminal()
    display = for_stream(term)
    assert isinstance(display, LiveLine)
    run_scan(changes, roots[:1], tmp_path / "b.sqlite", progress=display)
    assert isinstance(for_stream(term, quiet=True), Silent)
    assert isinstance(for_stream(io.StringIO()), LogLines)


def test_cache_does_not_depend_on_the_working_directory(corpus, tmp_path, monkeypatch):
    changes, roots = corpus
    monkeypatch.chdir(roots[0].parent)
    run_scan(changes, [Path("corpus")], tmp_path / "r.sqlite", jobs=1)
    monkeypatch.chdir(roots[0])
    warm = run_scan(changes, [roots[0]], tmp_path / "r.sqlite", jobs=1)
    assert warm.reused == warm.projects == 9
    assert all(Path(p.origin).is_absolute() for p in snapshot(tmp_path / "r.sqlite")["projects"])


def test_editing_the_library_source_voids_the_cache(corpus, tmp_path):
    """With `[library] source`, the scan resolves against the library's own code: a change there
    may change findings, so it counts like a change to the change list. The source is keyed by
    content, so a file touched but not changed keeps the cache (and the surface file)."""
    _, roots = corpus
    library = tmp_path / "lib" / "heronframe"
    library.mkdir(parents=True)
    # The library defines both changed members: a change list naming a member its source lacks is refused.
    (library / "__init__.py").write_text("from .ops import stack, Table\n")
    (library / "ops.py").write_text("class Table:\n    def stack_rows(self): ...\ndef stack(tables):\n    return tables[0]\n")
    changes = write_changes(tmp_path, CHANGES.replace('release = "3.0"', 'release = "3.0"\nsource = "lib/heronframe"'))
    out = tmp_path / "r.sqlite"
    run_scan(changes, roots[:1], out, jobs=1)
    assert run_scan(changes, roots[:1], out, jobs=1).reused == 9
    info = (library / "ops.py").stat()
    os.utime(library / "ops.py", ns=(info.st_atime_ns, info.st_mtime_ns + 1_000_000_000))
    assert run_scan(changes, roots[:1], out, jobs=1).reused == 9
    (library / "ops.py").write_text("class Table:\n    def stack_rows(self): ...\ndef stack(tables, axis=0):\n    return tables[0]\n")
    assert run_scan(changes, roots[:1], out, jobs=1).reused == 0


def test_a_partly_changed_rescan_keeps_every_project_reused_or_scanned(corpus, tmp_path):
    """The plan hands the unchanged projects on as values between the scanned ones: each is
    counted once, and none is pruned as gone."""
    changes, roots = corpus
    roots = roots[:1]
    out = tmp_path / "r.sqlite"
    cold = run_scan(changes, roots, out, jobs=2)
    (roots[0] / "proj003" / "extra.py").write_text("import heronframe\nheronframe.stack([])\n", encoding="utf-8")
    warm = run_scan(changes, roots, out, jobs=2)
    assert (warm.projects, warm.reused, warm.removed) == (cold.projects, cold.projects - 1, 0)
    run_scan(changes, roots, tmp_path / "fresh.sqlite", jobs=1)
    assert snapshot(out) == snapshot(tmp_path / "fresh.sqlite")
