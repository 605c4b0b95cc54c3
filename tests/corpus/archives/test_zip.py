"""Tests of corpus.archives.zip: zip and wheel projects read in place, within their bounds."""

from __future__ import annotations

import dataclasses
import io
import struct
import zipfile
from pathlib import Path

import pytest

from impactscope.corpus.roots import EntryError, Limits, discover

from ..helpers import LIB, NOISE, WHEEL_NAME, projects, surveyed, tar_members, write_zip, zip_members


def test_zip_entries_can_be_read_after_listing(tmp_path: Path) -> None:
    inner = io.BytesIO()
    with zipfile.ZipFile(inner, "w") as archive:
        archive.writestr("n.py", "y = 2\n")
    root = write_zip(tmp_path / "corpus.zip", {"p/a.py": "x = 1\n", "q.zip": inner.getvalue()})
    (tmp_path / "dir").mkdir()
    write_zip(tmp_path / "dir" / "r.zip", {"b.py": "z = 3\n"})
    found = list(discover([root, tmp_path / "dir"], library=LIB))
    entries = [entry for project in found for entry in list(project.entries())]
    assert [entry.read() for entry in entries] == [b"x = 1\n", b"y = 2\n", b"z = 3\n"]


def test_zip_symlink_member(tmp_path: Path) -> None:
    path = tmp_path / "links.zip"
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr("a.py", "x = 1\n")
        for name, target in [("in.py", "a.py"), ("out.py", "../../x.py")]:
            info = zipfile.ZipInfo(name)
            info.external_attr = (0o120777 << 16)  # S_IFLNK, as Info-ZIP stores links
            archive.writestr(info, target)
    assert projects(path, single=True) == {"links": {"a.py": None, "in.py": "archive link",
                                                     "out.py": "link outside the corpus"}}


def test_encrypted_zip_member(tmp_path: Path) -> None:
    path = write_zip(tmp_path / "locked.zip", {"a.py": "x = 1\n"})
    data = bytearray(path.read_bytes())
    # Set the "encrypted" bit of the general purpose flags in the local and central headers.
    local, central = data.find(b"PK\x03\x04"), data.find(b"PK\x01\x02")
    data[local + 6] |= 1
    data[central + 8] |= 1
    path.write_bytes(bytes(data))
    with zipfile.ZipFile(path) as archive, pytest.raises(RuntimeError, match="password"):
        archive.read("a.py")  # reference: zipfile itself wants a password
    (entry,) = next(discover([path], single=True, library=LIB)).entries()
    assert entry.error == "encrypted archive member"


def test_corrupt_wheel_is_counted(tmp_path: Path) -> None:
    root = tmp_path / "wheels"
    root.mkdir()
    (root / WHEEL_NAME).write_bytes(NOISE)
    (listed,) = projects(root).values()
    ((path, reason),) = listed.items()
    assert path == WHEEL_NAME and reason is not None and reason.startswith("error: corrupt archive")


