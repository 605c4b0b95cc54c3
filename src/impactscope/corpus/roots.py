"""Find the projects in corpus roots and list every file in them, without unpacking.

A root is a directory or an archive (.zip, .tar, .tar.gz, .tgz, .tar.bz2,
.tar.xz). Each immediate child of a root is one project: a folder (named by
the folder), an archive (named by its file name without the archive
extension) or a loose `.py` / `.ipynb` file (named by its file name). Hidden
children (names starting with ".") and other loose files are not projects.
With `single=True` each root is itself one project.

Archives are read in place: zip members through `zipfile`, tar members in a
single streaming pass through `tarfile`. Nothing is written to disk. Every
file of a project comes out as an `Entry`, including the ones that should not
be read, so that totals can account for each file.

Streaming a tar archive has two consequences that callers must respect:

- a tar project's entries come in archive order, not sorted, and an entry's
  `read` only works until the iterator advances;
- a tar *root* is streamed once for all its projects, so its projects come in
  archive order, and each project's entries must be consumed before
  `discover` is advanced (afterwards `entries()` raises EntryError);
- a tar member is classified before the members after it are seen, so the
  rules that look inside a directory (a `pyvenv.cfg`, an activate script, an
  `__init__.py`) fall back to directory names alone (see `classify`).

Directory and zip projects are listed in full first, so their entries come
sorted by path and can be listed again at any time.
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
from collections.abc import Callable, Iterable, Iterator, Sequence
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

# Longest first, so ".tar.gz" wins over a bare ".gz"-less ".tar" check.
ARCHIVE_SUFFIXES = (".tar.gz", ".tar.bz2", ".tar.xz", ".tgz", ".tar", ".zip")
SOURCE_SUFFIXES = frozenset({".py", ".ipynb"})
MAX_FILE_SIZE = 2_000_000
# An archive project inside an archive root that needs random access (a zip)
# is read into memory, up to this size.
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
    NotImplementedError,
    OverflowError,
    struct.error,
    zlib.error,
    lzma.LZMAError,
    zipfile.BadZipFile,
    tarfile.TarError,
)


class CorpusError(ValueError):
    """A corpus root that cannot be used: it is missing, or neither a directory nor an archive."""


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


# ------------------------------------------------------------------ names, paths


def archive_stem(name: str) -> str | None:
    """`name` without its archive extension, or None if it is not an archive name."""
    lowered = name.lower()
    for suffix in ARCHIVE_SUFFIXES:
        if lowered.endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)]
    return None


def _display(name: str) -> str:
    """File names as valid text: undecodable bytes (kept by the OS or tarfile as
    surrogate escapes) become U+FFFD so that reports can always encode them."""
    return name.encode("utf-8", "surrogateescape").decode("utf-8", "replace")


def _suffix(name: str) -> str:
    dot = name.rfind(".")
    return name[dot:] if dot > 0 else ""


def _is_source_name(name: str) -> bool:
    return _suffix(name) in SOURCE_SUFFIXES


_DRIVE = re.compile(r"[A-Za-z]:")


def _member_parts(name: str) -> tuple[str, ...] | None:
    """The path segments of an archive member name, or None if the name is unsafe
    (absolute, a drive letter, or climbing out with `..`)."""
    name = name.replace("\\", "/")
    if name.startswith("/") or _DRIVE.match(name):
        return None
    parts = tuple(part for part in name.split("/") if part not in ("", "."))
    if ".." in parts:
        return None
    return parts


def _member_head(name: str) -> str | None:
    """The top-level segment that places an archive member in a project of an
    archive root. Members under `/`, `..` or a drive letter belong to none."""
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
    """Directory facts that need a project's full file list.

    `venvs` holds the directories that are virtual environments, `vendored`
    those that are copies of the target library ("" is the project root).
    """

    venvs: frozenset[str]
    vendored: frozenset[str]

    @classmethod
    def of(cls, paths: Iterable[str], library: str) -> _Layout:
        files = set(paths)
        dirs = {""}
        for path in files:
            parts = path.split("/")
            dirs.update("/".join(parts[:depth]) for depth in range(1, len(parts)))
        venvs = {d for d in dirs if _join(d, "pyvenv.cfg") in files}
        venvs.update(
            d
            for d in dirs
            if d.rpartition("/")[2] in _VENV_NAMES
            and any(_join(d, script) in files for script in _ACTIVATE_SCRIPTS)
        )
        vendored = {
            d for d in dirs if d.rpartition("/")[2] == library and _join(d, "__init__.py") in files
        }
        return cls(frozenset(venvs), frozenset(vendored))


def classify(path: str, size: int, *, library: str, layout: _Layout | None = None) -> str | None:
    """The reason not to read the file at `path` (POSIX, relative to its project), or None.

    Without a `layout` (a tar stream, where a directory's later members are
    not known yet) only names count: a virtual environment is any directory
    named `.venv`, `venv` or `env`, or under `site-packages` /
    `dist-packages`, and any directory named `library` is a vendored copy,
    with or without `pyvenv.cfg`, activate scripts or `__init__.py`.
    """
    parts = path.split("/")
    segments = set(parts)
    if segments & _VERSION_CONTROL:
        return "version control"
    if segments & _CACHES:
        return "cache"
    if "node_modules" in segments:
        return "node modules"
    directories = parts[:-1]
    ancestors = ["/".join(parts[:depth]) for depth in range(len(parts))]
    if layout is None:
        venv = bool(set(directories) & (_INSTALL_DIRS | _VENV_NAMES))
    else:
        venv = bool(set(directories) & _INSTALL_DIRS) or any(d in layout.venvs for d in ancestors)
    if venv:
        return "virtual environment"
    if layout is None:
        vendored = library in directories
    else:
        vendored = any(d in layout.vendored for d in ancestors)
    if vendored:
        return "vendored library"
    if not _is_source_name(parts[-1]):
        return "not source"
    if size > MAX_FILE_SIZE:
        return "too large"
    return None


# ------------------------------------------------------------------ folders


def _read_path(path: str) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read()
    except OSError as exc:
        raise EntryError(f"cannot read: {exc.strerror or exc}") from None


def _within(path: str, boundary: str) -> bool:
    return path == boundary or path.startswith(boundary.rstrip(os.sep) + os.sep)


@dataclass(frozen=True)
class _Found:
    """A file found while walking a folder, before classification."""

    path: str
    size: int
    stamp: str
    skip: str | None
    error: str | None
    read: Callable[[], bytes]


def _walk(top: str) -> list[_Found]:
    """Every file under `top`, without following links to directories or out of `top`."""
    boundary = os.path.realpath(top)
    found: list[_Found] = []
    pending = [("", top)]
    while pending:
        relative, directory = pending.pop()
        try:
            with os.scandir(directory) as listing:
                children = list(listing)
        except OSError as exc:
            found.append(_Found(_display(relative), 0, "", None,
                                f"unreadable directory: {exc.strerror or exc}",
                                functools.partial(_refuse, "unreadable directory")))
            continue
        for child in children:
            path = _join(relative, child.name)
            try:
                if child.is_symlink():
                    item = _found_link(path, child.path, boundary)
                    if item is not None:
                        found.append(item)
                elif child.is_dir(follow_symlinks=False):
                    pending.append((path, child.path))
                elif child.is_file(follow_symlinks=False):
                    info = child.stat(follow_symlinks=False)
                    found.append(_found_file(path, child.path, info))
                # Sockets, FIFOs and devices are not files anyone wrote; opening a FIFO would block.
            except OSError as exc:
                found.append(_Found(_display(path), 0, "", None, f"cannot read: {exc.strerror or exc}",
                                    functools.partial(_refuse, "cannot read")))
    return found


def _found_file(path: str, location: str, info: os.stat_result) -> _Found:
    return _Found(_display(path), info.st_size, f"m{info.st_mtime_ns}:{info.st_size}", None, None,
                  functools.partial(_read_path, location))


def _found_link(path: str, location: str, boundary: str) -> _Found | None:
    """A symbolic link: read if it names a file inside `boundary`; links to
    directories inside are left out (their files are listed where they are)."""
    target = os.path.realpath(location)
    if not _within(target, boundary):
        info = os.lstat(location)
        return _Found(_display(path), info.st_size, f"m{info.st_mtime_ns}:{info.st_size}",
                      "link outside root", None, functools.partial(_refuse, "link outside root"))
    if not os.path.exists(location):
        return _Found(_display(path), 0, "", None, "broken link", functools.partial(_refuse, "broken link"))
    info = os.stat(location)
    if stat.S_ISREG(info.st_mode):
        return _found_file(path, location, info)
    return None


def _entries_from(found: Iterable[_Found], library: str) -> Iterator[Entry]:
    ordered = sorted(found, key=lambda item: item.path)
    layout = _Layout.of((item.path for item in ordered if item.error is None), library)
    for item in ordered:
        skip = item.skip
        if skip is None and item.error is None:
            skip = classify(item.path, item.size, library=library, layout=layout)
        yield Entry(item.path, item.size, item.stamp, skip, item.error, item.read)


def _folder_entries(top: str, library: str) -> Iterator[Entry]:
    yield from _entries_from(_walk(top), library)


def _file_entries(location: str, name: str, library: str) -> Iterator[Entry]:
    try:
        info = os.stat(location)
    except OSError as exc:
        yield Entry(name, 0, "", None, f"cannot read: {exc.strerror or exc}",
                    functools.partial(_refuse, "cannot read"))
        return
    yield from _entries_from([_found_file(name, location, info)], library)


# ------------------------------------------------------------------ archives


def _broken_entry(archive_name: str, exc: BaseException | str) -> Entry:
    detail = exc if isinstance(exc, str) else (str(exc) or type(exc).__name__)
    reason = f"corrupt archive: {detail}"
    return Entry(_display(archive_name), 0, "", None, reason, functools.partial(_refuse, reason))


def _error_project(name: str, origin: str, entry: Entry) -> Project:
    return Project(name, origin, lambda: iter((entry,)))


@dataclass(frozen=True)
class _Member:
    """An archive member that is a file or a link, with its archive-level name."""

    name: str
    size: int
    stamp: str
    read: Callable[[], bytes]
    link: tuple[str, bool] | None = None  # (target, target is archive-relative)
    error: str | None = None


def _link_reason(member_parts: tuple[str, ...], target: str, absolute: bool, prefix: tuple[str, ...]) -> str:
    """Where an archive link points: out of the project, or at another member."""
    target = target.replace("\\", "/")
    if target.startswith("/") or _DRIVE.match(target):
        return "link outside root"
    resolved = [] if absolute else list(member_parts[:-1])
    for part in target.split("/"):
        if part in ("", "."):
            continue
        if part == "..":
            if not resolved:
                return "link outside root"
            resolved.pop()
        else:
            resolved.append(part)
    if tuple(resolved[: len(prefix)]) != prefix:
        return "link outside root"
    # Its target is listed (and read) as a member of its own.
    return "archive link"


def _member_entries(
    members: Iterable[_Member], prefix: tuple[str, ...], library: str, layout: _Layout | None
) -> Iterator[Entry]:
    """Entries for archive members that all lie under `prefix` (the project's folder)."""
    for member in members:
        parts = _member_parts(member.name)
        if parts is None:
            raw = member.name.replace("\\", "/")
            head = "/".join(prefix) + "/"
            path = raw[len(head) :] if prefix and raw.startswith(head) else raw
            yield Entry(_display(path), member.size, member.stamp, "unsafe path", None,
                        functools.partial(_refuse, "unsafe path"))
            continue
        path = "/".join(parts[len(prefix) :])
        if member.error is not None:
            yield Entry(_display(path), member.size, member.stamp, None, member.error,
                        functools.partial(_refuse, member.error))
            continue
        if member.link is not None:
            reason = _link_reason(parts, *member.link, prefix)
            skip: str | None = reason
        else:
            skip = classify(path, member.size, library=library, layout=layout)
        yield Entry(_display(path), member.size, member.stamp, skip, None, member.read)


def _layout_of(members: Iterable[_Member], prefix: tuple[str, ...], library: str) -> _Layout:
    paths = []
    for member in members:
        parts = _member_parts(member.name)
        if parts is not None and member.link is None:
            paths.append("/".join(parts[len(prefix) :]))
    return _Layout.of(paths, library)


# zip -------------------------------------------------------------------------


# A zip archive: the path of a file, or the bytes of a nested archive.
_ZipSource = str | bytes


def _open_zip(source: _ZipSource) -> zipfile.ZipFile:
    return zipfile.ZipFile(source if isinstance(source, str) else io.BytesIO(source))


def _read_zip(archive: zipfile.ZipFile, source: _ZipSource, info: zipfile.ZipInfo) -> bytes:
    """A member's bytes, from the open archive, or from the archive opened again
    if the listing that produced the entry has finished and closed it."""
    try:
        if archive.fp is not None:
            return archive.read(info)
        with _open_zip(source) as again:
            return again.read(info)
    except _ARCHIVE_ERRORS as exc:
        raise EntryError(f"corrupt archive: {exc}") from None


def _zip_members(
    archive: zipfile.ZipFile, source: _ZipSource, infos: Iterable[zipfile.ZipInfo]
) -> list[_Member]:
    members = []
    for info in infos:
        if info.is_dir():
            continue
        stamp = f"c{info.CRC}:{info.file_size}"
        read = functools.partial(_read_zip, archive, source, info)
        if info.flag_bits & 0x1:
            members.append(_Member(info.filename, info.file_size, stamp, read, error="encrypted archive member"))
        elif stat.S_ISLNK(info.external_attr >> 16):
            try:  # a zip symlink stores its target as the member's content
                target = archive.read(info).decode("utf-8", "replace")
            except _ARCHIVE_ERRORS:
                target = "/"
            members.append(_Member(info.filename, info.file_size, stamp, read, link=(target, False)))
        else:
            members.append(_Member(info.filename, info.file_size, stamp, read))
    return members


def _zip_entries(source: _ZipSource, name: str, library: str) -> Iterator[Entry]:
    """All entries of a zip archive that is one project."""
    try:
        archive = _open_zip(source)
    except _ARCHIVE_ERRORS as exc:
        yield _broken_entry(name, exc)
        return
    with archive:
        try:
            members = _zip_members(archive, source, archive.infolist())
        except _ARCHIVE_ERRORS as exc:
            yield _broken_entry(name, exc)
            return
        yield from _sorted_member_entries(members, (), library)


def _sorted_member_entries(members: list[_Member], prefix: tuple[str, ...], library: str) -> Iterator[Entry]:
    layout = _layout_of(members, prefix, library)
    entries = list(_member_entries(members, prefix, library, layout))
    yield from sorted(entries, key=lambda entry: entry.path)


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


def _tar_member(archive: tarfile.TarFile, info: tarfile.TarInfo) -> _Member | None:
    """The member as a file or link, or None for directories, devices and FIFOs."""
    stamp = f"t{int(info.mtime)}:{info.size}"
    if info.isreg():
        return _Member(info.name, info.size, stamp, functools.partial(_read_tar, archive, info))
    if info.issym() or info.islnk():
        refuse = functools.partial(_refuse, "archive link")
        # Hard link targets are archive-relative names; symlink targets are relative to the link.
        return _Member(info.name, info.size, stamp, refuse, link=(info.linkname, info.islnk()))
    return None


class _TarStream:
    """One forward pass over a tar archive, with one member of look-ahead.

    `peek` returns the next member, a string describing the corruption that
    ended the stream (returned once), or None at the end.
    """

    def __init__(self, archive: tarfile.TarFile) -> None:
        self.archive = archive
        self._ahead: tarfile.TarInfo | str | None = None
        self._peeked = False
        self._done = False

    def peek(self) -> tarfile.TarInfo | str | None:
        if not self._peeked:
            self._peeked = True
            if self._done:
                self._ahead = None
            else:
                try:
                    self._ahead = self.archive.next()
                except _ARCHIVE_ERRORS as exc:
                    self._ahead = str(exc) or type(exc).__name__
                    self._done = True
                # A stream is never revisited; drop what tarfile keeps for random access.
                self.archive.members.clear()
                if self._ahead is None:
                    self._done = True
        return self._ahead

    def take(self) -> None:
        self.peek()
        self._peeked = False


def _open_tar_stream(source: IO[bytes]) -> tarfile.TarFile:
    # "r|*": read forward only, compression detected from the bytes, so a
    # .tar.gz is decompressed once and never re-opened per member.
    return tarfile.open(fileobj=source, mode="r|*")


def _tar_entries(source: IO[bytes], name: str, library: str) -> Iterator[Entry]:
    """All entries of a tar archive that is one project, in archive order."""
    try:
        archive = _open_tar_stream(source)
    except _ARCHIVE_ERRORS as exc:
        yield _broken_entry(name, exc)
        return
    with archive:
        yield from _tar_run(_TarStream(archive), None, name, library)


def _tar_run(stream: _TarStream, head: str | None, name: str, library: str) -> Iterator[Entry]:
    """Entries from the stream while members lie under `head` (all of them if None)."""
    prefix = () if head is None else (head,)
    while True:
        item = stream.peek()
        if item is None:
            return
        if isinstance(item, str):
            stream.take()
            yield _broken_entry(name, item)
            return
        if head is not None and _member_head(item.name) != head:
            return
        stream.take()
        member = _tar_member(stream.archive, item)
        if member is not None:
            yield from _member_entries((member,), prefix, library, None)


def _archive_file_entries(location: str, name: str, library: str) -> Iterator[Entry]:
    """Entries of an archive file on disk that is one project."""
    if name.lower().endswith(".zip"):
        yield from _zip_entries(location, name, library)
        return
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield _broken_entry(name, exc.strerror or str(exc))
        return
    with handle:
        yield from _tar_entries(handle, name, library)


# ------------------------------------------------------------------ roots


def _root_error(root: str, problem: str) -> CorpusError:
    return CorpusError(
        f"corpus root {root!r} {problem}; pass a directory of projects or an archive "
        f"({', '.join(sorted(ARCHIVE_SUFFIXES))})"
    )


def check_roots(roots: Sequence[str | os.PathLike[str]]) -> None:
    """Raise CorpusError unless every root is an existing directory or archive file."""
    if not roots:
        raise CorpusError("no corpus root given; pass at least one directory or archive of projects")
    for root in roots:
        location = os.fspath(root)
        if os.path.isdir(location):
            continue
        if not os.path.exists(location):
            raise _root_error(location, "does not exist")
        if not os.path.isfile(location) or archive_stem(os.path.basename(location)) is None:
            raise _root_error(location, "is neither a directory nor a known archive")


def _root_name(location: str) -> str:
    base = os.path.basename(os.path.normpath(os.path.abspath(location)))
    return archive_stem(base) or base


class _Names:
    """Project names handed out so far; a repeat gets `@<root name>` appended."""

    def __init__(self) -> None:
        self._taken: set[str] = set()

    def claim(self, name: str, root_name: str) -> str:
        candidate, counter = name, 1
        while candidate in self._taken:
            counter += 1
            suffix = "" if counter == 2 else f"-{counter - 1}"
            candidate = f"{name}@{root_name}{suffix}"
        self._taken.add(candidate)
        return candidate


def discover(
    roots: Sequence[str | os.PathLike[str]], *, single: bool = False, library: str
) -> Iterator[Project]:
    """Yield the projects of each root, root by root.

    Within a directory or zip root, projects come in sorted name order; within
    a tar root, in archive order (see the module docstring). `library` is the
    target library's import name, used to recognise vendored copies of it.

    Project names are unique across all roots: a name already handed out (by
    an earlier root, or earlier in the same root) gets `@<root name>`
    appended, where the root name is the root's base name without archive
    extension (then `-2`, `-3`, ... if that is taken too).

    A corrupt archive does not stop discovery: it becomes a project whose
    single entry, named after the archive file, has `error` set.
    """
    check_roots(roots)
    names = _Names()
    for root in roots:
        location = os.fspath(root)
        root_name = _root_name(location)
        if single:
            projects: Iterator[Project] = iter((_single_project(location, root_name, library),))
        elif os.path.isdir(location):
            projects = _directory_root(location, library)
        elif location.lower().endswith(".zip"):
            projects = _zip_root(location, root_name, library)
        else:
            projects = _tar_root(location, root_name, library)
        for project in projects:
            yield dataclasses.replace(project, name=names.claim(project.name, root_name))


def _single_project(location: str, root_name: str, library: str) -> Project:
    if os.path.isdir(location):
        return Project(root_name, location, functools.partial(_folder_entries, location, library))
    base = os.path.basename(location)
    return Project(root_name, location, functools.partial(_archive_file_entries, location, base, library))


def _link_project(name: str, origin: str, child: str) -> Project:
    entry = Entry(_display(child), 0, "", "link outside root", None, functools.partial(_refuse, "link outside root"))
    return _error_project(name, origin, entry)


def _directory_root(root: str, library: str) -> Iterator[Project]:
    boundary = os.path.realpath(root)
    try:
        with os.scandir(root) as listing:
            children = sorted(listing, key=lambda child: child.name)
    except OSError as exc:
        raise CorpusError(f"cannot list corpus root {root!r}: {exc.strerror or exc}") from None
    projects: list[Project] = []
    for child in children:
        if child.name.startswith("."):
            continue
        origin = os.path.join(root, child.name)
        name = _display(child.name)
        if child.is_symlink():
            if not _within(os.path.realpath(child.path), boundary):
                stem = archive_stem(child.name)
                if child.is_dir() or stem is not None or _is_source_name(child.name):
                    projects.append(_link_project(_display(stem or child.name), origin, child.name))
                continue
            if child.is_dir():
                continue  # the directory it names is a project of its own
        if child.is_dir():
            projects.append(Project(name, origin, functools.partial(_folder_entries, child.path, library)))
        elif child.is_file():
            stem = archive_stem(child.name)
            if stem is not None:
                entries = functools.partial(_archive_file_entries, child.path, child.name, library)
                projects.append(Project(_display(stem), origin, entries))
            elif _is_source_name(child.name):
                entries = functools.partial(_file_entries, child.path, child.name, library)
                projects.append(Project(name, origin, entries))
    projects.sort(key=lambda project: project.name)  # stable: ties keep file-name order
    yield from projects


# zip roots -------------------------------------------------------------------


class _SharedZip:
    """A zip root's ZipFile, shared by its projects while `discover` is on that
    root, so the central directory is read once; a project listed later opens
    the archive again for itself."""

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


def _zip_root(location: str, root_name: str, library: str) -> Iterator[Project]:
    base = os.path.basename(location)
    shared = _SharedZip(location)
    try:
        archive = zipfile.ZipFile(location)
        infos = archive.infolist()
    except _ARCHIVE_ERRORS as exc:
        yield _error_project(root_name, location, _broken_entry(base, exc))
        return
    with archive:
        shared.archive = archive
        groups: dict[str, list[zipfile.ZipInfo]] = {}
        for info in infos:
            head = _member_head(info.filename)
            if head is not None and not head.startswith("."):
                groups.setdefault(head, []).append(info)
        projects = []
        for head, members in groups.items():
            project = _zip_root_project(shared, head, members, f"{location}!{head}", library)
            if project is not None:
                projects.append(project)
        projects.sort(key=lambda project: project.name)
        try:
            yield from projects
        finally:
            shared.archive = None


def _zip_root_project(
    shared: _SharedZip, head: str, infos: list[zipfile.ZipInfo], origin: str, library: str
) -> Project | None:
    top_file = [info for info in infos if _member_parts(info.filename) == (head,) and not info.is_dir()]
    if top_file and len(infos) == 1:
        info = top_file[0]
        stem = archive_stem(head)
        if stem is not None:
            return Project(_display(stem), origin, functools.partial(_zip_nested, shared, info, library))
        if _is_source_name(head):
            return Project(_display(head), origin, functools.partial(_zip_folder, shared, infos, (), library))
        return None
    return Project(_display(head), origin, functools.partial(_zip_folder, shared, infos, (head,), library))


def _zip_folder(
    shared: _SharedZip, infos: list[zipfile.ZipInfo], prefix: tuple[str, ...], library: str
) -> Iterator[Entry]:
    try:
        with shared.borrow() as archive:
            members = _zip_members(archive, shared.location, infos)
            yield from _sorted_member_entries(members, prefix, library)
    except _ARCHIVE_ERRORS as exc:
        yield _broken_entry(os.path.basename(shared.location), exc)


def _zip_nested(shared: _SharedZip, info: zipfile.ZipInfo, library: str) -> Iterator[Entry]:
    """An archive project stored in a zip root."""
    name = os.path.basename(info.filename.replace("\\", "/"))
    try:
        with shared.borrow() as archive:
            yield from _nested_archive(name, info.file_size, lambda: archive.open(info), library)
    except _ARCHIVE_ERRORS as exc:
        yield _broken_entry(name, exc)


def _nested_archive(name: str, size: int, open_member: Callable[[], IO[bytes]], library: str) -> Iterator[Entry]:
    """An archive project that is itself a member of an archive root.

    A tar streams straight from the outer member; a zip needs random access,
    so it is read into memory, up to MAX_NESTED_ARCHIVE_SIZE.
    """
    try:
        member = open_member()
    except _ARCHIVE_ERRORS as exc:
        yield _broken_entry(name, exc)
        return
    with member:
        if name.lower().endswith(".zip"):
            if size > MAX_NESTED_ARCHIVE_SIZE:
                yield Entry(_display(name), size, "", "too large", None, functools.partial(_refuse, "too large"))
                return
            try:
                data = member.read()
            except _ARCHIVE_ERRORS as exc:
                yield _broken_entry(name, exc)
                return
            yield from _zip_entries(data, name, library)
        else:
            yield from _tar_entries(member, name, library)


# tar roots -------------------------------------------------------------------


class _Window:
    """Whether a tar root's project is still the one its stream is positioned on."""

    def __init__(self) -> None:
        self.open = True


def _windowed(window: _Window, name: str, entries: Callable[[], Iterator[Entry]]) -> Iterator[Entry]:
    if not window.open:
        raise EntryError(
            f"project {name!r} comes from a streamed tar root; "
            "iterate its entries before advancing discover()"
        )
    yield from entries()


def _tar_root(location: str, root_name: str, library: str) -> Iterator[Project]:
    base = os.path.basename(location)
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield _error_project(root_name, location, _broken_entry(base, exc.strerror or str(exc)))
        return
    with handle:
        try:
            archive = _open_tar_stream(handle)
        except _ARCHIVE_ERRORS as exc:
            yield _error_project(root_name, location, _broken_entry(base, exc))
            return
        with archive:
            stream = _TarStream(archive)
            while (item := stream.peek()) is not None:
                if isinstance(item, str):
                    stream.take()
                    yield _error_project(root_name, location, _broken_entry(base, item))
                    return
                head = _member_head(item.name)
                if head is None or head.startswith("."):
                    stream.take()
                    continue
                project = _tar_root_project(stream, item, head, f"{location}!{head}", base, library)
                if project is None:
                    continue
                window = _Window()
                yield dataclasses.replace(
                    project, _list=functools.partial(_windowed, window, project.name, project._list)
                )
                window.open = False
                # Skip what the caller left unread of this project.
                while (rest := stream.peek()) is not None and not isinstance(rest, str):
                    if _member_head(rest.name) != head:
                        break
                    stream.take()


def _tar_root_project(
    stream: _TarStream, item: tarfile.TarInfo, head: str, origin: str, base: str, library: str
) -> Project | None:
    if _member_parts(item.name) == (head,) and not item.isdir():
        stream.take()
        stem = archive_stem(head)
        if stem is not None and item.isreg():
            archive = stream.archive

            def open_member() -> IO[bytes]:
                handle = archive.extractfile(item)
                if handle is None:
                    raise tarfile.ExtractError("not a regular file")
                return handle

            return Project(_display(stem), origin,
                           functools.partial(_nested_archive, head, item.size, open_member, library))
        member = _tar_member(stream.archive, item)
        if member is None or not _is_source_name(head):
            return None
        return Project(_display(head), origin,
                       lambda: _member_entries((member,), (), library, None))
    return Project(_display(head), origin, functools.partial(_tar_run, stream, head, base, library))
