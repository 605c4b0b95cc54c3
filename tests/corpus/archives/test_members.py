"""Tests of corpus.archives.members: unsafe member names and links in archives."""

from __future__ import annotations

import io
import tarfile
from pathlib import Path

from ..helpers import projects, write_tar, write_zip


def test_unsafe_member_paths(tmp_path: Path) -> None:
    members = {"ok.py": "", "../evil.py": "", "/abs/evil.py": "", "a/../../evil.py": "", "C:/evil.py": ""}
    expected = {"ok.py": None, "../evil.py": "unsafe path", "/abs/evil.py": "unsafe path",
                "a/../../evil.py": "unsafe path", "C:/evil.py": "unsafe path"}
    zipped = write_zip(tmp_path / "z.zip", members)
    tarred = write_tar(tmp_path / "t.tar", members, "w")
    got = projects(zipped, tarred, single=True)
    assert got["z"] == expected
    assert got["t"] == expected


def test_tar_links(tmp_path: Path) -> None:
    buffer = io.BytesIO()
    with tarfile.open(fileobj=buffer, mode="w") as archive:
        data = b"x = 1\n"
        info = tarfile.TarInfo("pkg/a.py")
        info.size = len(data)
        archive.addfile(info, io.BytesIO(data))
        for name, target, kind in [("pkg/b.py", "a.py", tarfile.SYMTYPE),
                                   ("pkg/c.py", "../../etc/passwd", tarfile.SYMTYPE),
                                   ("pkg/d.py", "pkg/a.py", tarfile.LNKTYPE),
                                   ("pkg/e.py", "/etc/passwd", tarfile.SYMTYPE)]:
            link = tarfile.TarInfo(name)
            link.type, link.linkname = kind, target
            archive.addfile(link)
    path = tmp_path / "links.tar"
    path.write_bytes(buffer.getvalue())
    assert projects(path, single=True) == {"links": {
        "pkg/a.py": None, "pkg/b.py": "archive link", "pkg/c.py": "link outside the corpus",
        "pkg/d.py": "archive link", "pkg/e.py": "link outside the corpus"}}
