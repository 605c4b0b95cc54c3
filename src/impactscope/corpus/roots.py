"""Find the projects in corpus roots and list every file in them, without unpacking.

A root is a directory or an archive (.zip, .whl, .tar, .tar.gz, .tgz,
.tar.bz2, .tar.xz). Each immediate child of a root is one project: a folder
(named by the folder), an archive (named by its file name without the archive
extension) or a loose `.py` / `.ipynb` file (named by its file name). Hidden
children (names starting with ".") and other loose files are not projects.
With `single=True` each root is itself one project. A wheel given as a root
is always one project, as if `single` were set: it holds exactly one
distribution (its package folders and its `.dist-info` belong together), and
it is then named as it would be in a folder of wheels.

An archive project's file paths are relative to the archive, except in the
layout of source distributions and code-hosting downloads: when the archive's
name without extension is not a Python identifier (`pkg-1.0`, `repo-main`)
and a top folder has that same name, the paths of the members under that
folder are relative to it (`pkg-1.0/setup.py` becomes `setup.py`). A name that
is an identifier could be a package folder, so it is never taken off.

Archives are read in place: zip (and wheel) members through `zipfile`, tar
members in a single streaming pass through `tarfile`. Nothing is written to disk. Every
file of a project comes out as an `Entry`, including the ones that should not
be read, so that totals can account for each file.

Streaming a tar archive has consequences that callers must respect:

- a tar project's entries come in archive order, not sorted, and an entry's
  `read` only works until the iterator advances (until then it can be called
  again: the bytes are held while the stream is at the member, and only
  that member's);
- a tar *root* is streamed once for all its projects, so its projects come in
  archive order, and each project's entries must be consumed before
  `discover` is advanced (afterwards `entries()` raises EntryError);
- a tar member is classified before the members after it are seen, so the
  rules that look inside a directory (a `pyvenv.cfg`, an activate script, an
  `__init__.py`) fall back to directory names alone (see `classify`).

Folder and zip projects are listed in full first, so their entries come sorted
by path, can be listed again at any time, and stay readable afterwards.

Symbolic links are never followed out of the project (or, at the top level,
out of the root): such a link is an entry skipped as "link outside root".
Links to directories inside are left out, since the directory's own files
are listed where they are.
"""

from __future__ import annotations

import contextlib
import dataclasses
import functools
import io
import lzma
import os
import re
import stat
import struct
import tarfile
import zipfile
import zlib
from collections.abc import Callable, Collection, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import IO

__all__ = [
    "ARCHIVE_SUFFIXES",
    "MAX_FILE_SIZE",
    "MAX_NESTED_ARCHIVE_SIZE",
    "SOURCE_SUFFIXES",
    "CorpusError",
    "Entry",
    "EntryError",
    "Project",
    "archive_stem",
    "check_roots",
    "classify",
    "discover",
]

# Longest first, so that ".tar.gz" is taken off whole.
ARCHIVE_SUFFIXES = (".tar.gz", ".tar.bz2", ".tar.xz", ".tgz", ".tar", ".zip", ".whl")
# A wheel is a zip archive (PEP 427).
_ZIP_SUFFIXES = (".zip", ".whl")
SOURCE_SUFFIXES = frozenset({".py", ".ipynb"})
MAX_FILE_SIZE = 2_000_000
# A zip project inside an archive root needs random access, so it is read
# into memory, up to this size.
MAX_NESTED_ARCHIVE_SIZE = 200_000_000

_VERSION_CONTROL = frozenset({".git", ".hg", ".svn"})
_CACHES = frozenset({"__pycache__", ".ipynb_checkpoints", ".mypy_cache", ".pytest_cache", ".tox"})
_INSTALL_DIRS = frozenset({"site-packages", "dist-packages"})
_VENV_NAMES = frozenset({".venv", "venv", "env"})
_ACTIVATE_SCRIPTS = ("bin/activate", "Scripts/activate")

# Malformed or hostile archives fail inside zipfile, tarfile and the
# decompressors with a wide range of exception types.
_ARCHIVE_ERRORS: tuple[type[BaseException], ...] = (
    OSError,
    EOFError,
    ValueError,
    RuntimeError,
    OverflowError,
    struct.error,
    zlib.error,
    lzma.LZMAError,
    zipfile.BadZipFile,
    tarfile.TarError,
)


class CorpusError(ValueError):
    """A corpus root that cannot be used: missing, or neither a directory nor an archive."""


class EntryError(ValueError):
    """Raised by `Entry.read` when the bytes cannot be had (unreadable file, corrupt member)."""


def _refuse(reason: str) -> bytes:
    raise EntryError(reason)