def lying_zip(path: Path, name: str, declared: int, real: int) -> Path:
    """A zip whose one deflated member says it unpacks to `declared` bytes but holds `real` zeros."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr(name, bytes(real))
    data = bytearray(buffer.getvalue())
    local, central = data.find(b"PK\x03\x04"), data.find(b"PK\x01\x02")
    # The uncompressed size fields of the local and central headers (APPNOTE.TXT 4.3.7, 4.3.12).
    struct.pack_into("<I", data, local + 22, declared)
    struct.pack_into("<I", data, central + 24, declared)
    path.write_bytes(bytes(data))
    return path


def test_a_zip_member_that_lies_about_its_size(tmp_path: Path) -> None:
    # Declared small: zipfile stops at the declared size and the CRC check fails.
    (entry,) = next(discover([lying_zip(tmp_path / "s.zip", "a.py", 100, 5_000_000)], single=True,
                             library=LIB)).entries()
    assert entry.skip is None
    with pytest.raises(EntryError, match="corrupt archive"):
        entry.read()
    # Declared huge (the 2 GB of the issue): refused before reading.
    (entry,) = next(discover([lying_zip(tmp_path / "h.zip", "n.ipynb", 3_000_000_000, 5_000_000)],
                             single=True, library=LIB)).entries()
    assert entry.skip == "notebook too large"
    # Declared within the size bound, but at a ratio no real member has: refused before reading.
    (entry,) = next(discover([lying_zip(tmp_path / "r.zip", "n.ipynb", 50_000_000, 5_000_000)],
                             single=True, library=LIB)).entries()
    assert entry.skip == "compression ratio" and "50000000" in entry.note
    # Declared truthfully within every bound but read under a tighter one: stopped while reading.
    (entry,) = next(discover([lying_zip(tmp_path / "t.zip", "n.ipynb", 5_000_000, 5_000_000)],
                             single=True, library=LIB, limits=Limits(ratio=10_000))).entries()
    assert entry.skip is None and len(entry.read()) == 5_000_000
    small = Limits(ratio=10_000)
    (entry,) = next(discover([tmp_path / "t.zip"], single=True, library=LIB,
                             limits=dataclasses.replace(small, notebook_bytes=4_000_000))).entries()
    assert entry.skip == "notebook too large"


def test_too_many_members(tmp_path: Path) -> None:
    members = [(f"p/m{i:02}.py", b"") for i in range(12)]
    limits = Limits(members=5)
    for path in (zip_members(tmp_path / "z.zip", members), tar_members(tmp_path / "t.tgz", members, "w:gz")):
        (project,) = discover([path], single=True, library=LIB, limits=limits)
        listed = {e.path: (e.skip, e.note) for e in project.entries()}
        assert len(listed) == 6
        assert listed[path.name][0] == "too many members" and "5" in listed[path.name][1]
        found, others = surveyed(path, limits=limits)
        if path.suffix == ".zip":  # cut before the projects are formed: the root says so
            assert len(found["p"]) == 5
            assert [item.reason.startswith("too many members") for item in others] == [True]
        else:  # met while streaming project p: p says so
            assert len(found["p"]) == 6 and found["p"]["t.tgz"] == "too many members"
            assert others == []


def zip64_ended(path: Path) -> Path:
    """Rewrite a small zip's end records in zip64 form, as writers do past 65535 members
    (APPNOTE.TXT 4.3.14 and 4.3.15: the zip64 record and its locator before the classic one,
    whose counts then say 0xFFFF)."""
    data = path.read_bytes()
    at = data.rfind(b"PK\x05\x06")
    _, _, _, _, count, size, offset, _ = struct.unpack_from("<4s4H2LH", data, at)
    end64 = struct.pack("<4sQ2H2L4Q", b"PK\x06\x06", 44, 45, 45, 0, 0, count, count, size, offset)
    locator = struct.pack("<4sLQL", b"PK\x06\x07", 0, at, 1)
    end = struct.pack("<4s4H2LH", b"PK\x05\x06", 0, 0, 0xFFFF, 0xFFFF, 0xFFFFFFFF, 0xFFFFFFFF, 0)
    path.write_bytes(data[:at] + end64 + locator + end)
    return path


@pytest.mark.parametrize("ending", ["classic", "zip64"])
def test_a_zip_central_directory_is_never_parsed_past_the_bound(tmp_path: Path, ending: str) -> None:
    # zipfile builds one ZipInfo per record; the cut hands it the first `members` records only.
    path = zip_members(tmp_path / "many.zip", [(f"f{i:03}.py", f"x = {i}\n".encode()) for i in range(300)])
    if ending == "zip64":
        path = zip64_ended(path)
        with zipfile.ZipFile(path) as archive:  # reference: zipfile reads the rewritten archive whole
            assert len(archive.infolist()) == 300
    (project,) = discover([path], single=True, library=LIB, limits=Limits(members=299))
    entries = list(project.entries())
    assert len(entries) == 300 and entries[-1].skip == "too many members"
    assert "first 299 members of the 300 the archive declares" in entries[-1].note
    assert entries[0].read() == b"x = 0\n" and entries[-2].read() == b"x = 298\n"
    # A launcher in front of the archive (a self-extracting zip) moves every offset alike.
    launched = tmp_path / "launched.zip"
    launched.write_bytes(b"#!launcher\n" * 100 + path.read_bytes())
    (project,) = discover([launched], single=True, library=LIB, limits=Limits(members=10))
    entries = list(project.entries())
    assert len(entries) == 11 and entries[9].read() == b"x = 9\n"
    # The central directory's bytes count too: long names use up a member's share sooner.
    long = zip_members(tmp_path / "long.zip", [(f"{'d' * 2000}/f{i}.py", b"") for i in range(20)])
    (project,) = discover([long], single=True, library=LIB, limits=Limits(members=15))
    assert len(list(project.entries())) < 15



def test_a_renamed_duplicate_keeps_its_declared_ratio(tmp_path: Path) -> None:
    """Two members with one path: the second is listed as `n~2.ipynb`, and what its own header
    declares (a ratio no real member has) still refuses it before it is read."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("n.ipynb", "{}")
        with pytest.warns(UserWarning, match="Duplicate name"):
            archive.writestr("n.ipynb", bytes(5_000_000))
    data = bytearray(buffer.getvalue())
    # The second member's uncompressed size fields (APPNOTE.TXT 4.3.7, 4.3.12) say 50,000,000.
    local = data.find(b"PK\x03\x04", data.find(b"PK\x03\x04") + 1)
    central = data.find(b"PK\x01\x02", data.find(b"PK\x01\x02") + 1)
    struct.pack_into("<I", data, local + 22, 50_000_000)
    struct.pack_into("<I", data, central + 24, 50_000_000)
    (tmp_path / "d.zip").write_bytes(bytes(data))
    entries = {e.path: e for e in next(discover([tmp_path / "d.zip"], single=True, library=LIB)).entries()}
    assert entries["n.ipynb"].skip is None
    assert entries["n~2.ipynb"].skip == "compression ratio" and "50000000" in entries["n~2.ipynb"].note
