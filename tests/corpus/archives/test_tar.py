"""Tests of corpus.archives.tar: tar projects streamed once, within their bounds."""

from __future__ import annotations

import json
import random
from collections.abc import Iterator
from pathlib import Path

import pytest

from impactscope.corpus.roots import Entry, EntryError, Limits, discover

from ..helpers import (
    LIB,
    SDIST_FILES,
    _bytes,
    projects,
    tar_bytes,
    tar_members,
    write_tar,
    write_zip,
)


def test_truncated_tar_keeps_what_was_read(tmp_path: Path) -> None:
    noise = random.Random(1)
    files = {f"m{i}.py": noise.randbytes(20_000) for i in range(5)}  # incompressible
    data = tar_bytes(files)
    root = tmp_path / "corpus"
    root.mkdir()
    # Cut in the middle of m2's data (tarfile treats a cut between members as the end).
    (root / "cut.tar.gz").write_bytes(data[: len(data) // 2])
    (project,) = discover([root], library=LIB)
    entries = []
    for entry in project.entries():
        if entry.error is None:
            try:
                entry.read()
            except EntryError as exc:
                assert str(exc).startswith("corrupt archive: ")
        entries.append(entry)
    assert entries[0].path == "m0.py" and entries[0].error is None
    assert entries[-1].path == "cut.tar.gz" and entries[-1].error.startswith("corrupt archive: ")


def test_tar_entry_read_after_advance(tmp_path: Path) -> None:
    root = write_tar(tmp_path / "c.tgz", {"x.py": "1", "y.py": "2"})
    (project,) = discover([root], library=LIB, single=True)
    entries: Iterator[Entry] = project.entries()
    first, second = next(entries), next(entries)
    assert second.read() == b"2"
    with pytest.raises(EntryError):
        first.read()


def test_tar_member_can_be_read_again_while_the_stream_is_at_it(tmp_path: Path) -> None:
    # A scan reads setup.py as a manifest, then again as a source: both reads happen before the
    # iterator advances, and must give the same bytes.
    sdist = write_tar(tmp_path / "spkg-2.1.tar.gz", SDIST_FILES)
    (project,) = discover([sdist], library=LIB, single=True)
    seen = {}
    for entry in project.entries():
        if entry.skip is None:
            first = entry.read()
            assert entry.read() == first
            seen[entry.path] = first
    assert seen == {"setup.py": _bytes(SDIST_FILES["spkg-2.1/setup.py"]),
                    "spkg/__init__.py": b"import heronframe\n"}


def test_every_sdist_member_is_read_by_a_scan(tmp_path: Path) -> None:
    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\nrelease = "2.0"\n\n'
                       '[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    root = tmp_path / "corpus"
    root.mkdir()
    files = {**SDIST_FILES, "spkg-2.1/setup.py": "from setuptools import setup\n"
             "setup(name='spkg', install_requires=['heronframe<2'])\n"}
    write_tar(root / "spkg-2.1.tar.gz", files)
    write_zip(root / "spkg-2.1.zip", files)
    runner = CliRunner()
    out = tmp_path / "r.sqlite"
    scanned = runner.invoke(app, ["scan", str(changes), str(root), "--out", str(out), "--jobs", "1"])
    assert scanned.exit_code == 0, scanned.output
    report = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    assert report["totals"]["files"] == 6
    assert report["totals"]["files_unparsed"] == 0, report["file_reasons"]
    # setup.py was read twice, as a manifest and as a source, in the one pass over the tar.
    assert {p["project"]: p["constraint"] for p in report["projects"]} == {
        "spkg-2.1": "heronframe<2", "spkg-2.1@corpus": "heronframe<2"}


def test_a_compressed_tar_past_the_ratio_stops_there(tmp_path: Path) -> None:
    bomb = [("a.py", b"x = 1\n"), ("zeros.bin", bytes(8 << 20)), ("b.py", b"y = 2\n")]
    project = tar_members(tmp_path / "bomb.tar.gz", bomb, "w:gz")
    # zeros.bin's header is read before its data: the stream stops while passing over the data.
    assert projects(project, single=True) == {
        "bomb": {"a.py": None, "zeros.bin": "not source", "bomb.tar.gz": "compression ratio"}}
    assert projects(project, single=True, limits=Limits(ratio=10_000)) == {
        "bomb": {"a.py": None, "zeros.bin": "not source", "b.py": None}}
    root = tar_members(tmp_path / "root.tar.gz", [(f"p/{n}", d) for n, d in bomb], "w:gz")
    assert projects(root) == {
        "p": {"a.py": None, "zeros.bin": "not source", "root.tar.gz": "compression ratio"}}