@dataclass(frozen=True)
class Entry:
    """One file of a project.

    `stamp` is a cheap change-detection key: `m{mtime_ns}:{size}` for files in
    folders, `c{crc32}:{size}` for zip members, `t{mtime}:{size}` for tar
    members. `skip` is the reason not to read the file, `error` the reason it
    cannot be read at all; at most one is set. `read` returns the bytes and
    raises EntryError on failure; for tar members it only works until the
    iterator that produced the entry advances.
    """

    path: str
    size: int
    stamp: str
    skip: str | None
    error: str | None
    read: Callable[[], bytes] = field(repr=False, compare=False)


@dataclass(frozen=True)
class Project:
    """One downstream project: a folder, an archive or a loose file in a corpus root.

    `origin` says where it came from, for people: the path of the folder,
    archive or file, or `archive!member` for a project inside an archive root.
    """

    name: str
    origin: str
    _list: Callable[[], Iterator[Entry]] = field(repr=False, compare=False)

    def entries(self) -> Iterator[Entry]:
        """Every file of the project, in path order (archive order for tar)."""
        return self._list()


def _skipped(path: str, size: int, stamp: str, reason: str) -> Entry:
    return Entry(path, size, stamp, reason, None, functools.partial(_refuse, reason))


def _failed(path: str, reason: str, size: int = 0, stamp: str = "") -> Entry:
    return Entry(path, size, stamp, None, reason, functools.partial(_refuse, reason))


def _corrupt(archive_name: str, problem: BaseException | str) -> Entry:
    detail = problem if isinstance(problem, str) else (str(problem) or type(problem).__name__)
    return _failed(_display(archive_name), f"corrupt archive: {detail}")


def _os_reason(exc: OSError) -> str:
    return f"cannot read: {exc.strerror or exc}"


# ------------------------------------------------------------------ names, paths


def archive_stem(name: str) -> str | None:
    """`name` without its archive extension, or None if it is not an archive name."""
    lowered = name.lower()
    for suffix in ARCHIVE_SUFFIXES:
        if lowered.endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)]
    return None


def _is_zip_name(name: str) -> bool:
    return name.lower().endswith(_ZIP_SUFFIXES)


def _is_wheel_name(name: str) -> bool:
    return name.lower().endswith(".whl")


def _top_folder(name: str) -> tuple[str, ...]:
    """The folder that the paths of archive `name`'s members are relative to, if present
    (see the module docstring): its stem, unless the stem could be a package name."""
    stem = archive_stem(name)
    if stem is None or stem.isidentifier() or _is_wheel_name(name):
        return ()
    return (stem,)


def _display(name: str) -> str:
    """A file name as valid text: bytes that did not decode (kept by the OS and
    tarfile as surrogate escapes) become U+FFFD, so reports can encode it."""
    return name.encode("utf-8", "surrogateescape").decode("utf-8", "replace")


def _is_source_name(name: str) -> bool:
    dot = name.rfind(".")
    return dot > 0 and name[dot:] in SOURCE_SUFFIXES


_DRIVE = re.compile(r"[A-Za-z]:")


def _member_parts(name: str) -> tuple[str, ...] | None:
    """The path segments of an archive member name, or None if the name is unsafe
    (absolute, with a drive letter, or climbing out with `..`)."""
    name = name.replace("\\", "/")
    if name.startswith("/") or _DRIVE.match(name):
        return None
    parts = tuple(part for part in name.split("/") if part not in ("", "."))
    return None if ".." in parts else parts


def _member_head(name: str) -> str | None:
    """The top-level segment that places a member in a project of an archive root.

    Members under `/`, `..` or a drive letter belong to no project; unsafe
    names under an ordinary top folder belong to that folder's project.
    """
    parts = [part for part in name.replace("\\", "/").split("/") if part != "."]
    head = parts[0] if parts else ""
    if head in ("", "..") or _DRIVE.fullmatch(head):
        return None
    return head


def _join(directory: str, name: str) -> str:
    return f"{directory}/{name}" if directory else name


# ------------------------------------------------------------------ classification


@dataclass(frozen=True)
class _Layout:
    """Directory facts that need a project's full file list ("" is the project root)."""

    venvs: frozenset[str]  # directories holding a virtual environment
    vendored: frozenset[str]  # directories holding a copy of the target library

    @classmethod
    def of(cls, paths: Iterable[str], library: str) -> _Layout:
        files = set(paths)
        dirs = {""}
        for path in files:
            parts = path.split("/")
            dirs.update("/".join(parts[:depth]) for depth in range(1, len(parts)))
        venvs = {
            d
            for d in dirs
            if _join(d, "pyvenv.cfg") in files
            or (
                d.rpartition("/")[2] in _VENV_NAMES
                and any(_join(d, script) in files for script in _ACTIVATE_SCRIPTS)
            )
        }
        vendored = {
            d for d in dirs if d.rpartition("/")[2] == library and _join(d, "__init__.py") in files
        }
        return cls(frozenset(venvs), frozenset(vendored))


