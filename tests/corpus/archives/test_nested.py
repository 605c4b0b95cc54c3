"""Tests of corpus.archives.nested: archives inside archive roots."""

from __future__ import annotations

import io
import zipfile
from pathlib import Path

from impactscope.corpus.roots import Limits

from ..helpers import projects, tar_bytes, write_zip


def test_nested_zip_over_the_memory_limit(tmp_path: Path) -> None:
    inner = io.BytesIO()
    with zipfile.ZipFile(inner, "w") as archive:
        archive.writestr("a.py", "x = 1\n")
    root = write_zip(tmp_path / "outer.zip", {"big.zip": inner.getvalue()})
    assert projects(root, limits=Limits(archive_bytes=10)) == {"big": {"big.zip": "archive too large"}}
    assert projects(root) == {"big": {"a.py": None}}


def test_nesting_depth(tmp_path: Path) -> None:
    inner = tar_bytes({"a.py": "x = 1\n"})
    root = write_zip(tmp_path / "outer.zip", {"inner.tar.gz": inner})
    assert projects(root) == {"inner": {"a.py": None}}
    assert projects(root, limits=Limits(depth=1)) == {"inner": {"inner.tar.gz": "nested too deep"}}
    # An archive inside a project is a file, whatever the depth allows.
    assert projects(write_zip(tmp_path / "deep.zip", {"p/inner.tar.gz": inner})) == {
        "p": {"inner.tar.gz": "not source"}}
