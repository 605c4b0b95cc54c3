"""Tests of corpus.names: archive names, top folders, member names, names shown to people."""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest

from impactscope.corpus.roots import archive_stem, discover

from .helpers import (
    LIB,
    SDIST_FILES,
    SDIST_LISTING,
    prefixed,
    projects,
    tar_members,
    write_tar,
    write_zip,
)


def test_archive_stem() -> None:
    assert archive_stem("repo-main.tar.gz") == "repo-main"
    assert archive_stem("x.TGZ") == "x"
    assert archive_stem("x.tar.bz2") == "x"
    assert archive_stem("x.zip") == "x"
    assert archive_stem("x.gz") is None
    assert archive_stem(".zip") is None


def test_sdist_paths_are_relative_to_its_top_folder_however_it_is_given(tmp_path: Path) -> None:
    folder = tmp_path / "sdists"
    folder.mkdir()
    tarred = write_tar(folder / "spkg-2.1.tar.gz", SDIST_FILES)
    zipped = write_zip(tmp_path / "spkg-2.1.zip", SDIST_FILES)
    assert projects(folder) == {"spkg-2.1": SDIST_LISTING}  # an sdist in a folder root
    assert projects(tarred, single=True) == {"spkg-2.1": SDIST_LISTING}
    assert projects(zipped, single=True) == {"spkg-2.1": SDIST_LISTING}
    # As a root without --single, the top folder is the one child, hence the one project.
    assert projects(tarred) == {"spkg-2.1": SDIST_LISTING}
    assert projects(zipped) == {"spkg-2.1": SDIST_LISTING}
    outer = write_tar(tmp_path / "outer.tar", {"spkg-2.1.tar.gz": tarred.read_bytes()}, "w")
    assert projects(outer) == {"spkg-2.1": SDIST_LISTING}


def test_top_folder_rule_edges(tmp_path: Path) -> None:
    # A member outside the top folder keeps its archive path.
    odd = write_tar(tmp_path / "spkg-2.1.tar.gz", {**SDIST_FILES, "stray.py": "x = 1\n"})
    assert projects(odd, single=True) == {"spkg-2.1": {**SDIST_LISTING, "stray.py": None}}
    # A stem that is an identifier may name a package folder, which must keep its path.
    package = {"mylib/__init__.py": "", "setup.py": ""}
    for archive in (write_zip(tmp_path / "mylib.zip", package), write_tar(tmp_path / "mylib.tgz", package)):
        assert projects(archive, single=True) == {"mylib": {"mylib/__init__.py": None, "setup.py": None}}
    # A top folder not named like the archive is kept.
    other = write_tar(tmp_path / "spkg-2.2.tar.gz", prefixed("elsewhere", {"a.py": ""}))
    assert projects(other, single=True) == {"spkg-2.2": {"elsewhere/a.py": None}}


@pytest.mark.skipif(os.fsencode("\udcff") != b"\xff", reason="needs bytes file names (POSIX)")
def test_undecodable_names_are_shown_escaped_and_never_alike(tmp_path: Path) -> None:
    root = tmp_path / "p"
    root.mkdir()
    for raw in (b"a\xff.py", b"a\xfe.py"):
        with open(os.path.join(os.fsencode(root), raw), "wb") as handle:
            handle.write(raw)
    tarred = tar_members(tmp_path / "t.tar", [("a\udcff.py", b"1"), ("a\udcfe.py", b"2")])
    for found in (root, tarred):
        (project,) = discover([found], single=True, library=LIB)
        got = {e.path: e.read() for e in project.entries()}  # tar: read while the stream is there
        assert got == {"a\\xff.py": b"a\xff.py" if found == root else b"1",
                       "a\\xfe.py": b"a\xfe.py" if found == root else b"2"}
        json.dumps(sorted(got)).encode("utf-8")  # reports can write them