def classify(
    path: str, size: int, *, library: str, siblings: Collection[str] | None = None
) -> str | None:
    """The reason not to read the file at `path` (POSIX, relative to its project), or None.

    `siblings` are the paths of all files in the project. The rules, first
    match wins: "version control", "cache", "node modules", "virtual
    environment", "vendored library", "not source", "too large". "Too large"
    (over MAX_FILE_SIZE bytes) is not decided here for notebooks: their size is
    mostly outputs, so `sources` applies the limit to the code they hold.

    Without `siblings` (as in a tar stream, where later members are not known
    yet) only names count: a virtual environment is any directory named
    `.venv`, `venv` or `env` or under `site-packages` / `dist-packages`, and
    any directory named `library` is a vendored copy, without looking for
    `pyvenv.cfg`, activate scripts or `__init__.py`.
    """
    layout = None if siblings is None else _Layout.of(siblings, library)
    return _classify(path, size, library, layout)


def _classify(path: str, size: int, library: str, layout: _Layout | None) -> str | None:
    parts = path.split("/")
    segments = set(parts)
    if segments & _VERSION_CONTROL:
        return "version control"
    if segments & _CACHES:
        return "cache"
    if "node_modules" in segments:
        return "node modules"
    directories = set(parts[:-1])
    if layout is None:
        venv = bool(directories & (_INSTALL_DIRS | _VENV_NAMES))
        vendored = library in directories
    elif not layout.venvs and not layout.vendored:  # the usual project: no ancestor to look up
        venv, vendored = bool(directories & _INSTALL_DIRS), False
    else:
        ancestors = ["/".join(parts[:depth]) for depth in range(len(parts))]
        venv = bool(directories & _INSTALL_DIRS) or any(d in layout.venvs for d in ancestors)
        vendored = any(d in layout.vendored for d in ancestors)
    if venv:
        return "virtual environment"
    if vendored:
        return "vendored library"
    if not _is_source_name(parts[-1]):
        return "not source"
    # A notebook's size is mostly its outputs; its reader applies the limit to its code.
    if size > MAX_FILE_SIZE and not parts[-1].endswith(".ipynb"):
        return "too large"
    return None


def _classified(entries: Iterable[Entry], library: str) -> Iterator[Entry]:
    """Entries in path order, each readable one given its skip reason."""
    ordered = sorted(entries, key=lambda entry: entry.path)
    readable = [entry for entry in ordered if entry.skip is None and entry.error is None]
    layout = _Layout.of((entry.path for entry in readable), library)
    for entry in ordered:
        if entry.skip is None and entry.error is None:
            reason = _classify(entry.path, entry.size, library, layout)
            if reason is not None:
                entry = dataclasses.replace(entry, skip=reason)
        yield entry


# ------------------------------------------------------------------ folders


def _read_path(path: str) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read()
    except OSError as exc:
        raise EntryError(_os_reason(exc)) from None


def _within(path: str, boundary: str) -> bool:
    return path == boundary or path.startswith(boundary.rstrip(os.sep) + os.sep)


def _file_entry(path: str, location: str, info: os.stat_result) -> Entry:
    stamp = f"m{info.st_mtime_ns}:{info.st_size}"
    read = functools.partial(_read_path, location)
    return Entry(_display(path), info.st_size, stamp, None, None, read)


def _link_entry(path: str, location: str, boundary: str) -> Entry | None:
    """A symbolic link inside a folder project, or None for a link to a directory
    inside it (whose files are listed where they are)."""
    if not _within(os.path.realpath(location), boundary):
        info = os.lstat(location)
        stamp = f"m{info.st_mtime_ns}:{info.st_size}"
        return _skipped(_display(path), info.st_size, stamp, "link outside root")
    if not os.path.exists(location):
        return _failed(_display(path), "broken link")
    info = os.stat(location)
    return _file_entry(path, location, info) if stat.S_ISREG(info.st_mode) else None


