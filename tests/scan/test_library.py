"""The library surface: built once per scan, kept beside the results by content hash, sent to workers."""

from __future__ import annotations

import dataclasses
import multiprocessing
import os
import pickle
import shutil
import threading
from pathlib import Path

import pytest

import impactscope.surface as surface_package
from impactscope.changes import load_change_list
from impactscope.scan import library as library_module
from impactscope.scan import run as run_module
from impactscope.scan.library import SURFACE_SUFFIX, ScanLibrary, library_digest, prepare_library, source_digest
from impactscope.scan.run import run_scan
from impactscope.store import ResultStore
from impactscope.surface.check import UnknownMemberError
from impactscope.surface.model import Surface

from .helpers import CHANGES, build_corpus, snapshot, write_changes

LIBRARY_INIT = "from .core import Table, stack\n"
LIBRARY_CORE = (
    "class Table:\n"
    "    def stack_rows(self, other):\n        return self\n"
    "def read_table(path) -> Table:\n    return Table()\n"
    "def stack(tables):\n    return tables[0]\n"
)


@pytest.fixture
def setup(tmp_path: Path) -> tuple[Path, Path, Path]:
    """A corpus, a change list naming a library source, and that source (invented, fictional)."""
    source = tmp_path / "lib" / "heronframe"
    source.mkdir(parents=True)
    (source / "__init__.py").write_text(LIBRARY_INIT, encoding="utf-8")
    (source / "core.py").write_text(LIBRARY_CORE, encoding="utf-8")
    changes = write_changes(tmp_path, CHANGES.replace('release = "3.0"', 'release = "3.0"\nsource = "lib/heronframe"'))
    return changes, build_corpus(tmp_path / "corpus", projects=6), source


def _counting_builds(monkeypatch: pytest.MonkeyPatch, log: Path) -> None:
    """Record the process of every surface build and every surface read back from JSON."""
    build, from_json = surface_package.build_surface, Surface.from_json.__func__  # type: ignore[attr-defined]

    def counted_build(*args, **kwargs):  # type: ignore[no-untyped-def]
        with open(log, "a", encoding="utf-8") as out:
            out.write(f"build {os.getpid()}\n")
        return build(*args, **kwargs)

    def counted_from_json(cls, data):  # type: ignore[no-untyped-def]
        with open(log, "a", encoding="utf-8") as out:
            out.write(f"json {os.getpid()}\n")
        return from_json(cls, data)

    monkeypatch.setattr(surface_package, "build_surface", counted_build)
    monkeypatch.setattr(Surface, "from_json", classmethod(counted_from_json))


def _surface_files(out: Path) -> list[Path]:
    return sorted(out.parent.glob(f"{out.name}{SURFACE_SUFFIX}*.json"))


@pytest.mark.skipif(multiprocessing.get_start_method() != "fork", reason="counts calls patched before the fork")
def test_the_surface_is_built_once_by_the_scan_and_never_by_a_worker(setup, tmp_path, monkeypatch):
    changes, root, _ = setup
    log = tmp_path / "calls"
    _counting_builds(monkeypatch, log)
    out = tmp_path / "r.sqlite"
    run_scan(changes, [root], out, jobs=2)
    assert log.read_text().split("\n")[:-1] == [f"build {os.getpid()}"]
    (kept,) = _surface_files(out)
    digest = source_digest(load_change_list(changes).source, "heronframe")  # type: ignore[arg-type]
    assert kept.name == f"r.sqlite.surface-{digest[:24]}.json"


def test_a_later_scan_reads_the_kept_surface_and_finds_the_same(setup, tmp_path, monkeypatch):
    changes, root, _ = setup
    out = tmp_path / "r.sqlite"
    run_scan(changes, [root], out, jobs=1)
    first = snapshot(out)
    log = tmp_path / "calls"
    _counting_builds(monkeypatch, log)
    run_scan(changes, [root], out, jobs=1, fresh=True)
    assert log.read_text().split() == ["json", str(os.getpid())]  # read back once, never built
    assert snapshot(out) == first


def test_a_rescan_with_nothing_to_do_never_touches_the_surface(setup, tmp_path, monkeypatch):
    changes, root, _ = setup
    out = tmp_path / "r.sqlite"
    run_scan(changes, [root], out, jobs=2)

    def refuse(*args, **kwargs):  # type: ignore[no-untyped-def]
        raise AssertionError("the library was prepared for a scan with nothing to scan")

    monkeypatch.setattr(run_module, "prepare_library", refuse)
    warm = run_scan(changes, [root], out, jobs=2)
    assert warm.reused == warm.projects


def test_an_edited_source_gets_a_new_surface_file_and_the_old_one_goes(setup, tmp_path):
    changes, root, source = setup
    out = tmp_path / "r.sqlite"
    run_scan(changes, [root], out, jobs=1)
    (before,) = _surface_files(out)
    # Touched but unchanged: the same content, the same file.
    os.utime(source / "core.py", ns=(1, 1))
    run_scan(changes, [root], out, jobs=1, fresh=True)
    assert _surface_files(out) == [before]
    (source / "core.py").write_text(LIBRARY_CORE.replace("def stack(tables)", "def stack(tables, axis=0)"), encoding="utf-8")
    run_scan(changes, [root], out, jobs=1)
    (after,) = _surface_files(out)
    assert after != before


