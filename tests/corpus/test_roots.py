"""Tests of corpus.roots: projects found in folder, zip and tar roots; what is not a project."""

from __future__ import annotations

import io
import os
import pickle
import tarfile
import warnings
import zipfile
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from impactscope.corpus.roots import (
    CorpusError,
    Entry,
    EntryError,
    Limits,
    NotAProject,
    Project,
    archive_stem,
    check_roots,
    discover,
    survey,
)
from impactscope.corpus.names import member_parts

from .helpers import (
    EXPECTED_SKIPS,
    LIB,
    NOISE,
    PROJECT,
    WHEEL_FILES,
    WHEEL_LISTING,
    WHEEL_NAME,
    _bytes,
    listing,
    prefixed,
    projects,
    snapshot,
    surveyed,
    tar_bytes,
    tar_members,
    write_tar,
    write_tree,
    write_zip,
    zip_members,
)


def test_directory_root_projects(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    write_tree(root / "beta", PROJECT)
    write_tree(root, {"loose.py": "import heronframe\n", "notes.txt": "not a project",
                      ".hidden/x.py": "", ".secret.py": "", "alpha/empty.py": ""})
    write_zip(root / "gamma.zip", PROJECT)
    write_tar(root / "delta.tar.gz", PROJECT)
    found = list(discover([root], library=LIB))
    assert [p.name for p in found] == ["alpha", "beta", "delta", "gamma", "loose.py"]
    assert found[0].origin == os.path.join(str(root), "alpha")
    got = {p.name: listing(p) for p in found}
    assert got["alpha"] == {"empty.py": None}
    assert got["loose.py"] == {"loose.py": None}
    for name in ("beta", "gamma", "delta"):
        assert got[name] == EXPECTED_SKIPS, name


@pytest.mark.parametrize("mode, suffix", [("w", ".tar"), ("w:gz", ".tar.gz"), ("w:gz", ".tgz"),
                                          ("w:bz2", ".tar.bz2"), ("w:xz", ".tar.xz")])
def test_tar_roots(tmp_path: Path, mode: str, suffix: str) -> None:
    files = {**prefixed("one", PROJECT), **prefixed("two", {"b.py": "", "a.py": ""}),
             "top.py": "x = 1\n", "readme.txt": "", ".hidden/x.py": ""}
    root = write_tar(tmp_path / f"corpus{suffix}", files, mode)
    # A tar root is streamed once: each project is listed before discovery moves on.
    found = [(p.name, p.origin, listing(p)) for p in discover([root], library=LIB)]
    assert [origin for _, origin, _ in found] == [f"{root}!one", f"{root}!two", f"{root}!top.py"]
    got = {name: entries for name, _, entries in found}
    assert got == {"one": EXPECTED_SKIPS, "two": {"b.py": None, "a.py": None}, "top.py": {"top.py": None}}
    # tar entries come in archive order (a single streaming pass)
    assert list(got["two"]) == ["b.py", "a.py"]


def test_zip_root(tmp_path: Path) -> None:
    files = {**prefixed("zeta", PROJECT), **prefixed("eta", {"b.py": "", "a.py": ""}),
             "top.ipynb": "{}", "LICENSE": "", "__init__.txt": "", ".DS_Store": ""}
    root = write_zip(tmp_path / "corpus.zip", files)
    found = list(discover([root], library=LIB))
    assert [p.name for p in found] == ["eta", "top.ipynb", "zeta"]
    assert found[0].origin == f"{root}!eta"
    got = {p.name: listing(p) for p in found}
    assert got["zeta"] == EXPECTED_SKIPS
    assert list(got["eta"]) == ["a.py", "b.py"]  # zip entries are sorted
    assert got["top.ipynb"] == {"top.ipynb": None}


def test_single_roots(tmp_path: Path) -> None:
    folder = write_tree(tmp_path / "myrepo", PROJECT)
    zipped = write_zip(tmp_path / "zipped-main.zip", PROJECT)
    tarred = write_tar(tmp_path / "tarred.tar.xz", PROJECT, "w:xz")
    got = projects(folder, zipped, tarred, single=True)
    assert list(got) == ["myrepo", "zipped-main", "tarred"]
    assert all(listing == EXPECTED_SKIPS for listing in got.values())


def test_nested_archives_in_archive_roots(tmp_path: Path) -> None:
    inner_zip = io.BytesIO()
    with zipfile.ZipFile(inner_zip, "w") as archive:
        archive.writestr("a.py", "import heronframe\n")
    inner_tar = tar_bytes({"b.py": "import heronframe\n"})
    members = {"pz.zip": inner_zip.getvalue(), "pt.tar.gz": inner_tar}
    expected = {"pt": {"b.py": None}, "pz": {"a.py": None}}
    assert projects(write_zip(tmp_path / "outer.zip", members)) == expected
    assert projects(write_tar(tmp_path / "outer.tgz", members)) == expected


def test_duplicate_names_across_roots(tmp_path: Path) -> None:
    first = write_tree(tmp_path / "first", {"proj/a.py": "", "proj.zip/x": ""})
    second = write_tree(tmp_path / "second", {"proj/b.py": ""})
    third = write_zip(tmp_path / "second.zip", {"proj/c.py": ""})
    names = [p.name for p in discover([first, second, third], library=LIB)]
    assert names == ["proj", "proj.zip", "proj@second", "proj@second-2"]


def test_deterministic_order(tmp_path: Path) -> None:
    files = {f"d{i % 3}/m{i}.py": "" for i in range(30)}
    root = tmp_path / "corpus"
    write_tree(root / "p", files)
    write_zip(root / "q.zip", files)
    first = [(p.name, [e.path for e in p.entries()]) for p in discover([root], library=LIB)]
    second = [(p.name, [e.path for e in p.entries()]) for p in discover([root], library=LIB)]
    assert first == second
    for _, paths in first:
        assert paths == sorted(files)


def test_reading_archives_writes_nothing(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    root.mkdir()
    write_zip(root / "z.zip", PROJECT)
    write_tar(root / "t.tar.gz", PROJECT)
    write_zip(tmp_path / "zroot.zip", prefixed("p", PROJECT))
    write_tar(tmp_path / "troot.tar.bz2", prefixed("p", PROJECT), "w:bz2")
    before = snapshot(tmp_path)
    for project in discover([root, tmp_path / "zroot.zip", tmp_path / "troot.tar.bz2"], library=LIB):
        for entry in project.entries():
            entry.read()
    assert snapshot(tmp_path) == before


def test_missing_root(tmp_path: Path) -> None:
    missing = tmp_path / "nope"
    with pytest.raises(CorpusError, match="does not exist") as caught:
        check_roots([missing])
    assert str(missing) in str(caught.value) and ".zip" in str(caught.value)
    with pytest.raises(CorpusError):
        list(discover([missing], library=LIB))
    assert isinstance(caught.value, ValueError)


def test_root_that_is_not_an_archive(tmp_path: Path) -> None:
    loose = write_tree(tmp_path, {"script.py": ""}) / "script.py"
    with pytest.raises(CorpusError, match="neither a directory nor a known archive"):
        check_roots([loose])


def test_no_roots() -> None:
    with pytest.raises(CorpusError, match="no corpus root"):
        check_roots([])


def _assert_corrupt(project: Project, archive_name: str) -> None:
    (entry,) = list(project.entries())
    assert entry.path == archive_name
    assert entry.error is not None and entry.error.startswith("corrupt archive: ")
    with pytest.raises(EntryError):
        entry.read()


def test_corrupt_project_archives_do_not_stop_discovery(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    root.mkdir()
    (root / "random.zip").write_bytes(NOISE)
    whole = write_zip(tmp_path / "whole.zip", PROJECT).read_bytes()
    (root / "truncated.zip").write_bytes(whole[: len(whole) // 2])
    (root / "random.tar.gz").write_bytes(NOISE)
    write_tree(root / "zz_ok", {"a.py": ""})
    found = {p.name: p for p in discover([root], library=LIB)}
    # random.tar.gz sorts first and keeps the name; random.zip gets the root's name appended.
    assert list(found) == ["random", "random@corpus", "truncated", "zz_ok"]
    _assert_corrupt(found["truncated"], "truncated.zip")
    _assert_corrupt(found["random@corpus"], "random.zip")
    _assert_corrupt(found["random"], "random.tar.gz")
    assert listing(found["zz_ok"]) == {"a.py": None}


@pytest.mark.parametrize("name", ["broken.zip", "broken.tar.gz"])
def test_corrupt_archive_root(tmp_path: Path, name: str) -> None:
    (tmp_path / name).write_bytes(b"this is not an archive" * 10)
    after = write_tree(tmp_path / "after", {"p/a.py": ""})
    found = list(discover([tmp_path / name, after], library=LIB))
    assert [p.name for p in found] == ["broken", "p"]
    _assert_corrupt(found[0], name)


def test_unsafe_members_in_archive_root(tmp_path: Path) -> None:
    members = {"p/ok.py": "", "p/../../evil.py": "", "../evil.py": ""}
    got = projects(write_zip(tmp_path / "z.zip", members))
    assert got == {"p": {"ok.py": None, "../../evil.py": "unsafe path"}}


def test_tar_root_projects_must_be_read_in_turn(tmp_path: Path) -> None:
    root = write_tar(tmp_path / "c.tgz", {"a/x.py": "1", "a/y.py": "2", "b/z.py": "3"})
    walk = discover([root], library=LIB)
    first = next(walk)
    entry = next(iter(first.entries()))
    assert entry.read() == b"1"
    second = next(walk)  # skips a/y.py unread
    assert listing(second) == {"z.py": None}
    with pytest.raises(EntryError, match="before advancing discover"):
        list(first.entries())


def test_projects_survive_pickling(tmp_path: Path) -> None:
    # Projects of a directory root travel to worker processes and must list the same there.
    # (Projects of archive roots share the root's open archive or stream, so they do not.)
    root = tmp_path / "corpus"
    write_tree(root / "f", {"a.py": "x = 1\n"})
    write_zip(root / "z.zip", {"a.py": "x = 2\n"})
    write_tar(root / "t.tgz", {"a.py": "x = 3\n"})
    write_tree(root, {"loose.py": "x = 4\n"})
    (root / "bad.zip").write_bytes(NOISE)
    for project in discover([root], library=LIB):
        copy = pickle.loads(pickle.dumps(project))
        assert (copy.name, copy.origin) == (project.name, project.origin)
        mine = [(e.path, e.skip, e.error, None if e.error else e.read()) for e in project.entries()]
        theirs = [(e.path, e.skip, e.error, None if e.error else e.read()) for e in copy.entries()]
        assert mine == theirs


def test_root_level_items_that_are_not_projects_are_reported(tmp_path: Path) -> None:
    # Nothing is dropped silently: what a root holds besides projects is listed with a reason.
    root = tmp_path / "root"
    (root / "proj").mkdir(parents=True)
    (root / "proj" / "a.py").write_text("x = 1\n")
    (root / "NOTES.md").write_text("notes\n")
    (root / ".hidden").mkdir()
    archive = tmp_path / "bundle.zip"
    with zipfile.ZipFile(archive, "w") as zf:
        zf.writestr("p/a.py", "x = 1\n")
        zf.writestr("../escape.py", "x = 1\n")
        zf.writestr("readme.txt", "hi\n")
    items = list(survey([root, archive], library="heronframe"))
    assert [i.name for i in items if isinstance(i, Project)] == ["proj", "p"]
    reasons = {os.path.basename(i.where.split("!")[-1]): i.reason for i in items if isinstance(i, NotAProject)}
    assert reasons["NOTES.md"].startswith("not a project")
    assert reasons[".hidden"] == "hidden"
    assert reasons["escape.py"] == "unsafe path"
    assert reasons["readme.txt"].startswith("not a project")


def test_survey_returns_what_is_not_a_project_as_values(tmp_path: Path) -> None:
    # survey() hands out both kinds in root order; discover() is its projects.
    root = tmp_path / "root"
    (root / "b").mkdir(parents=True)
    (root / "b" / "a.py").write_text("x = 1\n")
    (root / "NOTES.md").write_text("notes\n")
    tar = write_tar(tmp_path / "t.tar", {"q/a.py": "x = 1\n", ".cache/x.py": "", "r.txt": ""}, "w")
    items = list(survey([root, tar], library=LIB))
    shown = [(type(i).__name__, i.name if isinstance(i, Project) else os.path.relpath(i.where, tmp_path))
             for i in items]
    # A folder root lists its children in name order; a tar root in archive order.
    assert shown == [("NotAProject", "root/NOTES.md"), ("Project", "b"), ("Project", "q"),
                     ("NotAProject", "t.tar!.cache/x.py"), ("NotAProject", "t.tar!r.txt")]
    assert all(i.reason for i in items if isinstance(i, NotAProject))
    assert [p.name for p in discover([root, tar], library=LIB)] == ["b", "q"]


def test_wheels_in_a_folder_are_projects(tmp_path: Path) -> None:
    root = tmp_path / "wheels"
    root.mkdir()
    write_zip(root / WHEEL_NAME, WHEEL_FILES)
    write_zip(root / "other-0.1-py2.py3-none-any.whl", {"other.py": "x = 1\n"})
    found = list(survey([root], library=LIB))
    assert all(isinstance(p, Project) for p in found)
    assert [p.name for p in found] == ["other-0.1-py2.py3-none-any", "wpkg-1.0-py3-none-any"]
    assert listing(found[1]) == WHEEL_LISTING
    assert found[1].origin == str(root / WHEEL_NAME)


@pytest.mark.parametrize("single", [False, True])
def test_a_wheel_given_as_a_root_is_one_project(tmp_path: Path, single: bool) -> None:
    wheel = write_zip(tmp_path / WHEEL_NAME, WHEEL_FILES)
    check_roots([wheel])
    assert projects(wheel, single=single) == {"wpkg-1.0-py3-none-any": WHEEL_LISTING}


def test_wheels_inside_archive_roots(tmp_path: Path) -> None:
    inner = io.BytesIO()
    with zipfile.ZipFile(inner, "w") as archive:
        for name, content in WHEEL_FILES.items():
            archive.writestr(name, _bytes(content))
    members = {WHEEL_NAME: inner.getvalue()}
    expected = {"wpkg-1.0-py3-none-any": WHEEL_LISTING}
    assert projects(write_zip(tmp_path / "outer.zip", members)) == expected
    assert projects(write_tar(tmp_path / "outer.tar.gz", members)) == expected


def test_a_project_folder_that_is_also_a_file_member(tmp_path: Path) -> None:
    # A top-level file and members under the same name: one folder project, nothing dropped.
    members = [("a.py", b"x = 1\n"), ("a.py/b.py", b"y = 2\n"), ("c/d.py", b"")]
    expected = {"a.py": {"a.py": None, "b.py": None}, "c": {"d.py": None}}
    assert projects(zip_members(tmp_path / "r.zip", members)) == expected
    assert projects(tar_members(tmp_path / "r.tar", members)) == expected


@pytest.mark.parametrize("members", [
    # The project folder appears again as a member of its own, after another project's members.
    [("proj/a.py", "f"), ("other/b.py", "f"), ("proj", "d")],
    [("proj/a.py", "f"), ("other/b.py", "f"), ("proj/c.py", "f")],
    [("proj/a.py", "f"), (".hidden", "f"), ("proj/c.py", "f"), ("other/b.py", "f"), ("./proj/", "d")],
    [(".", "d"), ("./proj", "d"), ("./proj/a.py", "f"), ("other/b.py", "f"), ("./proj/c.py", "f")],
])
def test_a_tar_root_never_makes_a_phantom_project(tmp_path: Path, members: list[tuple[str, str]]) -> None:
    path = tmp_path / "root.tar.gz"
    with tarfile.open(path, "w:gz") as archive:
        for name, kind in members:
            info = tarfile.TarInfo(name)
            if kind == "d":
                info.type = tarfile.DIRTYPE
                archive.addfile(info)
            else:
                info.size = 2
                archive.addfile(info, io.BytesIO(b"x\n"))
    files = {name.removeprefix("./") for name, kind in members if kind == "f" and not name.startswith(".h")}
    found, others = surveyed(path)
    assert set(found) == {"proj", "other"}  # no proj@root
    assert {f"{name}/{file}" for name, listed in found.items() for file in listed} == files
    assert all(item.reason == "hidden" for item in others)


def test_scattered_tar_projects_are_held_within_the_archive_bound(tmp_path: Path) -> None:
    members = [("p/a.py", b"a" * 100), ("q/x.py", b""), ("p/b.py", b"b" * 100), ("p/c.py", b"c" * 10)]
    path = tar_members(tmp_path / "r.tar", members)
    # q streams at its place; p, scattered, comes once its last member has passed.
    assert [(p.name, listing(p)) for p in discover([path], library=LIB, limits=Limits(archive_bytes=150))] == [
        ("q", {"x.py": None}), ("p", {"a.py": None, "b.py": "archive too large", "c.py": None})]


def test_projects_carry_their_limits(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "c", {"p/a.py": ""})
    limits = Limits(file_bytes=10)
    assert [p.limits for p in discover([root], library=LIB, limits=limits)] == [limits]
    assert [p.limits for p in discover([root], library=LIB)] == [Limits()]


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symlinks")
def test_links_to_other_projects_and_loops(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "corpus", {"p/a.py": "x = 1\n", "q/b.py": "y = 2\n"})
    (root / "p" / "to_q.py").symlink_to(root / "q" / "b.py")
    (root / "p" / "self").symlink_to(root / "p")  # a folder loop: not walked
    (root / "p" / "l1.py").symlink_to(root / "p" / "l2.py")
    (root / "p" / "l2.py").symlink_to(root / "p" / "l1.py")
    got = projects(root)
    assert got["p"] == {"a.py": None, "to_q.py": "link outside the project",
                        "l1.py": "error: broken link", "l2.py": "error: broken link"}


# Member names from the parts hostile archives use: dot segments, backslashes, drive letters,
# empty segments (leading or doubled slashes), hidden folders, names that differ only by them.
_SEGMENT = st.sampled_from(["a.py", "b.ipynb", "pkg", "__init__.py", ".", "..", "", ".git", "venv",
                            "x\\y.py", "C:", "é.py", "a~2.py", "inner.zip", "inner.tar.gz", LIB])


_NAME = st.one_of(st.lists(_SEGMENT, min_size=1, max_size=4).map("/".join), st.text(max_size=12))


_KIND = st.sampled_from(["file", "file", "file", "dir", "link", "fifo"])


_DATA = st.sampled_from([b"", b"import heronframe\nheronframe.stack()\n", b"\xff\xfe", b"{}"])


_TARGET = st.sampled_from(["a.py", "../../etc/passwd", "/abs", "pkg/a.py", ""])


_MEMBERS = st.lists(st.tuples(_NAME, _KIND, _DATA, _TARGET), max_size=12)


_FORMAT = st.sampled_from(["zip", "tar", "tar.gz", "tar.bz2", "tar.xz"])


def _archive_bytes(members: list[tuple[str, str, bytes, str]], form: str, inner: bytes | None) -> bytes:
    """An archive of `members`; a member named like an archive holds `inner` (one level down)."""
    buffer = io.BytesIO()
    if form == "zip":
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)  # duplicate names, on purpose
            with zipfile.ZipFile(buffer, "w") as archive:
                for name, kind, data, target in members:
                    if kind == "dir":
                        archive.writestr(zipfile.ZipInfo(name.rstrip("/") + "/"), b"")
                        continue
                    info = zipfile.ZipInfo(name)
                    if kind == "link":
                        info.external_attr = 0o120777 << 16  # S_IFLNK, as Info-ZIP stores links
                        data = target.encode()
                    elif inner is not None and archive_stem(name) is not None:
                        data = inner
                    archive.writestr(info, data)
        return buffer.getvalue()
    mode = "w" if form == "tar" else f"w:{form.rpartition('.')[2]}"
    with tarfile.open(fileobj=buffer, mode=mode) as archive:
        for name, kind, data, target in members:
            info = tarfile.TarInfo(name)
            if kind in ("dir", "link", "fifo"):
                info.type = {"dir": tarfile.DIRTYPE, "link": tarfile.SYMTYPE, "fifo": tarfile.FIFOTYPE}[kind]
                info.linkname = target
                archive.addfile(info)
                continue
            if inner is not None and archive_stem(name) is not None:
                data = inner
            info.size = len(data)
            archive.addfile(info, io.BytesIO(data))
    return buffer.getvalue()


def _reference_members(path: Path) -> list[bool]:
    """Whether each member, in archive order, is a directory, as the standard library sees it."""
    if path.suffix == ".zip":
        with zipfile.ZipFile(path) as archive:
            return [info.filename.endswith("/") for info in archive.infolist()]  # is_dir fails on ''
    with tarfile.open(path) as archive:
        return [info.isdir() for info in archive.getmembers()]


def _drain(found: Iterator[Project | NotAProject]) -> tuple[dict[str, list[Entry]], list[NotAProject]]:
    """Every project's entries, each read while it is current, as a scan does; and the items
    that are not projects."""
    listed: dict[str, list[Entry]] = {}
    others: list[NotAProject] = []
    for project in found:
        if isinstance(project, NotAProject):
            others.append(project)
            continue
        entries = []
        for entry in project.entries():
            try:
                assert isinstance(entry.read(), bytes)
            except EntryError:
                pass
            entries.append(entry)
        paths = [entry.path for entry in entries]
        assert len(paths) == len(set(paths)), paths  # paths unique within a project
        assert project.name not in listed
        listed[project.name] = entries
    return listed, others


@settings(max_examples=120, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
@given(members=_MEMBERS, inner=st.none() | _MEMBERS, form=_FORMAT, inner_form=_FORMAT,
       cap=st.integers(min_value=1, max_value=15))
def test_fuzzed_archives_are_read_whole_and_every_member_is_accounted(
    tmp_path_factory: pytest.TempPathFactory,
    members: list[tuple[str, str, bytes, str]],
    inner: list[tuple[str, str, bytes, str]] | None,
    form: str,
    inner_form: str,
    cap: int,
) -> None:
    base = tmp_path_factory.mktemp("fuzz")
    nested = None if inner is None else _archive_bytes(inner, inner_form, None)
    path = base / f"case.{form}"
    path.write_bytes(_archive_bytes(members, form, nested))
    limits = Limits(members=cap)
    is_dir = _reference_members(path)
    # As one project: each file member of the first `cap` is one entry, and one more entry
    # stands for the members past the bound.
    (listed,) = _drain(survey([path], single=True, library=LIB, limits=limits))[0].values()
    expected = is_dir[:cap].count(False) + (len(is_dir) > cap)
    assert len(listed) == expected, [(e.path, e.skip, e.error) for e in listed]
    # As a root of projects: nothing crashes, names and paths stay unique, nothing is lost.
    projects_found, others = _drain(survey([path], library=LIB, limits=limits))
    accounted = sum(map(len, projects_found.values())) + len(others)
    tops = sum(1 for name, kind, _, _ in members[:cap]
               if kind != "dir" and archive_stem(name) is not None and member_parts(name) == (name,))
    assert accounted >= is_dir[:cap].count(False) - tops


@settings(max_examples=150, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
@given(members=_MEMBERS, form=_FORMAT, data=st.data(), single=st.booleans())
def test_fuzzed_damaged_archives_never_raise(
    tmp_path_factory: pytest.TempPathFactory,
    members: list[tuple[str, str, bytes, str]],
    form: str,
    data: st.DataObject,
    single: bool,
) -> None:
    raw = bytearray(_archive_bytes(members, form, _archive_bytes(members[:3], "zip", None)))
    cut = data.draw(st.integers(min_value=0, max_value=len(raw)), label="cut")
    flips = data.draw(st.lists(st.tuples(st.integers(0, max(len(raw) - 1, 0)), st.integers(0, 255)), max_size=6))
    for at, value in flips:
        if raw:
            raw[at] = value
    path = tmp_path_factory.mktemp("damaged") / f"case.{form}"
    path.write_bytes(bytes(raw[:cut] if data.draw(st.booleans(), label="truncate") else raw))
    _drain(survey([path], single=single, library=LIB, limits=Limits(members=8)))