def _walk(top: str) -> Iterator[Entry]:
    """Every file under `top`, unclassified and in no particular order."""
    boundary = os.path.realpath(top)
    pending = [("", top)]
    while pending:
        relative, directory = pending.pop()
        try:
            with os.scandir(directory) as listing:
                children = list(listing)
        except OSError as exc:
            yield _failed(_display(relative or "."), f"unreadable directory: {exc.strerror or exc}")
            continue
        for child in children:
            path = _join(relative, child.name)
            try:
                if child.is_symlink():
                    entry = _link_entry(path, child.path, boundary)
                    if entry is not None:
                        yield entry
                elif child.is_dir(follow_symlinks=False):
                    pending.append((path, child.path))
                elif child.is_file(follow_symlinks=False):
                    yield _file_entry(path, child.path, child.stat(follow_symlinks=False))
                # Sockets, FIFOs and devices are left out: opening a FIFO would block.
            except OSError as exc:
                yield _failed(_display(path), _os_reason(exc))


def _folder_entries(top: str, library: str) -> Iterator[Entry]:
    yield from _classified(_walk(top), library)


def _file_entries(location: str, name: str, library: str) -> Iterator[Entry]:
    try:
        entry = _file_entry(name, location, os.stat(location))
    except OSError as exc:
        entry = _failed(_display(name), _os_reason(exc))
    yield from _classified((entry,), library)


# ------------------------------------------------------------------ archive members


@dataclass(frozen=True)
class _Member:
    """An archive member that is a file or a link, under its archive-level name."""

    name: str
    size: int
    stamp: str
    read: Callable[[], bytes]
    link: str | None = None  # a link's target
    link_from_top: bool = False  # the target is archive-relative (tar hard links)
    error: str | None = None


def _link_reason(member: _Member, parts: tuple[str, ...], prefix: tuple[str, ...]) -> str:
    """Where an archive link points: out of the project, or at another member."""
    target = (member.link or "").replace("\\", "/")
    if target.startswith("/") or _DRIVE.match(target):
        return "link outside root"
    resolved = [] if member.link_from_top else list(parts[:-1])
    for part in target.split("/"):
        if part == "..":
            if not resolved:
                return "link outside root"
            resolved.pop()
        elif part not in ("", "."):
            resolved.append(part)
    if tuple(resolved[: len(prefix)]) != prefix:
        return "link outside root"
    return "archive link"  # the target is listed, and read, as a member of its own


def _member_entry(member: _Member, prefix: tuple[str, ...]) -> Entry:
    """The unclassified entry of a member that lies under `prefix` (the project's folder)."""
    parts = _member_parts(member.name)
    if parts is None:
        raw = member.name.replace("\\", "/")
        head = "".join(f"{part}/" for part in prefix)
        path = raw[len(head) :] if head and raw.startswith(head) else raw
        return _skipped(_display(path), member.size, member.stamp, "unsafe path")
    if parts[: len(prefix)] != prefix:  # outside the top folder of an archive project
        prefix = ()
    path = _display("/".join(parts[len(prefix) :]))
    if member.error is not None:
        return _failed(path, member.error, member.size, member.stamp)
    if member.link is not None:
        return _skipped(path, member.size, member.stamp, _link_reason(member, parts, prefix))
    return Entry(path, member.size, member.stamp, None, None, member.read)


# zip -------------------------------------------------------------------------

# A zip archive: the path of a file, or the bytes of a nested archive.
_ZipSource = str | bytes


def _open_zip(source: _ZipSource) -> zipfile.ZipFile:
    return zipfile.ZipFile(source if isinstance(source, str) else io.BytesIO(source))


def _read_zip(archive: zipfile.ZipFile, source: _ZipSource, info: zipfile.ZipInfo) -> bytes:
    """A member's bytes: from the open archive, or from the archive opened again
    once the listing that produced the entry has finished and closed it."""
    try:
        if archive.fp is not None:
            return archive.read(info)
        with _open_zip(source) as again:
            return again.read(info)
    except _ARCHIVE_ERRORS as exc:
        raise EntryError(f"corrupt archive: {exc}") from None


def _zip_members(
    archive: zipfile.ZipFile, source: _ZipSource, infos: Iterable[zipfile.ZipInfo]
) -> Iterator[_Member]:
    for info in infos:
        if info.is_dir():
            continue
        stamp = f"c{info.CRC}:{info.file_size}"
        read = functools.partial(_read_zip, archive, source, info)
        if info.flag_bits & 0x1:
            error = "encrypted archive member"
            yield _Member(info.filename, info.file_size, stamp, read, error=error)
        elif stat.S_ISLNK(info.external_attr >> 16):
            try:  # a zip symlink stores its target as the member's content
                target = archive.read(info).decode("utf-8", "replace")
            except _ARCHIVE_ERRORS:
                target = "/"
            yield _Member(info.filename, info.file_size, stamp, read, link=target)
        else:
            yield _Member(info.filename, info.file_size, stamp, read)


