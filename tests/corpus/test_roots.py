from __future__ import annotations

import dataclasses
import io
import json
import os
import pickle
import random
import struct
import tarfile
import warnings
import zipfile
from collections.abc import Iterator, Mapping
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from impactscope.corpus.roots import (
    MAX_FILE_SIZE,
    CorpusError,
    Entry,
    EntryError,
    Limits,
    Project,
    archive_stem,
    check_roots,
    classify,
    discover,
)
from impactscope.corpus.roots import _member_parts

LIB = "heronframe"
NOISE = random.Random(0).randbytes(300)  # not any archive format (fixed seed: no gzip magic)
Files = Mapping[str, bytes | str]

# A small project that exercises most classification rules at once.
PROJECT: dict[str, bytes | str] = {
    "app/main.py": "import heronframe\n",
    "app/analysis.ipynb": "{}",
    "README.md": "# readme\n",
    ".git/config": "[core]\n",
    "app/__pycache__/main.cpython-311.pyc": b"\x00\x01",
    "node_modules/pkg/index.py": "x = 1\n",
    "heronframe/__init__.py": "",
    "heronframe/table.py": "class Table: ...\n",
}
EXPECTED_SKIPS = {
    ".git/config": "version control",
    "README.md": "not source",
    "app/__pycache__/main.cpython-311.pyc": "cache",
    "app/analysis.ipynb": None,
    "app/main.py": None,
    "heronframe/__init__.py": "vendored library",
    "heronframe/table.py": "vendored library",
    "node_modules/pkg/index.py": "node modules",
}


def _bytes(content: bytes | str) -> bytes:
    return content if isinstance(content, bytes) else content.encode()


def write_tree(base: Path, files: Files) -> Path:
    for name, content in files.items():
        path = base / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(_bytes(content))
    return base


def write_zip(path: Path, files: Files, method: int = zipfile.ZIP_DEFLATED) -> Path:
    with zipfile.ZipFile(path, "w", method) as archive:
        for name, content in files.items():
            archive.writestr(name, _bytes(content))
    return path


def tar_bytes(files: Files, mode: str = "w:gz") -> bytes:
    buffer = io.BytesIO()
    with tarfile.open(fileobj=buffer, mode=mode) as archive:
        for name, content in files.items():
            data = _bytes(content)
            info = tarfile.TarInfo(name)
            info.size = len(data)
            info.mtime = 1_700_000_000
            archive.addfile(info, io.BytesIO(data))
    return buffer.getvalue()


def write_tar(path: Path, files: Files, mode: str = "w:gz") -> Path:
    path.write_bytes(tar_bytes(files, mode))
    return path


def prefixed(prefix: str, files: Files) -> dict[str, bytes | str]:
    return {f"{prefix}/{name}": content for name, content in files.items()}


def listing(project: Project) -> dict[str, str | None]:
    """path -> skip (or 'error: ...') for every entry, reading each readable one."""
    result: dict[str, str | None] = {}
    for entry in project.entries():
        if entry.error is not None:
            result[entry.path] = f"error: {entry.error}"
            continue
        if entry.skip is None:
            assert isinstance(entry.read(), bytes)
        result[entry.path] = entry.skip
    return result


def projects(
    *roots: os.PathLike[str] | str, single: bool = False, limits: Limits = Limits()
) -> dict[str, dict[str, str | None]]:
    found = discover(list(roots), single=single, library=LIB, limits=limits)
    return {p.name: listing(p) for p in found}


def snapshot(base: Path) -> list[tuple[str, int]]:
    return sorted((str(p.relative_to(base)), p.stat().st_size) for p in base.rglob("*"))


# ------------------------------------------------------------------ roots


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


def test_single_roots(tmp_path: Path) -> None:
    folder = write_tree(tmp_path / "myrepo", PROJECT)
    zipped = write_zip(tmp_path / "zipped-main.zip", PROJECT)
    tarred = write_tar(tmp_path / "tarred.tar.xz", PROJECT, "w:xz")
    got = projects(folder, zipped, tarred, single=True)
    assert list(got) == ["myrepo", "zipped-main", "tarred"]
    assert all(listing == EXPECTED_SKIPS for listing in got.values())