def test_a_received_library_compiles_without_the_source(setup, tmp_path):
    """What a spawned or cluster worker gets: the change list and the surface JSON, no query."""
    changes, _, source = setup
    prepared = prepare_library(load_change_list(changes), tmp_path / "r.sqlite")
    assert "query" in prepared.__dict__  # compiled from the surface just built
    sent = pickle.dumps(prepared)
    shutil.rmtree(source.parent)
    received = pickle.loads(sent)
    assert isinstance(received, ScanLibrary) and "query" not in received.__dict__
    query = received.query
    assert query.model.returns("heronframe.read_table") == "heronframe.core.Table"
    assert query.model.canonical("heronframe.Table") == prepared.query.model.canonical("heronframe.Table")


def test_without_a_source_there_is_no_surface_file(tmp_path):
    changes = load_change_list(write_changes(tmp_path))
    library = prepare_library(changes, tmp_path / "r.sqlite")
    assert library.surface_json is None and library.digest == ""
    assert list(tmp_path.glob("*.json")) == []
    assert library.query.model.returns("heronframe.read_table") == "heronframe.Table"


def test_a_damaged_surface_file_is_a_clear_error(setup, tmp_path):
    changes, _, _ = setup
    out = tmp_path / "r.sqlite"
    library = prepare_library(load_change_list(changes), out)
    (kept,) = _surface_files(out)
    kept.write_text('{"format": 1, "library": "heronframe"', encoding="utf-8")
    with pytest.raises(ValueError, match="damaged library surface file.*delete it"):
        prepare_library(load_change_list(changes), out).query  # noqa: B018
    assert library.digest


def test_source_digest_covers_exactly_what_the_builder_reads(setup, tmp_path):
    _, _, source = setup
    digest = source_digest(source, "heronframe")
    (source / "notes.txt").write_text("not a module\n", encoding="utf-8")
    assert source_digest(source, "heronframe") == digest
    (source / "extra.py").write_text("def more():\n    pass\n", encoding="utf-8")
    assert source_digest(source, "heronframe") != digest


def test_source_digest_never_opens_a_fifo(setup, tmp_path):
    """A FIFO named like a module blocks whoever opens it for reading (it waited forever before);
    the digest, like the builder, counts it without opening it."""
    _, _, source = setup
    digest = source_digest(source, "heronframe")
    os.mkfifo(source / "pipe.py")
    got: list[str] = []
    reader = threading.Thread(target=lambda: got.append(source_digest(source, "heronframe")), daemon=True)
    reader.start()
    reader.join(timeout=20)  # a blocked open fails the test instead of hanging the suite
    assert got and got[0] != digest  # returned, and sees the module


def test_library_module_keeps_no_state_between_scans():
    assert not [name for name, value in vars(library_module).items() if isinstance(value, (dict, list, set)) and not name.startswith("__")]


STUB_CHANGES = """\
[library]
name = "heronframe"
release = "3.0"

[[change]]
id = "HF-1"
member = "heronframe.Table.stack_rows"
kind = "removed"
"""


def _stubbed_library(tmp_path: Path) -> tuple[Path, Path]:
    """A source whose methods are untyped, and a PEP 561 stub package that types them but has
    dropped the deprecated `stack_rows` (as real stub packages do). Invented, fictional."""
    source = tmp_path / "lib" / "heronframe"
    source.mkdir(parents=True)
    (source / "__init__.py").write_text("from .core import Table\n", encoding="utf-8")
    (source / "core.py").write_text(
        "class Table:\n    def head(self):\n        return self._rows(5)\n    def stack_rows(self, other):\n        return self\n",
        encoding="utf-8",
    )
    stubs = tmp_path / "lib" / "heronframe-stubs"
    stubs.mkdir(parents=True)
    (stubs / "__init__.pyi").write_text("from .core import Table as Table\n", encoding="utf-8")
    (stubs / "core.pyi").write_text("class Table:\n    def head(self) -> Table: ...\n", encoding="utf-8")
    return source, stubs


def test_stubs_type_what_the_source_leaves_untyped_and_the_source_keeps_what_they_dropped(tmp_path: Path) -> None:
    source, stubs = _stubbed_library(tmp_path)
    changes = write_changes(tmp_path, STUB_CHANGES)
    corpus = tmp_path / "corpus"
    (corpus / "app").mkdir(parents=True)
    (corpus / "app" / "main.py").write_text(
        "import heronframe as hf\nt = hf.Table()\nt.head().stack_rows(1)\n", encoding="utf-8"
    )

    def level(out: Path, **options: object) -> str | None:
        run_scan(changes, [corpus], out, jobs=1, library_source=source, **options)
        store = ResultStore.open(out)
        try:
            return max((f.confidence.label for f in store.findings() if f.line == 3), default=None)
        finally:
            store.close()

    # The source alone does not say what head() returns; with the stubs it is a Table.
    assert level(tmp_path / "source.sqlite") != "resolved"
    assert level(tmp_path / "both.sqlite", library_stubs=stubs) == "resolved"
    # The stubs alone have no stack_rows: the change list is refused, naming the stubs.
    with pytest.raises(UnknownMemberError, match="stack_rows.*heronframe-stubs"):
        run_scan(changes, [corpus], tmp_path / "stubs.sqlite", jobs=1, library_stubs=stubs)


def test_the_surface_file_changes_with_the_stubs(tmp_path: Path) -> None:
    source, stubs = _stubbed_library(tmp_path)
    changes = load_change_list(write_changes(tmp_path, STUB_CHANGES))
    plain = library_digest(dataclasses.replace(changes, source=source))
    both = library_digest(dataclasses.replace(changes, source=source, stubs=stubs))
    assert plain == source_digest(source, "heronframe") and both != plain
    (stubs / "core.pyi").write_text("class Table:\n    def head(self) -> int: ...\n", encoding="utf-8")
    assert library_digest(dataclasses.replace(changes, source=source, stubs=stubs)) != both
