"""Fuzzing archives: member names, sizes, duplicates, undecodable names, archives in archives.

Every generated archive is scanned whole; the scan must finish without an exception, meet none
of its own faults ("analysis error", "worker died"), and account for every file member: a
project archive's file outcomes are exactly its members that are not folders (a duplicate is
kept under a suffix, an unsafe name is counted "unsafe path"), unless the members bound cut the
listing, which is then counted too.

Names are built from the pieces that broke scans before: `./`, backslashes, `..`, absolute
paths, empty segments, the same name twice, and bytes that are not UTF-8 (in a tar, through
surrogate escapes; in a zip, under the UTF-8 flag, which APPNOTE.TXT 4.4.4 bit 11 says the name
is encoded in).
"""

from __future__ import annotations

import io
import json
import tarfile
import tempfile
import warnings
import zipfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from impactscope.corpus.limits import Limits

from .helpers import USES, scan_root

# Small bounds, so that generated sizes and counts cross them cheaply.
LIMITS = Limits(file_bytes=400, members=12, ratio=50)
FUZZ = settings(max_examples=30, deadline=None, suppress_health_check=list(HealthCheck))

# "\u00ff" stands for a byte that is not UTF-8: a zip gets 0xff 0xff in its place (the same
# length as its UTF-8 form, so no offset moves); a tar gets "\udcff", written as the byte 0xff.
UNDECODABLE = "\u00ff"
NOTEBOOK = json.dumps({"nbformat": 4, "nbformat_minor": 5, "metadata": {}, "cells": [
    {"cell_type": "code", "metadata": {}, "execution_count": None, "outputs": [], "source": USES.decode()}
]}).encode()

segment = st.one_of(
    st.sampled_from(["pkg", "sub", "a.py", "mod.py", "nb.ipynb", "setup.py", "requirements.txt",
                     "README.md", f"x{UNDECODABLE}.py", ".", "..", "", "C:", "~2.py"]),
    st.text(alphabet="abcXYZ._-~ \u00e9\u4e2d", min_size=1, max_size=6),
)
name = st.builds(
    lambda lead, parts, seps: lead + "".join(p + s for p, s in zip(parts, seps))[:-1] if parts else lead,
    st.sampled_from(["", "", "", "./", "/", "\\", "../"]),
    st.lists(segment, min_size=1, max_size=4),
    st.lists(st.sampled_from(["/", "/", "/", "\\"]), min_size=5, max_size=5),
)
data = st.one_of(
    st.sampled_from([USES, b"x = 1\n", b"", NOTEBOOK, NOTEBOOK[:40], b"\xff\xfe\x00garbage",
                     b"import heronframe\n" + b"heronframe.stack()\n" * 40]),  # the last one is over file_bytes
    st.binary(max_size=64),
)
members = st.lists(st.tuples(name, data), max_size=14).flatmap(
    # Duplicates on purpose: some members again, under the very same name.
    lambda found: st.lists(st.sampled_from(found), max_size=3).map(lambda again: found + again) if found else st.just(found)
)


def _zip(entries: list[tuple[str, bytes]]) -> bytes:
    buffer = io.BytesIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # "Duplicate name": wanted here
        with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
            for member, content in entries:
                archive.writestr(zipfile.ZipInfo(member), content)
    raw = buffer.getvalue()
    for member, _ in entries:
        if UNDECODABLE in member:
            encoded = member.encode("utf-8")
            raw = raw.replace(encoded, encoded.replace(UNDECODABLE.encode("utf-8"), b"\xff\xff"))
    return raw


def _tar(entries: list[tuple[str, bytes]], mode: str) -> bytes:
    buffer = io.BytesIO()
    with tarfile.open(fileobj=buffer, mode=mode, encoding="utf-8", errors="surrogateescape",
                      format=tarfile.GNU_FORMAT) as archive:
        for member, content in entries:
            info = tarfile.TarInfo(member.replace(UNDECODABLE, "\udcff"))
            info.size = len(content)
            archive.addfile(info, io.BytesIO(content))
    return buffer.getvalue()


def _archive(form: str, entries: list[tuple[str, bytes]]) -> bytes:
    return _zip(entries) if form == "zip" else _tar(entries, "w:gz" if form == "tar.gz" else "w")