def _zip_listing(
    archive: zipfile.ZipFile,
    source: _ZipSource,
    infos: Iterable[zipfile.ZipInfo],
    prefix: tuple[str, ...],
    library: str,
) -> Iterator[Entry]:
    members = _zip_members(archive, source, infos)
    yield from _classified((_member_entry(member, prefix) for member in members), library)


def _zip_entries(source: _ZipSource, name: str, library: str) -> Iterator[Entry]:
    """All entries of a zip archive (or wheel) that is one project."""
    try:
        archive = _open_zip(source)
    except _ARCHIVE_ERRORS as exc:
        yield _corrupt(name, exc)
        return
    with archive:
        try:
            infos = archive.infolist()
            entries = list(_zip_listing(archive, source, infos, _top_folder(name), library))
        except _ARCHIVE_ERRORS as exc:
            entries = [_corrupt(name, exc)]
        yield from entries


# tar -------------------------------------------------------------------------


def _read_tar(archive: tarfile.TarFile, info: tarfile.TarInfo) -> bytes:
    try:
        handle = archive.extractfile(info)
        if handle is None:
            raise EntryError("not a regular file")
        with handle:
            return handle.read()
    except tarfile.StreamError:
        raise EntryError("tar member read after its stream moved on") from None
    except _ARCHIVE_ERRORS as exc:
        raise EntryError(f"corrupt archive: {exc}") from None


def _tar_member(stream: _TarStream, info: tarfile.TarInfo) -> _Member | None:
    """The member as a file or link, or None for directories, devices and FIFOs."""
    stamp = f"t{int(info.mtime)}:{info.size}"
    if info.isreg():
        return _Member(info.name, info.size, stamp, functools.partial(stream.read, info))
    if info.issym() or info.islnk():
        # Hard link targets are archive-relative names; symlink targets are relative to the link.
        refuse = functools.partial(_refuse, "archive link")
        return _Member(
            info.name, info.size, stamp, refuse, link=info.linkname, link_from_top=info.islnk()
        )
    return None


def _tar_entry(
    stream: _TarStream, info: tarfile.TarInfo, prefix: tuple[str, ...], library: str
) -> Entry | None:
    member = _tar_member(stream, info)
    if member is None:
        return None
    entry = _member_entry(member, prefix)
    if entry.skip is None and entry.error is None:
        entry = dataclasses.replace(entry, skip=_classify(entry.path, entry.size, library, None))
    return entry


class _TarStream:
    """One forward pass over a tar archive, with one member of look-ahead.

    `peek` gives the next member, a string describing the corruption that
    ended the stream (given once), or None at the end. Looking ahead moves
    the stream past the current member's data, so a member is only readable
    until the next `peek` after its `take`. Until then `read` may be called
    for it any number of times (a scan reads a manifest, then reads it again
    as a file): the bytes of the member last read are held, and dropped
    when the stream moves on, so at most one member's bytes are held.
    """

    def __init__(self, archive: tarfile.TarFile) -> None:
        self.archive = archive
        self._ahead: tarfile.TarInfo | str | None = None
        self._peeked = False
        self._ended = False
        self._held: tuple[tarfile.TarInfo, bytes] | None = None

    def read(self, info: tarfile.TarInfo) -> bytes:
        """The bytes of member `info`, while the stream is still at it."""
        if self._held is not None and self._held[0] is info:
            return self._held[1]
        data = _read_tar(self.archive, info)
        self._held = (info, data)
        return data

    def peek(self) -> tarfile.TarInfo | str | None:
        if not self._peeked:
            self._peeked = True
            self._ahead = None
            self._held = None
            if not self._ended:
                try:
                    self._ahead = self.archive.next()
                except _ARCHIVE_ERRORS as exc:
                    self._ahead = str(exc) or type(exc).__name__
                self._ended = not isinstance(self._ahead, tarfile.TarInfo)
                # The stream is never revisited: drop what tarfile keeps for random access.
                self.archive.members.clear()
        return self._ahead

    def take(self) -> None:
        self.peek()
        self._peeked = False


def _open_tar_stream(source: IO[bytes]) -> tarfile.TarFile:
    # "r|*": forward only, compression detected from the bytes, so that a
    # .tar.gz is decompressed once and never re-opened per member.
    return tarfile.open(fileobj=source, mode="r|*")


