"""Tests of corpus.folders: folder projects, links and special files in them."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from impactscope.corpus.roots import EntryError, Limits, discover

from .helpers import LIB, listing, projects, write_tree


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symlinks")
def test_symlinks_in_folders(tmp_path: Path) -> None:
    outside = write_tree(tmp_path / "outside", {"secret.py": "s = 1\n", "dir/x.py": ""})
    root = tmp_path / "corpus"
    project = write_tree(root / "p", {"real/a.py": "a = 1\n"})
    (project / "out.py").symlink_to(outside / "secret.py")
    (project / "outdir").symlink_to(outside / "dir")
    (project / "alias.py").symlink_to(project / "real" / "a.py")
    (project / "realdir").symlink_to(project / "real")
    (project / "dangling.py").symlink_to(project / "missing.py")
    (root / "linked").symlink_to(outside)
    found = {p.name: p for p in discover([root], library=LIB)}
    assert sorted(found) == ["linked", "p"]
    assert listing(found["linked"]) == {"linked": "link outside the corpus"}
    got = {e.path: e for e in found["p"].entries()}
    assert sorted(got) == ["alias.py", "dangling.py", "out.py", "outdir", "real/a.py"]
    assert got["out.py"].skip == "link outside the corpus" and got["outdir"].skip == "link outside the corpus"
    assert got["alias.py"].skip is None and got["alias.py"].read() == b"a = 1\n"
    assert got["dangling.py"].error == "broken link"
    with pytest.raises(EntryError):
        got["out.py"].read()


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_special_files_are_counted_never_opened(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "p", {"a.py": ""})
    os.mkfifo(root / "pipe.py")  # opening it would block
    (root / "pipe-link.py").symlink_to(root / "pipe.py")
    assert projects(root, single=True) == {"p": {"a.py": None, "pipe.py": "special file",
                                                 "pipe-link.py": "special file"}}


def test_a_file_that_grows_after_listing_is_cut_while_reading(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "p", {"a.py": "x = 1\n"})
    (project,) = discover([root], single=True, library=LIB, limits=Limits(file_bytes=100))
    (entry,) = project.entries()
    (root / "a.py").write_bytes(b"#" * 1000)
    with pytest.raises(EntryError) as caught:
        entry.read()
    assert caught.value.reason == "too large"