def _files(form: str, entries: list[tuple[str, bytes]]) -> int:
    """The members that are files: a zip member whose name ends in "/" is a folder (zipfile's own
    rule); tarfile writes every member here as a regular file."""
    return sum(1 for member, _ in entries if form != "zip" or not member.endswith("/"))


forms = st.sampled_from(["zip", "tar.gz", "tar"])


@FUZZ
@given(form=forms, entries=members)
def test_a_project_archive_accounts_for_every_member(form: str, entries: list[tuple[str, bytes]]) -> None:
    with tempfile.TemporaryDirectory(prefix="fuzz-archive-") as folder:
        root = Path(folder) / "corpus"
        root.mkdir()
        (root / f"proj.{form}").write_bytes(_archive(form, entries))
        (root / "other").mkdir()
        (root / "other" / "use.py").write_bytes(USES)
        scan = scan_root(root, limits=LIMITS)
    assert scan.bugs() == []
    projects = scan.by_project()
    assert [f.path for f in projects["other"]] == ["use.py"]
    outcomes = projects.get("proj", [])
    paths = [f.path for f in outcomes]
    assert len(paths) == len(set(paths))  # one row per file, however alike the names
    if form == "zip" and any(UNDECODABLE in member for member, _ in entries):
        # zipfile decodes a name under the UTF-8 flag strictly, while listing: the whole archive
        # is one "corrupt archive" entry (a known gap: its other members are not listed).
        assert [(f.path, f.reason) for f in outcomes] == [("proj.zip", "corrupt archive")]
        return
    expected = _files(form, entries)
    cut = any(f.reason == LIMITS.reason("members") for f in outcomes)
    if len(entries) <= LIMITS.members:
        assert len(outcomes) == expected and not cut
    else:
        assert cut or len(outcomes) == expected
    for outcome in outcomes:
        outcome.path.encode("utf-8")  # shown escaped, never as a lone surrogate


@FUZZ
@given(form=forms, entries=st.lists(st.tuples(st.sampled_from(["p", "q", "./p", "p\\sub", "q/./"]), st.tuples(name, data)),
                                     max_size=10))
def test_an_archive_root_finishes_with_unique_projects(form: str, entries: list[tuple[str, tuple[str, bytes]]]) -> None:
    """An archive root: projects by top folder, the same folder given again later and in other
    spellings (the phantom-project case of the issue)."""
    flat = [(f"{top}/{member}", content) for top, (member, content) in entries] + [("p/use.py", USES)]
    with tempfile.TemporaryDirectory(prefix="fuzz-root-") as folder:
        root = Path(folder) / f"root.{form}"
        root.write_bytes(_archive(form, flat))
        scan = scan_root(root, limits=Limits(file_bytes=400, ratio=50))
    assert scan.bugs() == []
    if form == "zip" and any(UNDECODABLE in member for member, _ in flat):
        assert [f.reason for f in scan.by_project()["root"]] == ["corrupt archive"]  # see the first test
        return
    names = [p for p in scan.by_project()]
    assert len(names) == len(set(names)) and "p" in names
    assert sum(len(v) for v in scan.by_project().values()) <= _files(form, flat)


@FUZZ
@given(inner=st.lists(st.tuples(forms, members), min_size=1, max_size=3), outer=st.sampled_from(["zip", "tar"]))
def test_archives_inside_an_archive_root_are_projects_each_accounted(
    inner: list[tuple[str, list[tuple[str, bytes]]]], outer: str
) -> None:
    """An archive root whose members are project archives (the deepest nesting read by default)."""
    flat = [(f"proj{index}.{form}", _archive(form, entries)) for index, (form, entries) in enumerate(inner)]
    with tempfile.TemporaryDirectory(prefix="fuzz-nested-") as folder:
        root = Path(folder) / f"root.{outer}"
        root.write_bytes(_archive(outer, flat))
        scan = scan_root(root, limits=Limits(file_bytes=400, ratio=50, members=12))
    assert scan.bugs() == []
    projects = scan.by_project()
    for index, (form, entries) in enumerate(inner):
        outcomes = projects.get(f"proj{index}", [])
        if form == "zip" and any(UNDECODABLE in member for member, _ in entries):
            assert [f.reason for f in outcomes] == ["corrupt archive"]  # as in the first test
        elif len(entries) <= 12:
            assert len(outcomes) == _files(form, entries), (form, entries)