def _tar_run(
    stream: _TarStream, head: str | None, name: str, library: str, prefix: tuple[str, ...] = ()
) -> Iterator[Entry]:
    """Entries from the stream while members lie under `head` (all of them if None), with
    paths relative to `head`, or else to `prefix` for the members under it."""
    prefix = prefix if head is None else (head,)
    while (item := stream.peek()) is not None:
        if isinstance(item, str):
            stream.take()
            yield _corrupt(name, item)
            return
        if head is not None and _member_head(item.name) != head:
            return
        stream.take()
        entry = _tar_entry(stream, item, prefix, library)
        if entry is not None:
            yield entry


def _tar_entries(source: IO[bytes], name: str, library: str) -> Iterator[Entry]:
    """All entries of a tar archive that is one project, in archive order."""
    try:
        archive = _open_tar_stream(source)
    except _ARCHIVE_ERRORS as exc:
        yield _corrupt(name, exc)
        return
    with archive:
        yield from _tar_run(_TarStream(archive), None, name, library, _top_folder(name))


def _archive_file_entries(location: str, name: str, library: str) -> Iterator[Entry]:
    """Entries of an archive file on disk that is one project."""
    if _is_zip_name(name):
        yield from _zip_entries(location, name, library)
        return
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield _failed(_display(name), _os_reason(exc))
        return
    with handle:
        yield from _tar_entries(handle, name, library)


def _nested_archive(
    name: str, size: int, open_member: Callable[[], IO[bytes]], library: str
) -> Iterator[Entry]:
    """An archive project that is itself a member of an archive root.

    A tar streams straight from the outer member; a zip (or wheel) needs
    random access, so it is read into memory, up to MAX_NESTED_ARCHIVE_SIZE.
    """
    zipped = _is_zip_name(name)
    if zipped and size > MAX_NESTED_ARCHIVE_SIZE:
        yield _skipped(_display(name), size, "", "too large")
        return
    try:
        member = open_member()
    except _ARCHIVE_ERRORS as exc:
        yield _corrupt(name, exc)
        return
    with member:
        if not zipped:
            yield from _tar_entries(member, name, library)
            return
        try:
            data = member.read()
        except _ARCHIVE_ERRORS as exc:
            yield _corrupt(name, exc)
            return
    yield from _zip_entries(data, name, library)


# ------------------------------------------------------------------ roots


def check_roots(roots: Sequence[str | os.PathLike[str]]) -> None:
    """Raise CorpusError unless every root is an existing directory or archive file."""
    if not roots:
        raise CorpusError(
            "no corpus root given; pass at least one directory or archive of projects"
        )
    for root in roots:
        location = os.fspath(root)
        if os.path.isdir(location):
            continue
        if not os.path.exists(location):
            problem = "does not exist"
        elif not os.path.isfile(location) or archive_stem(os.path.basename(location)) is None:
            problem = "is neither a directory nor a known archive"
        else:
            continue
        raise CorpusError(
            f"corpus root {location!r} {problem}; pass a directory of projects or an archive "
            f"({', '.join(ARCHIVE_SUFFIXES)})"
        )


def _root_name(location: str) -> str:
    base = os.path.basename(os.path.normpath(os.path.abspath(location)))
    return archive_stem(base) or base


class _Names:
    """Project names handed out so far in one discovery."""

    def __init__(self) -> None:
        self._taken: set[str] = set()

    def claim(self, name: str, root_name: str) -> str:
        candidate, repeat = name, 0
        while candidate in self._taken:
            repeat += 1
            candidate = f"{name}@{root_name}" + (f"-{repeat}" if repeat > 1 else "")
        self._taken.add(candidate)
        return candidate


def discover(
    roots: Sequence[str | os.PathLike[str]],
    *,
    single: bool = False,
    library: str,
    ignored: list[tuple[str, str]] | None = None,
) -> Iterator[Project]:
    """Yield the projects of each root, root by root.

    Within a directory or zip root, projects come in sorted name order; within
    a tar root, in archive order (see the module docstring). A wheel root is
    one project whatever `single` says. `library` is the
    target library's import name, used to recognise vendored copies of it.

    Project names are unique across the roots: a name already handed out (by
    an earlier root, or earlier in the same root) gets `@<root name>`
    appended, the root name being the root's base name without archive
    extension; should that be taken too, `-2`, `-3`, ... follow.

    A corrupt archive does not stop discovery: it becomes a project whose
    single entry, named after the archive file, has `error` set.
    """
    check_roots(roots)
    names = _Names()
    sink: list[tuple[str, str]] = ignored if ignored is not None else []
    for root in roots:
        location = os.fspath(root)
        root_name = _root_name(location)
        projects: Iterable[Project]
        if single or (_is_wheel_name(location) and not os.path.isdir(location)):
            projects = (_single_project(location, root_name, library),)
        elif os.path.isdir(location):
            projects = _directory_root(location, library, sink)
        elif _is_zip_name(location):
            projects = _zip_root(location, root_name, library, sink)
        else:
            projects = _tar_root(location, root_name, library, sink)
        for project in projects:
            yield dataclasses.replace(project, name=names.claim(project.name, root_name))