def test_entry_bytes_and_stamps(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    write_tree(root / "f", {"a.py": "x = 1\n"})
    write_zip(root / "z.zip", {"a.py": "x = 1\n"})
    write_tar(root / "t.tar", {"a.py": "x = 1\n"}, "w")
    entries = {p.name: next(iter(p.entries())) for p in discover([root], library=LIB)}
    stat = (root / "f" / "a.py").stat()
    crc = zipfile.ZipFile(root / "z.zip").getinfo("a.py").CRC  # reference: zipfile's own header
    assert entries["f"].stamp == f"m{stat.st_mtime_ns}:6"
    assert entries["z"].stamp == f"c{crc}:6"
    assert entries["t"].stamp == "t1700000000:6"
    for name in ("f", "z", "t"):
        assert entries[name].size == 6


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


# ------------------------------------------------------------------ bad roots, corrupt archives


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


@pytest.mark.parametrize("name", ["broken.zip", "broken.tar.gz"])
def test_corrupt_archive_root(tmp_path: Path, name: str) -> None:
    (tmp_path / name).write_bytes(b"this is not an archive" * 10)
    after = write_tree(tmp_path / "after", {"p/a.py": ""})
    found = list(discover([tmp_path / name, after], library=LIB))
    assert [p.name for p in found] == ["broken", "p"]
    _assert_corrupt(found[0], name)


# ------------------------------------------------------------------ classification


@pytest.mark.parametrize(
    "path, reason",
    [
        (".git/hooks/pre-commit.py", "version control"),
        ("sub/.hg/x.py", "version control"),
        (".svn/x.py", "version control"),
        ("pkg/__pycache__/m.py", "cache"),
        (".ipynb_checkpoints/n-checkpoint.ipynb", "cache"),
        (".mypy_cache/x.py", "cache"),
        (".pytest_cache/x.py", "cache"),
        (".tox/py311/x.py", "cache"),
        ("web/node_modules/x/setup.py", "node modules"),
        ("lib/python3.11/site-packages/heronframe/__init__.py", "virtual environment"),
        ("usr/lib/python3/dist-packages/x.py", "virtual environment"),
        ("docs/logo.png", "not source"),
        ("src/app.py", None),
        ("notebooks/a.ipynb", None),
    ],
)
def test_name_rules(tmp_path: Path, path: str, reason: str | None) -> None:
    assert classify(path, 10, library=LIB) == reason
    root = write_tree(tmp_path / "r", {path: "x = 1\n"})
    assert projects(root, single=True) == {"r": {path: reason}}


@pytest.mark.parametrize(
    "files, expected",
    [
        ({"myenv/pyvenv.cfg": "", "myenv/lib/x.py": "", "app.py": ""},
         {"myenv/pyvenv.cfg": "virtual environment", "myenv/lib/x.py": "virtual environment", "app.py": None}),
        ({"venv/bin/activate": "", "venv/bin/tool.py": ""},
         {"venv/bin/activate": "virtual environment", "venv/bin/tool.py": "virtual environment"}),
        ({"env/Scripts/activate": "", "env/Lib/x.py": ""},
         {"env/Scripts/activate": "virtual environment", "env/Lib/x.py": "virtual environment"}),
        ({".venv/x.py": ""}, {".venv/x.py": None}),  # no marker: an ordinary folder
        ({"env/__init__.py": "", "env/settings.py": ""}, {"env/__init__.py": None, "env/settings.py": None}),
    ],
    ids=["pyvenv.cfg", "bin/activate", "Scripts/activate", "bare .venv", "package named env"],
)
def test_virtual_environments_in_folders_and_zips(
    tmp_path: Path, files: Files, expected: dict[str, str | None]
) -> None:
    folder = write_tree(tmp_path / "f", files)
    zipped = write_zip(tmp_path / "z.zip", files)
    got = projects(folder, zipped, single=True)
    assert got == {"f": expected, "z": expected}


def test_virtual_environments_in_tar_use_names_only(tmp_path: Path) -> None:
    files = {"app.py": "", ".venv/x.py": "", "env/__init__.py": "", "myenv/pyvenv.cfg": "",
             "myenv/lib/x.py": "", "lib/site-packages/y.py": ""}
    got = projects(write_tar(tmp_path / "t.tgz", files), single=True)
    assert got == {"t": {"app.py": None, ".venv/x.py": "virtual environment",
                         "env/__init__.py": "virtual environment", "myenv/pyvenv.cfg": "not source",
                         "myenv/lib/x.py": None, "lib/site-packages/y.py": "virtual environment"}}


def test_vendored_library_needs_init(tmp_path: Path) -> None:
    files = {"third_party/heronframe/__init__.py": "", "third_party/heronframe/core.py": "",
             "examples/heronframe/demo.py": "", "heronframe.py": "", "heronframe_extra/x.py": ""}
    expected = {"third_party/heronframe/__init__.py": "vendored library",
                "third_party/heronframe/core.py": "vendored library",
                "examples/heronframe/demo.py": None, "heronframe.py": None, "heronframe_extra/x.py": None}
    got = projects(write_tree(tmp_path / "f", files), write_zip(tmp_path / "z.zip", files), single=True)
    assert got == {"f": expected, "z": expected}
    # A tar stream cannot look ahead for __init__.py: the directory name decides.
    tarred = projects(write_tar(tmp_path / "t.tgz", files), single=True)["t"]
    assert tarred["examples/heronframe/demo.py"] == "vendored library"


def test_too_large(tmp_path: Path) -> None:
    # A notebook's size is mostly outputs: its reader applies the limit to its code (see sources).
    files = {"big.py": b"#" * (MAX_FILE_SIZE + 1), "edge.py": b"#" * MAX_FILE_SIZE,
             "big.csv": b"," * (MAX_FILE_SIZE + 1), "big.ipynb": b" " * (MAX_FILE_SIZE + 1)}
    expected = {"big.py": "too large", "edge.py": None, "big.csv": "not source", "big.ipynb": None}
    # Stored, not deflated: a run of one byte deflates past the compression ratio bound.
    got = projects(write_tree(tmp_path / "f", files), write_zip(tmp_path / "z.zip", files, zipfile.ZIP_STORED),
                   write_tar(tmp_path / "t.tar", files, "w"), single=True)
    assert got == {"f": expected, "z": expected, "t": expected}


@pytest.mark.parametrize(
    "path, reason",
    [
        ("node_modules/.git/x.py", "version control"),
        ("node_modules/__pycache__/x.py", "cache"),
        ("site-packages/node_modules/x.py", "node modules"),
        ("lib/site-packages/heronframe/__init__.py", "virtual environment"),
        ("heronframe/readme.txt", "vendored library"),
    ],
)
def test_rule_order(path: str, reason: str) -> None:
    assert classify(path, MAX_FILE_SIZE + 1, library=LIB) == reason


def test_classify_with_layout_order(tmp_path: Path) -> None:
    files = {"e/pyvenv.cfg": "", "e/heronframe/__init__.py": "", "heronframe/__init__.py": "",
             "heronframe/data.bin": b"\0" * (MAX_FILE_SIZE + 1)}
    assert projects(write_tree(tmp_path / "f", files), single=True)["f"] == {
        "e/heronframe/__init__.py": "virtual environment", "e/pyvenv.cfg": "virtual environment",
        "heronframe/__init__.py": "vendored library", "heronframe/data.bin": "vendored library"}


# ------------------------------------------------------------------ links, unsafe members


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


def test_unsafe_member_paths(tmp_path: Path) -> None:
    members = {"ok.py": "", "../evil.py": "", "/abs/evil.py": "", "a/../../evil.py": "", "C:/evil.py": ""}
    expected = {"ok.py": None, "../evil.py": "unsafe path", "/abs/evil.py": "unsafe path",
                "a/../../evil.py": "unsafe path", "C:/evil.py": "unsafe path"}
    zipped = write_zip(tmp_path / "z.zip", members)
    tarred = write_tar(tmp_path / "t.tar", members, "w")
    got = projects(zipped, tarred, single=True)
    assert got["z"] == expected
    assert got["t"] == expected


def test_unsafe_members_in_archive_root(tmp_path: Path) -> None:
    members = {"p/ok.py": "", "p/../../evil.py": "", "../evil.py": ""}
    got = projects(write_zip(tmp_path / "z.zip", members))
    assert got == {"p": {"ok.py": None, "../../evil.py": "unsafe path"}}


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


# ------------------------------------------------------------------ tar streaming contract


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


def test_tar_entry_read_after_advance(tmp_path: Path) -> None:
    root = write_tar(tmp_path / "c.tgz", {"x.py": "1", "y.py": "2"})
    (project,) = discover([root], library=LIB, single=True)
    entries: Iterator[Entry] = project.entries()
    first, second = next(entries), next(entries)
    assert second.read() == b"2"
    with pytest.raises(EntryError):
        first.read()


def test_archive_stem() -> None:
    assert archive_stem("repo-main.tar.gz") == "repo-main"
    assert archive_stem("x.TGZ") == "x"
    assert archive_stem("x.tar.bz2") == "x"
    assert archive_stem("x.zip") == "x"
    assert archive_stem("x.gz") is None
    assert archive_stem(".zip") is None


# ------------------------------------------------------------------ more archive cases


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


def test_nested_zip_over_the_memory_limit(tmp_path: Path) -> None:
    inner = io.BytesIO()
    with zipfile.ZipFile(inner, "w") as archive:
        archive.writestr("a.py", "x = 1\n")
    root = write_zip(tmp_path / "outer.zip", {"big.zip": inner.getvalue()})
    assert projects(root, limits=Limits(archive_bytes=10)) == {"big": {"big.zip": "archive too large"}}
    assert projects(root) == {"big": {"a.py": None}}


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


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_special_files_are_counted_never_opened(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "p", {"a.py": ""})
    os.mkfifo(root / "pipe.py")  # opening it would block
    (root / "pipe-link.py").symlink_to(root / "pipe.py")
    assert projects(root, single=True) == {"p": {"a.py": None, "pipe.py": "special file",
                                                 "pipe-link.py": "special file"}}


def test_classify_with_siblings() -> None:
    siblings = ["env/bin/activate", "env/x.py", "pkg/heronframe/__init__.py", "pkg/heronframe/a.py"]
    assert classify("env/x.py", 1, library=LIB, siblings=siblings) == "virtual environment"
    assert classify("pkg/heronframe/a.py", 1, library=LIB, siblings=siblings) == "vendored library"
    assert classify("env/x.py", 1, library=LIB, siblings=["env/x.py"]) is None


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
    ignored: list[tuple[str, str]] = []
    names = [p.name for p in discover([root, archive], library="heronframe", ignored=ignored)]
    assert names == ["proj", "p"]
    reasons = {os.path.basename(where.split("!")[-1]): reason for where, reason in ignored}
    assert reasons["NOTES.md"].startswith("not a project")
    assert reasons[".hidden"] == "hidden"
    assert reasons["escape.py"] == "unsafe path"
    assert reasons["readme.txt"].startswith("not a project")


# ------------------------------------------------------------------ wheels and sdists

# A wheel is a zip archive holding its packages and `{name}-{version}.dist-info/` (PEP 427, the
# binary distribution format); the wheel's own file name says {name}-{version}-{tags}.whl.
WHEEL_FILES: dict[str, bytes | str] = {
    "wpkg/__init__.py": "import heronframe\n",
    "wpkg/plot.py": "from wpkg import heronframe\n",
    "wpkg-1.0.dist-info/METADATA": "Metadata-Version: 2.1\nName: wpkg\nVersion: 1.0\n",
    "wpkg-1.0.dist-info/RECORD": "",
}
WHEEL_NAME = "wpkg-1.0-py3-none-any.whl"
WHEEL_LISTING = {
    "wpkg-1.0.dist-info/METADATA": "not source",
    "wpkg-1.0.dist-info/RECORD": "not source",
    "wpkg/__init__.py": None,
    "wpkg/plot.py": None,
}
# An sdist `{name}-{version}.tar.gz` holds one top folder `{name}-{version}/` (the source
# distribution format); paths are relative to it.
SDIST_FILES: dict[str, bytes | str] = {
    "spkg-2.1/PKG-INFO": "Metadata-Version: 2.2\nName: spkg\nVersion: 2.1\n",
    "spkg-2.1/setup.py": "from setuptools import setup\nsetup(name='spkg')\n",
    "spkg-2.1/spkg/__init__.py": "import heronframe\n",
}
SDIST_LISTING = {"PKG-INFO": "not source", "setup.py": None, "spkg/__init__.py": None}


def test_wheels_in_a_folder_are_projects(tmp_path: Path) -> None:
    root = tmp_path / "wheels"
    root.mkdir()
    write_zip(root / WHEEL_NAME, WHEEL_FILES)
    write_zip(root / "other-0.1-py2.py3-none-any.whl", {"other.py": "x = 1\n"})
    ignored: list[tuple[str, str]] = []
    found = list(discover([root], library=LIB, ignored=ignored))
    assert ignored == []
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


def test_corrupt_wheel_is_counted(tmp_path: Path) -> None:
    root = tmp_path / "wheels"
    root.mkdir()
    (root / WHEEL_NAME).write_bytes(NOISE)
    (listed,) = projects(root).values()
    ((path, reason),) = listed.items()
    assert path == WHEEL_NAME and reason is not None and reason.startswith("error: corrupt archive")


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


# ------------------------------------------------------------------ hostile input: names


def zip_members(path: Path, members: list[tuple[str, bytes]]) -> Path:
    """A zip with members in this order, duplicates kept (zipfile warns, and writes them)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        with zipfile.ZipFile(path, "w") as archive:
            for name, data in members:
                archive.writestr(zipfile.ZipInfo(name), data)
    return path


def tar_members(path: Path, members: list[tuple[str, bytes]], mode: str = "w") -> Path:
    with tarfile.open(path, mode, encoding="utf-8", errors="surrogateescape") as archive:
        for name, data in members:
            info = tarfile.TarInfo(name)
            info.size = len(data)
            archive.addfile(info, io.BytesIO(data))
    return path


def contents(project: Project) -> dict[str, tuple[bytes | None, str]]:
    return {e.path: (None if e.skip or e.error else e.read(), e.note) for e in project.entries()}


# Names that normalise alike: the same name twice, `./` in front, a backslash for a slash.
ALIKE = [("pkg/a.py", b"first = 1\n"), ("pkg/a.py", b"second = 2\n"), ("./pkg/a.py", b"third = 3\n"),
         ("pkg\\a.py", b"fourth = 4\n"), ("pkg/a~2.py", b"real = 5\n")]


@pytest.mark.parametrize("kind", ["zip", "tar", "tar.gz"])
def test_names_that_normalise_alike_are_all_kept(tmp_path: Path, kind: str) -> None:
    path = tmp_path / f"dups.{kind}"
    if kind == "zip":
        zip_members(path, ALIKE)
    else:
        tar_members(path, ALIKE, "w:gz" if kind == "tar.gz" else "w")
    (project,) = discover([path], single=True, library=LIB)
    got = contents(project)
    # Every member is there, under a path of its own, with its own bytes; the first in archive
    # order keeps the path.
    assert sorted(data for data, _ in got.values()) == sorted(data for _, data in ALIKE)
    assert got["pkg/a.py"] == (b"first = 1\n", "")
    assert {data for path, (data, _) in got.items() if path != "pkg/a.py"} == {
        b"second = 2\n", b"third = 3\n", b"fourth = 4\n", b"real = 5\n"}
    suffixed = {path: note for path, (_, note) in got.items() if note}
    if kind == "zip":  # listed in full first: the member really named a~2.py keeps its name
        assert got["pkg/a~2.py"] == (b"real = 5\n", "")
        assert sorted(suffixed) == ["pkg/a~3.py", "pkg/a~4.py", "pkg/a~5.py"]
    else:  # streamed: a~2.py was handed out before the member of that name came
        assert sorted(suffixed) == ["pkg/a~2.py", "pkg/a~2~2.py", "pkg/a~3.py", "pkg/a~4.py"]
    assert all("'pkg/a.py'" in note or "'pkg/a~2.py'" in note for note in suffixed.values())
    # Stable: the same archive lists the same way again.
    assert contents(next(discover([path], single=True, library=LIB))) == got


def test_suffixes_are_stable_and_free() -> None:
    from impactscope.corpus.roots import _free_path

    assert _free_path("a.py", {"a.py"}) == "a~2.py"
    assert _free_path("d/a.py", {"d/a.py", "d/a~2.py"}) == "d/a~3.py"
    assert _free_path("Makefile", {"Makefile"}) == "Makefile~2"
    assert _free_path(".env", {".env"}) == ".env~2"
    assert _free_path("x.tar.gz", {"x.tar.gz"}) == "x.tar~2.gz"


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
    ignored: list[tuple[str, str]] = []
    found = {p.name: listing(p) for p in discover([path], library=LIB, ignored=ignored)}
    assert set(found) == {"proj", "other"}  # no proj@root
    assert {f"{name}/{file}" for name, listed in found.items() for file in listed} == files
    assert all(reason == "hidden" for _, reason in ignored)


def test_scattered_tar_projects_are_held_within_the_archive_bound(tmp_path: Path) -> None:
    members = [("p/a.py", b"a" * 100), ("q/x.py", b""), ("p/b.py", b"b" * 100), ("p/c.py", b"c" * 10)]
    path = tar_members(tmp_path / "r.tar", members)
    # q streams at its place; p, scattered, comes once its last member has passed.
    assert [(p.name, listing(p)) for p in discover([path], library=LIB, limits=Limits(archive_bytes=150))] == [
        ("q", {"x.py": None}), ("p", {"a.py": None, "b.py": "archive too large", "c.py": None})]


# ------------------------------------------------------------------ hostile input: limits


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


def test_a_compressed_tar_past_the_ratio_stops_there(tmp_path: Path) -> None:
    bomb = [("a.py", b"x = 1\n"), ("zeros.bin", bytes(8 << 20)), ("b.py", b"y = 2\n")]
    project = tar_members(tmp_path / "bomb.tar.gz", bomb, "w:gz")
    # zeros.bin's header is read before its data: the stream stops while passing over the data.
    assert projects(project, single=True) == {
        "bomb": {"a.py": None, "zeros.bin": "not source", "bomb.tar.gz": "compression ratio"}}
    assert projects(project, single=True, limits=Limits(ratio=10_000)) == {
        "bomb": {"a.py": None, "zeros.bin": "not source", "b.py": None}}
    root = tar_members(tmp_path / "root.tar.gz", [(f"p/{n}", d) for n, d in bomb], "w:gz")
    ignored: list[tuple[str, str]] = []
    assert {p.name: listing(p) for p in discover([root], library=LIB, ignored=ignored)} == {
        "p": {"a.py": None, "zeros.bin": "not source", "root.tar.gz": "compression ratio"}}


def test_too_many_members(tmp_path: Path) -> None:
    members = [(f"p/m{i:02}.py", b"") for i in range(12)]
    limits = Limits(members=5)
    for path in (zip_members(tmp_path / "z.zip", members), tar_members(tmp_path / "t.tgz", members, "w:gz")):
        (project,) = discover([path], single=True, library=LIB, limits=limits)
        listed = {e.path: (e.skip, e.note) for e in project.entries()}
        assert len(listed) == 6
        assert listed[path.name][0] == "too many members" and "5" in listed[path.name][1]
        ignored: list[tuple[str, str]] = []
        found = {p.name: listing(p) for p in discover([path], library=LIB, limits=limits, ignored=ignored)}
        if path.suffix == ".zip":  # cut before the projects are formed: the root says so
            assert len(found["p"]) == 5
            assert [reason.startswith("too many members") for _, reason in ignored] == [True]
        else:  # met while streaming project p: p says so
            assert len(found["p"]) == 6 and found["p"]["t.tgz"] == "too many members"
            assert ignored == []


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


def test_nesting_depth(tmp_path: Path) -> None:
    inner = tar_bytes({"a.py": "x = 1\n"})
    root = write_zip(tmp_path / "outer.zip", {"inner.tar.gz": inner})
    assert projects(root) == {"inner": {"a.py": None}}
    assert projects(root, limits=Limits(depth=1)) == {"inner": {"inner.tar.gz": "nested too deep"}}
    # An archive inside a project is a file, whatever the depth allows.
    assert projects(write_zip(tmp_path / "deep.zip", {"p/inner.tar.gz": inner})) == {
        "p": {"inner.tar.gz": "not source"}}


def test_projects_carry_their_limits(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "c", {"p/a.py": ""})
    limits = Limits(file_bytes=10)
    assert [p.limits for p in discover([root], library=LIB, limits=limits)] == [limits]
    assert [p.limits for p in discover([root], library=LIB)] == [Limits()]


def test_a_file_that_grows_after_listing_is_cut_while_reading(tmp_path: Path) -> None:
    root = write_tree(tmp_path / "p", {"a.py": "x = 1\n"})
    (project,) = discover([root], single=True, library=LIB, limits=Limits(file_bytes=100))
    (entry,) = project.entries()
    (root / "a.py").write_bytes(b"#" * 1000)
    with pytest.raises(EntryError) as caught:
        entry.read()
    assert caught.value.reason == "too large"


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


def test_a_scan_accounts_for_every_member_of_names_that_normalise_alike(tmp_path: Path) -> None:
    # End to end: the results file keys files by (project, path), so two equal paths used to
    # abort the scan with a UNIQUE-constraint error.
    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    root = tmp_path / "corpus"
    root.mkdir()
    uses = b"import heronframe\nheronframe.stack()\n"
    zip_members(root / "zipped.zip", ALIKE + [("pkg/use.py", uses), ("pkg/use.py", uses)])
    tar_members(root / "tarred.tar.gz", ALIKE + [("pkg/use.py", uses), ("./pkg/use.py", uses)], "w:gz")
    tar_members(tmp_path / "root.tar", [(f"proj/{n}", d) for n, d in ALIKE] + [("other/x.py", b""), ("proj/use.py", uses)])
    runner = CliRunner()
    out = tmp_path / "r.sqlite"
    scanned = runner.invoke(app, ["scan", str(changes), str(root), str(tmp_path / "root.tar"), "--out", str(out), "--jobs", "1"])
    assert scanned.exit_code == 0, scanned.output
    report = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    assert report["totals"]["projects"] == 4  # zipped, tarred, proj, other: no phantom
    assert report["totals"]["files"] == 7 + 7 + 6 + 1
    sites = sorted((f["project"], f["file"]) for f in report["findings"])
    assert sites == [("proj", "use.py"), ("tarred", "pkg/use.py"), ("tarred", "pkg/use~2.py"),
                     ("zipped", "pkg/use.py"), ("zipped", "pkg/use~2.py")]


# ------------------------------------------------------------------ hostile input: fuzzing

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


def _drain(found: Iterator[Project]) -> dict[str, list[Entry]]:
    """Every project's entries, each read while it is current, as a scan does."""
    listed: dict[str, list[Entry]] = {}
    for project in found:
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
    return listed


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
    (listed,) = _drain(discover([path], single=True, library=LIB, limits=limits)).values()
    expected = is_dir[:cap].count(False) + (len(is_dir) > cap)
    assert len(listed) == expected, [(e.path, e.skip, e.error) for e in listed]
    # As a root of projects: nothing crashes, names and paths stay unique, nothing is lost.
    ignored: list[tuple[str, str]] = []
    projects_found = _drain(discover([path], library=LIB, limits=limits, ignored=ignored))
    accounted = sum(map(len, projects_found.values())) + len(ignored)
    tops = sum(1 for name, kind, _, _ in members[:cap]
               if kind != "dir" and archive_stem(name) is not None and _member_parts(name) == (name,))
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
    ignored: list[tuple[str, str]] = []
    _drain(discover([path], single=single, library=LIB, ignored=ignored, limits=Limits(members=8)))