def _single_project(location: str, root_name: str, library: str) -> Project:
    if os.path.isdir(location):
        return Project(root_name, location, functools.partial(_folder_entries, location, library))
    entries = functools.partial(_archive_file_entries, location, os.path.basename(location), library)
    return Project(root_name, location, entries)


def _replay(entries: tuple[Entry, ...]) -> Iterator[Entry]:
    return iter(entries)


def _fixed(*entries: Entry) -> Callable[[], Iterator[Entry]]:
    return functools.partial(_replay, entries)


# directory roots ---------------------------------------------------------------


def _directory_root(root: str, library: str, ignored: list[tuple[str, str]]) -> Iterator[Project]:
    boundary = os.path.realpath(root)
    try:
        with os.scandir(root) as listing:
            children = sorted(listing, key=lambda child: child.name)
    except OSError as exc:
        raise CorpusError(f"cannot list corpus root {root!r}: {exc.strerror or exc}") from None
    projects = []
    for child in children:
        where = os.path.join(root, child.name)
        if child.name.startswith("."):
            ignored.append((where, "hidden"))
            continue
        project = _directory_child(child, where, boundary, library)
        if project is not None:
            projects.append(project)
        else:
            ignored.append((where, _not_a_project(child)))
    projects.sort(key=lambda project: project.name)  # stable: equal names keep file-name order
    yield from projects


def _not_a_project(child: os.DirEntry[str]) -> str:
    if child.is_symlink() and child.is_dir():
        return "link to a folder inside the root"
    if not child.is_file():
        return "not a regular file"
    return "not a project (a loose file that is neither source nor archive)"


def _directory_child(
    child: os.DirEntry[str], origin: str, boundary: str, library: str
) -> Project | None:
    stem = archive_stem(child.name)
    if child.is_symlink():
        if not _within(os.path.realpath(child.path), boundary):
            if child.is_dir() or stem is not None or _is_source_name(child.name):
                entry = _skipped(_display(child.name), 0, "", "link outside root")
                return Project(_display(stem or child.name), origin, _fixed(entry))
            return None
        if child.is_dir():
            return None  # the directory it names is a project of its own
    if child.is_dir():
        entries = functools.partial(_folder_entries, child.path, library)
        return Project(_display(child.name), origin, entries)
    if not child.is_file():
        return None
    if stem is not None:
        entries = functools.partial(_archive_file_entries, child.path, child.name, library)
        return Project(_display(stem), origin, entries)
    if _is_source_name(child.name):
        entries = functools.partial(_file_entries, child.path, child.name, library)
        return Project(_display(child.name), origin, entries)
    return None


# zip roots -------------------------------------------------------------------


class _SharedZip:
    """A zip root's open ZipFile, shared by its projects while `discover` is on
    that root so that the central directory is read once; a project listed
    later opens the archive again for itself."""

    def __init__(self, location: str) -> None:
        self.location = location
        self.archive: zipfile.ZipFile | None = None

    @contextlib.contextmanager
    def borrow(self) -> Iterator[zipfile.ZipFile]:
        if self.archive is not None:
            yield self.archive
        else:
            with zipfile.ZipFile(self.location) as archive:
                yield archive


def _zip_root(location: str, root_name: str, library: str, ignored: list[tuple[str, str]]) -> Iterator[Project]:
    try:
        archive = zipfile.ZipFile(location)
    except _ARCHIVE_ERRORS as exc:
        yield Project(root_name, location, _fixed(_corrupt(os.path.basename(location), exc)))
        return
    shared = _SharedZip(location)
    with archive:
        groups: dict[str, list[zipfile.ZipInfo]] = {}
        for info in archive.infolist():
            head = _member_head(info.filename)
            if head is None:
                ignored.append((f"{location}!{info.filename}", "unsafe path"))
            elif head.startswith("."):
                if not info.is_dir():
                    ignored.append((f"{location}!{info.filename}", "hidden"))
            else:
                groups.setdefault(head, []).append(info)
        projects = []
        for head, infos in groups.items():
            project = _zip_root_project(shared, head, infos, f"{location}!{head}", library)
            if project is not None:
                projects.append(project)
            else:
                ignored.append((f"{location}!{head}", "not a project (a loose file that is neither source nor archive)"))
        projects.sort(key=lambda project: project.name)
        shared.archive = archive
        try:
            yield from projects
        finally:
            shared.archive = None


def _zip_root_project(
    shared: _SharedZip, head: str, infos: list[zipfile.ZipInfo], origin: str, library: str
) -> Project | None:
    if len(infos) == 1 and not infos[0].is_dir() and _member_parts(infos[0].filename) == (head,):
        stem = archive_stem(head)
        if stem is not None:
            entries = functools.partial(_zip_nested, shared, infos[0], library)
            return Project(_display(stem), origin, entries)
        if _is_source_name(head):
            entries = functools.partial(_zip_folder, shared, infos, (), library)
            return Project(_display(head), origin, entries)
        return None
    entries = functools.partial(_zip_folder, shared, infos, (head,), library)
    return Project(_display(head), origin, entries)


def _zip_folder(
    shared: _SharedZip, infos: list[zipfile.ZipInfo], prefix: tuple[str, ...], library: str
) -> Iterator[Entry]:
    try:
        with shared.borrow() as archive:
            entries = list(_zip_listing(archive, shared.location, infos, prefix, library))
    except _ARCHIVE_ERRORS as exc:
        entries = [_corrupt(os.path.basename(shared.location), exc)]
    yield from entries


def _zip_nested(shared: _SharedZip, info: zipfile.ZipInfo, library: str) -> Iterator[Entry]:
    """An archive project stored in a zip root."""
    name = os.path.basename(info.filename.replace("\\", "/"))
    try:
        with shared.borrow() as archive:
            yield from _nested_archive(name, info.file_size, lambda: archive.open(info), library)
    except _ARCHIVE_ERRORS as exc:
        yield _corrupt(name, exc)


# tar roots -------------------------------------------------------------------


class _Turn:
    """Whether a tar root's project is still the one its stream is positioned on."""

    def __init__(self) -> None:
        self.current = True


def _in_turn(turn: _Turn, name: str, entries: Callable[[], Iterator[Entry]]) -> Iterator[Entry]:
    if not turn.current:
        raise EntryError(
            f"project {name!r} comes from a streamed tar root; "
            "iterate its entries before advancing discover()"
        )
    yield from entries()


def _tar_root(location: str, root_name: str, library: str, ignored: list[tuple[str, str]]) -> Iterator[Project]:
    base = os.path.basename(location)
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield Project(root_name, location, _fixed(_failed(_display(base), _os_reason(exc))))
        return
    with handle:
        try:
            archive = _open_tar_stream(handle)
        except _ARCHIVE_ERRORS as exc:
            yield Project(root_name, location, _fixed(_corrupt(base, exc)))
            return
        with archive:
            stream = _TarStream(archive)
            while (item := stream.peek()) is not None:
                if isinstance(item, str):
                    stream.take()
                    yield Project(root_name, location, _fixed(_corrupt(base, item)))
                    return
                head = _member_head(item.name)
                if head is None or head.startswith("."):
                    stream.take()
                    if head is None or not item.isdir():
                        ignored.append((f"{location}!{item.name}", "unsafe path" if head is None else "hidden"))
                    continue
                project = _tar_root_project(stream, item, head, f"{location}!{head}", base, library)
                if project is None:
                    ignored.append((f"{location}!{head}", "not a project (a loose file that is neither source nor archive)"))
                    continue
                turn = _Turn()
                guarded = functools.partial(_in_turn, turn, project.name, project._list)
                yield dataclasses.replace(project, _list=guarded)
                turn.current = False
                # Pass over whatever of this project the caller left unread.
                while isinstance(rest := stream.peek(), tarfile.TarInfo):
                    if _member_head(rest.name) != head:
                        break
                    stream.take()


def _tar_root_project(
    stream: _TarStream, item: tarfile.TarInfo, head: str, origin: str, base: str, library: str
) -> Project | None:
    """The project that starts at `item`, a member of a tar root under top-level `head`."""
    if item.isdir() or _member_parts(item.name) != (head,):
        entries = functools.partial(_tar_run, stream, head, base, library)
        return Project(_display(head), origin, entries)
    stream.take()  # a top-level file: a project of its own
    archive = stream.archive
    stem = archive_stem(head)
    if stem is not None and item.isreg():

        def open_member() -> IO[bytes]:
            handle = archive.extractfile(item)
            if handle is None:
                raise tarfile.ExtractError("not a regular file")
            return handle

        entries = functools.partial(_nested_archive, head, item.size, open_member, library)
        return Project(_display(stem), origin, entries)
    if not _is_source_name(head):
        return None
    entry = _tar_entry(stream, item, (), library)
    return None if entry is None else Project(_display(head), origin, _fixed(entry))
