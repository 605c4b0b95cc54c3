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
  `discover` is advanced (afterwards `entries()` raises EntryError); a first
  pass over the headers finds projects whose members are not all together
  (a folder member after another project's members): those are gathered in
  memory as the stream passes them and come, whole, after their last member,
  so that no project is split in two;
- a tar member is classified before the members after it are seen, so the
  rules that look inside a directory (a `pyvenv.cfg`, an activate script, an
  `__init__.py`) fall back to directory names alone (see `classify`).

Folder and zip projects are listed in full first, so their entries come sorted
by path, can be listed again at any time, and stay readable afterwards.

Symbolic links are never followed out of the project (or, at the top level,
out of the root): such a link is an entry skipped as "link outside the corpus"
(its target is outside the corpus root) or "link outside the project" (inside
the root, in another project). Links to directories inside are left out, since
the directory's own files are listed where they are. A FIFO, socket or device
is never opened: it is an entry skipped as "special file" (see `corpus.files`).

Hostile input is bounded by a `Limits` value (see `corpus.limits`): bytes read
per file and member (counted while reading, whatever a header says),
decompression ratio, members per archive, nesting depth. A bound that is
reached gives the entry, or one entry standing for the rest of an archive, its
own skip reason; nothing is raised.

Paths are unique within a project. Names that normalise alike (`./a.py` and
`a.py`, `a\\b.py` and `a/b.py`, two zip or tar members of one name) are all
kept: the first in listing order keeps the path, each later one gets `~2`,
`~3`, ... before its extension (`a~2.py`, which no longer names an importable
module) and a `note` that says why. File
names that are not valid UTF-8 are shown with the bad bytes escaped (`\\xff`),
so that two different names never show alike.
"""

from __future__ import annotations

import bz2
import contextlib
import dataclasses
import functools
import gzip
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

from impactscope.corpus.files import SPECIAL_FILE, FileRefused, read_regular, refusal, within
from impactscope.corpus.limits import (
    DEFAULT_LIMITS,
    RATIO_FLOOR,
    CountingReader,
    LimitExceeded,
    Limits,
    RatioGuard,
    read_bounded,
)
from impactscope.errors import InputError

__all__ = [
    "ARCHIVE_SUFFIXES",
    "MAX_FILE_SIZE",
    "SOURCE_SUFFIXES",
    "CorpusError",
    "Entry",
    "EntryError",
    "Limits",
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
# The default bound on a file read whole (Limits.file_bytes).
MAX_FILE_SIZE = DEFAULT_LIMITS.file_bytes

LINK_OUTSIDE_CORPUS = "link outside the corpus"
LINK_OUTSIDE_PROJECT = "link outside the project"

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


class CorpusError(InputError):
    """A corpus root that cannot be used: missing, or neither a directory nor an archive."""


class EntryError(InputError):
    """Raised by `Entry.read` when the bytes cannot be had (unreadable file, corrupt member,
    a limit reached while reading). `reason` is a short stable key, as skip reasons are."""

    def __init__(self, message: str, reason: str = "unreadable") -> None:
        super().__init__(message)
        self.reason = reason


def _refuse(reason: str) -> bytes:
    raise EntryError(reason, reason)


@dataclass(frozen=True)
class Entry:
    """One file of a project.

    `stamp` is a cheap change-detection key: `m{mtime_ns}:{size}` for files in
    folders, `c{crc32}:{size}` for zip members, `t{mtime}:{size}` for tar
    members. `skip` is the reason not to read the file, `error` the reason it
    cannot be read at all; at most one is set. `read` returns the bytes and
    raises EntryError on failure (a read is bounded by the project's Limits);
    for tar members it only works until the iterator that produced the entry
    advances. `note` says, for people, anything unusual about the entry (a
    path given a suffix because an earlier file had it, what a limit left out).
    """

    path: str
    size: int
    stamp: str
    skip: str | None
    error: str | None
    read: Callable[[], bytes] = field(repr=False, compare=False)
    note: str = ""


@dataclass(frozen=True)
class Project:
    """One downstream project: a folder, an archive or a loose file in a corpus root.

    `origin` says where it came from, for people: the path of the folder,
    archive or file, or `archive!member` for a project inside an archive root.
    `limits` are the bounds it is read under.
    """

    name: str
    origin: str
    _list: Callable[[], Iterator[Entry]] = field(repr=False, compare=False)
    limits: Limits = DEFAULT_LIMITS

    def entries(self) -> Iterator[Entry]:
        """Every file of the project, in path order (archive order for tar), paths unique."""
        return _unique(self._list())


def _unique(entries: Iterable[Entry], reserved: Collection[str] = frozenset()) -> Iterator[Entry]:
    """`entries` with each path that was already listed given a free `~N` suffix and a note.
    A suffixed path avoids the `reserved` ones too (the paths of a listing known in full, so
    that a file really named `a~2.py` keeps its name)."""
    taken: set[str] = set()
    for entry in entries:
        if entry.path in taken:
            path = _free_path(entry.path, _Either(taken, reserved))
            note = f"a file listed earlier has the same path {entry.path!r}; this one is listed as {path!r}"
            entry = dataclasses.replace(entry, path=path, note=_also(entry.note, note))
        taken.add(entry.path)
        yield entry


class _Either:
    """Membership in either of two collections, without joining them."""

    def __init__(self, first: Collection[str], second: Collection[str]) -> None:
        self.first, self.second = first, second

    def __contains__(self, item: object) -> bool:
        return item in self.first or item in self.second


def _free_path(path: str, taken: _Either | Collection[str]) -> str:
    """`path` with `~N` (N = 2, 3, ...) before its extension, the first that is not taken."""
    folder, slash, name = path.rpartition("/")
    dot = name.rfind(".")
    stem, suffix = (name[:dot], name[dot:]) if dot > 0 else (name, "")
    repeat = 2
    while (candidate := f"{folder}{slash}{stem}~{repeat}{suffix}") in taken:
        repeat += 1
    return candidate


def _also(note: str, more: str) -> str:
    return f"{note}; {more}" if note else more


def _skipped(path: str, size: int, stamp: str, reason: str, note: str = "") -> Entry:
    return Entry(path, size, stamp, reason, None, functools.partial(_refuse, reason), note)


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
    tarfile as surrogate escapes) are shown escaped (`\\xff`), so reports can
    encode the name and two different names never show alike."""
    try:
        raw = name.encode("utf-8", "surrogateescape")
    except UnicodeEncodeError:  # a surrogate no decoder made (a PAX or zip name can hold one)
        raw = name.encode("utf-8", "surrogatepass")
    return raw.decode("utf-8", "backslashreplace")


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
    path: str,
    size: int,
    *,
    library: str,
    siblings: Collection[str] | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> str | None:
    """The reason not to read the file at `path` (POSIX, relative to its project), or None.

    `siblings` are the paths of all files in the project. The rules, first
    match wins: "version control", "cache", "node modules", "virtual
    environment", "vendored library", "not source", then the size bounds of
    `limits`: "notebook too large" for a notebook over `notebook_bytes`, "too
    large" for another file over `file_bytes`. (A notebook's size is mostly
    outputs, so `sources` bounds the code it holds separately.)

    Without `siblings` (as in a tar stream, where later members are not known
    yet) only names count: a virtual environment is any directory named
    `.venv`, `venv` or `env` or under `site-packages` / `dist-packages`, and
    any directory named `library` is a vendored copy, without looking for
    `pyvenv.cfg`, activate scripts or `__init__.py`.
    """
    layout = None if siblings is None else _Layout.of(siblings, library)
    return _classify(path, size, library, layout, limits)


def _classify(
    path: str, size: int, library: str, layout: _Layout | None, limits: Limits = DEFAULT_LIMITS
) -> str | None:
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
    return _size_reason(parts[-1], size, limits)


def _size_reason(name: str, size: int, limits: Limits) -> str | None:
    name_limit = "notebook_bytes" if name.endswith(".ipynb") else "file_bytes"
    return limits.reason(name_limit) if size > getattr(limits, name_limit) else None


def _read_limit(path: str, limits: Limits) -> tuple[int, str]:
    """The most bytes `Entry.read` returns for the file at `path`, and the reason beyond it."""
    name_limit = "notebook_bytes" if path.endswith(".ipynb") else "file_bytes"
    return getattr(limits, name_limit), limits.reason(name_limit)


def _classified(
    entries: Iterable[Entry],
    library: str,
    limits: Limits,
    late: Callable[[Entry], tuple[str, str] | None] | None = None,
) -> Iterator[Entry]:
    """Entries in path order, each readable one given its skip reason: the classification's,
    else `late`'s (a reason and a note known without reading, such as a declared ratio)."""
    ordered = sorted(entries, key=lambda entry: entry.path)
    ordered = list(_unique(ordered, reserved={entry.path for entry in ordered}))
    readable = [entry for entry in ordered if entry.skip is None and entry.error is None]
    layout = _Layout.of((entry.path for entry in readable), library)
    for entry in ordered:
        if entry.skip is None and entry.error is None:
            reason = _classify(entry.path, entry.size, library, layout, limits)
            if reason is not None:
                entry = dataclasses.replace(entry, skip=reason)
            elif late is not None and (found := late(entry)) is not None:
                entry = dataclasses.replace(entry, skip=found[0], note=_also(entry.note, found[1]))
        yield entry


# ------------------------------------------------------------------ folders


@dataclass(frozen=True)
class _Bounds:
    """The resolved folders that links in a folder project must stay in."""

    project: str
    root: str

    @classmethod
    def of(cls, project: str, root: str) -> _Bounds:
        return cls(os.path.realpath(project), os.path.realpath(root))

    def link_reason(self, location: str) -> str | None:
        """Why the link at `location` is not followed, or None if its target is in the project."""
        target = os.path.realpath(location)
        if within(target, self.project):
            return None
        return LINK_OUTSIDE_PROJECT if within(target, self.root) else LINK_OUTSIDE_CORPUS


def _read_path(location: str, limit: int, reason: str) -> bytes:
    try:
        return read_regular(location, limit, reason=reason)
    except FileRefused as exc:
        raise EntryError(exc.detail, exc.reason) from None
    except OSError as exc:
        raise EntryError(_os_reason(exc)) from None


def _file_entry(path: str, location: str, info: os.stat_result, limits: Limits) -> Entry:
    """A regular file; `location` is read without following a link (resolve links first)."""
    stamp = f"m{info.st_mtime_ns}:{info.st_size}"
    shown = _display(path)
    read = functools.partial(_read_path, location, *_read_limit(shown, limits))
    return Entry(shown, info.st_size, stamp, None, None, read)


def _stat_stamp(location: str) -> tuple[int, str]:
    info = os.lstat(location)
    return info.st_size, f"m{info.st_mtime_ns}:{info.st_size}"


def _link_entry(path: str, location: str, bounds: _Bounds, limits: Limits) -> Entry | None:
    """A symbolic link inside a folder project, or None for a link to a directory
    inside it (whose files are listed where they are)."""
    outside = bounds.link_reason(location)
    if outside is not None:
        return _skipped(_display(path), *_stat_stamp(location), outside)
    target = os.path.realpath(location)
    try:
        info = os.stat(target)
    except OSError:  # dangling, or a loop (realpath stops on loops instead of following them)
        return _failed(_display(path), "broken link")
    if stat.S_ISDIR(info.st_mode):
        return None
    if not stat.S_ISREG(info.st_mode):
        return _skipped(_display(path), *_stat_stamp(location), SPECIAL_FILE)
    return _file_entry(path, target, info, limits)


def _walk(top: str, bounds: _Bounds, limits: Limits) -> Iterator[Entry]:
    """Every file under `top`, unclassified, folder by folder in name order."""
    pending = [("", top)]
    while pending:
        relative, directory = pending.pop()
        try:
            with os.scandir(directory) as listing:
                # Name order, so that which of two names shown alike gets a suffix is stable.
                children = sorted(listing, key=lambda child: child.name)
        except OSError as exc:
            yield _failed(_display(relative or "."), f"unreadable directory: {exc.strerror or exc}")
            continue
        subfolders = []
        for child in children:
            path = _join(relative, child.name)
            try:
                if child.is_symlink():
                    entry = _link_entry(path, child.path, bounds, limits)
                    if entry is not None:
                        yield entry
                elif child.is_dir(follow_symlinks=False):
                    subfolders.append((path, child.path))
                elif child.is_file(follow_symlinks=False):
                    yield _file_entry(path, child.path, child.stat(follow_symlinks=False), limits)
                else:  # a FIFO, socket or device: opening a FIFO would block
                    yield _skipped(_display(path), *_stat_stamp(child.path), SPECIAL_FILE)
            except OSError as exc:
                yield _failed(_display(path), _os_reason(exc))
        pending.extend(reversed(subfolders))


def _folder_entries(top: str, root: str, library: str, limits: Limits) -> Iterator[Entry]:
    yield from _classified(_walk(top, _Bounds.of(top, root), limits), library, limits)


def _file_entries(location: str, name: str, library: str, limits: Limits) -> Iterator[Entry]:
    try:
        info = os.stat(location)
        if stat.S_ISREG(info.st_mode):
            entry = _file_entry(name, os.path.realpath(location), info, limits)
        else:
            entry = _skipped(_display(name), 0, "", SPECIAL_FILE)
    except OSError as exc:
        entry = _failed(_display(name), _os_reason(exc))
    yield from _classified((entry,), library, limits)


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
    skip: str | None = None  # known not to be read before any reading (a special file, a ratio)
    note: str = ""


def _link_reason(member: _Member, parts: tuple[str, ...], prefix: tuple[str, ...]) -> str:
    """Where an archive link points: out of the archive, out of the project, or at a member."""
    target = (member.link or "").replace("\\", "/")
    if target.startswith("/") or _DRIVE.match(target):
        return LINK_OUTSIDE_CORPUS
    resolved = [] if member.link_from_top else list(parts[:-1])
    for part in target.split("/"):
        if part == "..":
            if not resolved:
                return LINK_OUTSIDE_CORPUS
            resolved.pop()
        elif part not in ("", "."):
            resolved.append(part)
    if tuple(resolved[: len(prefix)]) != prefix:
        return LINK_OUTSIDE_PROJECT
    return "archive link"  # the target is listed, and read, as a member of its own


def _member_entry(member: _Member, prefix: tuple[str, ...]) -> Entry:
    """The unclassified entry of a member that lies under `prefix` (the project's folder)."""
    parts = _member_parts(member.name)
    if not parts:  # unsafe, or a file named like the archive's own top ("." or "/")
        raw = member.name.replace("\\", "/")
        head = "".join(f"{part}/" for part in prefix)
        path = raw[len(head) :] if head and raw.startswith(head) else raw
        return _skipped(_display(path or raw or "(unnamed member)"), member.size, member.stamp, "unsafe path")
    # Outside the project's folder, or the folder's own name given to a file: keep it whole.
    if parts[: len(prefix)] != prefix or len(parts) == len(prefix):
        prefix = ()
    path = _display("/".join(parts[len(prefix) :]))
    if member.error is not None:
        return _failed(path, member.error, member.size, member.stamp)
    if member.link is not None:
        return _skipped(path, member.size, member.stamp, _link_reason(member, parts, prefix))
    if member.skip is not None:
        return _skipped(path, member.size, member.stamp, member.skip, member.note)
    return Entry(path, member.size, member.stamp, None, None, member.read)


@dataclass(frozen=True)
class _End:
    """Why an archive's listing ended early: a bound reached (`limit`), or corruption."""

    reason: str
    detail: str
    limit: bool

    @classmethod
    def of(cls, exc: BaseException) -> _End:
        if isinstance(exc, LimitExceeded):
            return cls(exc.reason, exc.detail, True)
        return cls("corrupt archive", str(exc) or type(exc).__name__, False)

    def entry(self, archive_name: str) -> Entry:
        """The entry that stands for the rest of the archive, named after it."""
        if self.limit:
            return _skipped(_display(archive_name), 0, "", self.reason, self.detail)
        return _corrupt(archive_name, self.detail)


def _entry_error(exc: LimitExceeded) -> EntryError:
    return EntryError(exc.detail, exc.reason)


# zip -------------------------------------------------------------------------

# A zip archive: the path of a file, or the bytes of a nested archive.
_ZipSource = str | bytes

# Zip record layouts (APPNOTE.TXT, the zip format specification, sections 4.3.12 to 4.3.16).
_CENTRAL = struct.Struct("<4s6H3L5H2L")  # central directory file header, 46 bytes
_END = struct.Struct("<4s4H2LH")  # end of central directory record, 22 bytes
_END64 = struct.Struct("<4sQ2H2L4Q")  # zip64 end of central directory record, 56 bytes
_LOCATOR = struct.Struct("<4sLQL")  # zip64 end of central directory locator, 20 bytes
_END_SIG, _END64_SIG, _LOCATOR_SIG, _CENTRAL_SIG = b"PK\x05\x06", b"PK\x06\x06", b"PK\x06\x07", b"PK\x01\x02"
# Central directory bytes allowed per member on average: a record is 46 bytes plus its name,
# extra field and comment. Past `members` times this, zipfile's own parse would hold too much.
_CENTRAL_BYTES_PER_MEMBER = 1024


@dataclass(frozen=True)
class _Cut:
    """The first `kept` central directory records of an archive that has too many."""

    start: int  # where the central directory begins in the file
    records: bytes  # the records kept, as they are in the file
    kept: int
    declared: int  # members the archive says it has
    offset: int  # the central directory offset it declares (differs from `start` when prefixed)

    def tail(self) -> bytes:
        """The records kept, followed by end records that describe them alone (zip64 form,
        which zipfile reads whatever the counts)."""
        size, end64_at = len(self.records), self.start + len(self.records)
        prefix = self.start - self.offset  # bytes before the archive proper (a launcher)
        end64 = _END64.pack(_END64_SIG, 44, 45, 45, 0, 0, self.kept, self.kept, size, self.offset)
        locator = _LOCATOR.pack(_LOCATOR_SIG, 0, end64_at - prefix, 1)
        end = _END.pack(_END_SIG, 0, 0, 0xFFFF, 0xFFFF, 0xFFFFFFFF, 0xFFFFFFFF, 0)
        return self.records + end64 + locator + end

    def note(self) -> str:
        return f"listed the first {self.kept} members of the {self.declared} the archive declares"


def _zip_cut(raw: IO[bytes], limits: Limits) -> _Cut | None:
    """None when zipfile may read the archive's central directory as it is, else the cut.

    The end records are found as zipfile finds them (the last end signature in the final 64 KiB
    and 22 bytes, and a zip64 record just before it); their counts are not trusted: the records
    themselves are counted, as zipfile would parse them, until `members` (or their bytes'
    share) is passed.
    """
    size = raw.seek(0, os.SEEK_END)
    span = min(size, _END.size + 0xFFFF)
    raw.seek(size - span)
    tail = raw.read(span)
    found = tail.rfind(_END_SIG)
    if found < 0 or span - found < _END.size:
        return None  # not a zip that zipfile can open: it says so itself
    end_at = size - span + found
    _, _, _, _, declared, central_size, central_offset, _ = _END.unpack_from(tail, found)
    records_end = end_at
    if end_at >= _LOCATOR.size + _END64.size:
        raw.seek(end_at - _LOCATOR.size - _END64.size)
        block = raw.read(_LOCATOR.size + _END64.size)
        if block[_END64.size : _END64.size + 4] == _LOCATOR_SIG and block[:4] == _END64_SIG:
            fields = _END64.unpack_from(block)
            declared, central_size, central_offset = fields[7], fields[8], fields[9]
            records_end = end_at - _LOCATOR.size - _END64.size
    budget = limits.members * _CENTRAL_BYTES_PER_MEMBER
    if central_size <= limits.members * _CENTRAL.size:
        return None  # too small to hold more than `members` records
    start = records_end - central_size
    if start < 0:
        return None
    raw.seek(start)
    kept: list[bytes] = []
    used = count = 0
    while used < central_size:
        header = raw.read(_CENTRAL.size)
        if len(header) < _CENTRAL.size or header[:4] != _CENTRAL_SIG:
            break  # zipfile will report the damage when it parses the records
        name_len, extra_len, comment_len = _CENTRAL.unpack(header)[10:13]
        length = _CENTRAL.size + name_len + extra_len + comment_len
        if count == limits.members or used + length > budget:
            break
        kept.append(header + raw.read(length - _CENTRAL.size))
        used += length
        count += 1
    else:
        return None  # every record counted, and within the bounds
    if count < limits.members and central_size <= budget:
        return None  # damaged records: zipfile reports them, from a read within the budget
    return _Cut(start, b"".join(kept), count, max(declared, count), central_offset)


class _Spliced(io.RawIOBase):
    """The bytes of `raw` up to `cut`, then `tail` in place of the rest."""

    def __init__(self, raw: IO[bytes], cut: int, tail: bytes) -> None:
        self.raw = raw
        self.cut = cut
        self.tail_bytes = tail
        self.size = cut + len(tail)
        self.position = 0

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return True

    def tell(self) -> int:
        return self.position

    def seek(self, offset: int, whence: int = os.SEEK_SET) -> int:
        base = {os.SEEK_SET: 0, os.SEEK_CUR: self.position, os.SEEK_END: self.size}[whence]
        if base + offset < 0:
            raise OSError("seek before the start of the archive")
        self.position = base + offset
        return self.position

    def readinto(self, buffer: bytearray | memoryview) -> int:  # type: ignore[override]
        view = memoryview(buffer).cast("B")
        if self.position < self.cut:
            self.raw.seek(self.position)
            data = self.raw.read(min(len(view), self.cut - self.position))
        else:
            begin = self.position - self.cut
            data = self.tail_bytes[begin : begin + len(view)]
        view[: len(data)] = data
        self.position += len(data)
        return len(data)

    def close(self) -> None:
        try:
            self.raw.close()
        finally:
            super().close()


class _CappedZip(zipfile.ZipFile):
    """A zip archive read through its first central directory records only (see `_Cut`)."""

    def __init__(self, raw: IO[bytes], cut: _Cut) -> None:
        self.cut = cut
        self._view = _Spliced(raw, cut.start, cut.tail())
        super().__init__(io.BufferedReader(self._view))

    def close(self) -> None:
        try:
            super().close()
        finally:
            self._view.close()


def _open_zip(source: _ZipSource, limits: Limits) -> zipfile.ZipFile:
    raw: IO[bytes] = open(source, "rb") if isinstance(source, str) else io.BytesIO(source)
    try:
        cut = _zip_cut(raw, limits)
        if cut is not None:
            return _CappedZip(raw, cut)
        if isinstance(source, str):
            raw.close()
            return zipfile.ZipFile(source)
        return zipfile.ZipFile(raw)
    except BaseException:
        raw.close()
        raise


def _zip_dir(info: zipfile.ZipInfo) -> bool:
    # ZipInfo.is_dir fails (IndexError) on a member with an empty name.
    return info.filename.endswith("/")


def _cut_of(archive: zipfile.ZipFile) -> _Cut | None:
    return archive.cut if isinstance(archive, _CappedZip) else None


def _read_member(archive: zipfile.ZipFile, info: zipfile.ZipInfo, limit: int, reason: str, ratio: int) -> bytes:
    with archive.open(info) as handle:
        # zipfile reads no more than the declared compressed size: a sound base for the ratio.
        return read_bounded(handle, limit, reason, compressed=info.compress_size, ratio=ratio)


def _read_zip(archive: zipfile.ZipFile, source: _ZipSource, info: zipfile.ZipInfo, limits: Limits) -> bytes:
    """A member's bytes, at most the read limit of its kind: from the open archive, or from the
    archive opened again once the listing that produced the entry has finished and closed it."""
    limit, reason = _read_limit(info.filename, limits)
    try:
        if archive.fp is not None:
            return _read_member(archive, info, limit, reason, limits.ratio)
        with _open_zip(source, limits) as again:
            return _read_member(again, info, limit, reason, limits.ratio)
    except LimitExceeded as exc:
        raise _entry_error(exc) from None
    except _ARCHIVE_ERRORS as exc:
        raise EntryError(f"corrupt archive: {exc}") from None


def _declared_ratio(info: zipfile.ZipInfo, limits: Limits) -> str | None:
    """The ratio reason when a member's own header already claims more than the ratio allows."""
    if info.file_size > RATIO_FLOOR and info.file_size > limits.ratio * max(info.compress_size, 1):
        return limits.reason("ratio")
    return None


# A link target longer than any path a system allows (PATH_MAX is 4096 on Linux, from memory)
# is no link a person made.
_LINK_TARGET_BYTES = 4096


def _zip_members(
    archive: zipfile.ZipFile, source: _ZipSource, infos: Iterable[zipfile.ZipInfo], limits: Limits
) -> Iterator[tuple[zipfile.ZipInfo, _Member]]:
    for info in infos:
        if not _zip_dir(info):
            yield info, _zip_member(archive, source, info, limits)


def _zip_member(archive: zipfile.ZipFile, source: _ZipSource, info: zipfile.ZipInfo, limits: Limits) -> _Member:
    stamp = f"c{info.CRC}:{info.file_size}"
    read = functools.partial(_read_zip, archive, source, info, limits)
    if info.flag_bits & 0x1:
        return _Member(info.filename, info.file_size, stamp, read, error="encrypted archive member")
    if stat.S_ISLNK(info.external_attr >> 16):
        try:  # a zip symlink stores its target as the member's content
            raw = _read_member(archive, info, _LINK_TARGET_BYTES, "link target", limits.ratio)
            target = raw.decode("utf-8", "replace")
        except (LimitExceeded, *_ARCHIVE_ERRORS):
            target = "/"
        return _Member(info.filename, info.file_size, stamp, read, link=target)
    return _Member(info.filename, info.file_size, stamp, read)


def _zip_listing(
    archive: zipfile.ZipFile,
    source: _ZipSource,
    infos: Iterable[zipfile.ZipInfo],
    prefix: tuple[str, ...],
    library: str,
    limits: Limits,
) -> Iterator[Entry]:
    entries = []
    # Members whose own header claims more than the ratio allows, by entry (entries are alive
    # throughout, so their ids stay theirs).
    claims: dict[int, tuple[str, str]] = {}
    for info, member in _zip_members(archive, source, infos, limits):
        entry = _member_entry(member, prefix)
        if (reason := _declared_ratio(info, limits)) is not None:
            claims[id(entry)] = (reason, f"declares {info.file_size} bytes from {info.compress_size} compressed")
        entries.append(entry)
    yield from _classified(entries, library, limits, lambda entry: claims.get(id(entry)))


def _zip_entries(source: _ZipSource, name: str, library: str, limits: Limits) -> Iterator[Entry]:
    """All entries of a zip archive (or wheel) that is one project.

    They are handed out while the archive is still open, so that reading each as it comes
    (as a scan does) never opens the archive again.
    """
    try:
        archive = _open_zip(source, limits)
    except _ARCHIVE_ERRORS as exc:
        yield _corrupt(name, exc)
        return
    with archive:
        try:
            infos = archive.infolist()
            entries = list(_zip_listing(archive, source, infos, _top_folder(name), library, limits))
        except _ARCHIVE_ERRORS as exc:
            entries = [_corrupt(name, exc)]
        cut = _cut_of(archive)
        if cut is not None:
            entries.append(_skipped(_display(name), 0, "", limits.reason("members"), cut.note()))
        yield from entries


# tar -------------------------------------------------------------------------


def _read_tar(archive: tarfile.TarFile, info: tarfile.TarInfo, limits: Limits) -> bytes:
    try:
        handle = archive.extractfile(info)
        if handle is None:
            raise EntryError("not a regular file")
        with handle:
            return read_bounded(handle, *_read_limit(info.name, limits))
    except LimitExceeded as exc:
        raise _entry_error(exc) from None
    except tarfile.StreamError:
        raise EntryError("tar member read after its stream moved on") from None
    except _ARCHIVE_ERRORS as exc:
        raise EntryError(f"corrupt archive: {exc}") from None


def _tar_member(stream: _TarStream, info: tarfile.TarInfo) -> _Member | None:
    """The member as a file, link or special file, or None for a directory."""
    stamp = f"t{int(info.mtime)}:{info.size}"
    if info.isreg():
        return _Member(info.name, info.size, stamp, functools.partial(stream.read, info))
    refuse = functools.partial(_refuse, "archive link")
    if info.issym() or info.islnk():
        # Hard link targets are archive-relative names; symlink targets are relative to the link.
        return _Member(
            info.name, info.size, stamp, refuse, link=info.linkname, link_from_top=info.islnk()
        )
    if info.isdir():
        return None
    # A FIFO or device member holds no bytes; it is counted like one in a folder.
    return _Member(info.name, info.size, stamp, refuse, skip=SPECIAL_FILE)


def _tar_entry(
    stream: _TarStream, info: tarfile.TarInfo, prefix: tuple[str, ...], library: str, limits: Limits
) -> Entry | None:
    member = _tar_member(stream, info)
    if member is None:
        return None
    entry = _member_entry(member, prefix)
    if entry.skip is None and entry.error is None:
        entry = dataclasses.replace(entry, skip=_classify(entry.path, entry.size, library, None, limits))
    return entry


class _TarStream:
    """One forward pass over a tar archive, with one member of look-ahead.

    `peek` gives the next member, an `_End` saying why the stream ended early
    (corruption, or a bound: `members`, `ratio`; given once), or None at the end.
    Looking ahead moves the stream past the current member's data, so a member is
    only readable until the next `peek` after its `take`. Until then `read` may
    be called for it any number of times (a scan reads a manifest, then reads it
    again as a file): the bytes of the member last read are held, and dropped
    when the stream moves on, so at most one member's bytes are held. `taken`
    counts the members taken so far.
    """

    def __init__(self, archive: tarfile.TarFile, limits: Limits) -> None:
        self.archive = archive
        self.limits = limits
        self.taken = 0
        self._ahead: tarfile.TarInfo | _End | None = None
        self._peeked = False
        self._ended = False
        self._held: tuple[tarfile.TarInfo, bytes] | None = None

    def read(self, info: tarfile.TarInfo) -> bytes:
        """The bytes of member `info`, while the stream is still at it."""
        if self._held is not None and self._held[0] is info:
            return self._held[1]
        data = _read_tar(self.archive, info, self.limits)
        self._held = (info, data)
        return data

    def peek(self) -> tarfile.TarInfo | _End | None:
        if not self._peeked:
            self._peeked = True
            self._ahead = None
            self._held = None
            if not self._ended:
                self._ahead = self._next()
                self._ended = not isinstance(self._ahead, tarfile.TarInfo)
                # The stream is never revisited: drop what tarfile keeps for random access.
                self.archive.members.clear()
        return self._ahead

    def _next(self) -> tarfile.TarInfo | _End | None:
        try:
            item = self.archive.next()
        except (LimitExceeded, *_ARCHIVE_ERRORS) as exc:
            return _End.of(exc)
        if item is not None and self.taken >= self.limits.members:
            detail = f"listed the first {self.taken} members; the rest were not read"
            return _End(self.limits.reason("members"), detail, True)
        return item

    def take(self) -> None:
        if isinstance(self.peek(), tarfile.TarInfo):
            self.taken += 1
        self._peeked = False


# Compression formats by their leading bytes, as tarfile's own "r|*" detection knows them
# (gzip, bzip2, xz and the older lzma container).
_GZIP, _BZIP2, _XZ, _LZMA_ALONE = b"\x1f\x8b", b"BZh", b"\xfd7zXZ\x00", b"\x5d\x00\x00\x80"


def _open_tar_stream(source: IO[bytes], limits: Limits) -> tarfile.TarFile:
    """A forward-only tar reader over `source`, decompressed once, never re-opened per member.

    The decompression is ours rather than tarfile's ("r|*") so that a RatioGuard can sit
    between the decompressor and tarfile, counting bytes out against bytes in.
    """
    counted = CountingReader(source)
    buffered = io.BufferedReader(counted)
    head = buffered.peek(6)[:6]
    inner: IO[bytes]
    if head.startswith(_GZIP):
        inner = gzip.GzipFile(fileobj=buffered, mode="rb")
    elif head.startswith(_BZIP2):
        inner = bz2.BZ2File(buffered)
    elif head.startswith((_XZ, _LZMA_ALONE)):
        inner = lzma.LZMAFile(buffered)
    else:
        return tarfile.open(fileobj=buffered, mode="r|")
    guarded = RatioGuard(inner, lambda: counted.count, limits.ratio)
    return tarfile.open(fileobj=guarded, mode="r|")


def _tar_run(
    stream: _TarStream,
    head: str | None,
    name: str,
    library: str,
    limits: Limits,
    prefix: tuple[str, ...] = (),
) -> Iterator[Entry]:
    """Entries from the stream while members lie under `head` (all of them if None), with
    paths relative to `head`, or else to `prefix` for the members under it."""
    prefix = prefix if head is None else (head,)
    while (item := stream.peek()) is not None:
        if isinstance(item, _End):
            stream.take()
            yield item.entry(name)
            return
        if head is not None and _member_head(item.name) != head:
            return
        stream.take()
        entry = _tar_entry(stream, item, prefix, library, limits)
        if entry is not None:
            yield entry


def _tar_entries(source: IO[bytes], name: str, library: str, limits: Limits) -> Iterator[Entry]:
    """All entries of a tar archive that is one project, in archive order."""
    try:
        archive = _open_tar_stream(source, limits)
    except (LimitExceeded, *_ARCHIVE_ERRORS) as exc:
        yield _End.of(exc).entry(name)
        return
    with archive:
        yield from _tar_run(_TarStream(archive, limits), None, name, library, limits, _top_folder(name))


def _archive_file_entries(location: str, name: str, library: str, limits: Limits) -> Iterator[Entry]:
    """Entries of an archive file on disk that is one project."""
    if _is_zip_name(name):
        yield from _zip_entries(location, name, library, limits)
        return
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield _failed(_display(name), _os_reason(exc))
        return
    with handle:
        yield from _tar_entries(handle, name, library, limits)


def _nested_archive(
    name: str,
    size: int,
    open_member: Callable[[], IO[bytes]],
    library: str,
    limits: Limits,
    compressed: int | None = None,
) -> Iterator[Entry]:
    """An archive project that is itself a member of an archive root (the second level of
    nesting). `compressed` is the member's compressed size when the root is a zip.

    A tar streams straight from the outer member; a zip (or wheel) needs
    random access, so it is read into memory, up to `limits.archive_bytes`.
    """
    if limits.depth < 2:
        note = f"an archive inside an archive root; limit depth = {limits.depth}"
        yield _skipped(_display(name), size, "", limits.reason("depth"), note)
        return
    zipped = _is_zip_name(name)
    if zipped and size > limits.archive_bytes:
        yield _skipped(_display(name), size, "", limits.reason("archive_bytes"), limits.describe("archive_bytes", size))
        return
    try:
        member = open_member()
    except _ARCHIVE_ERRORS as exc:
        yield _corrupt(name, exc)
        return
    with member:
        source: IO[bytes] = member
        if compressed is not None:
            # The outer zip member is a stream of its own that can be a bomb.
            source = RatioGuard(member, lambda: compressed, limits.ratio)
        if not zipped:
            yield from _tar_entries(source, name, library, limits)
            return
        try:
            data = read_bounded(source, limits.archive_bytes, limits.reason("archive_bytes"))
        except LimitExceeded as exc:
            yield _End.of(exc).entry(name)
            return
        except _ARCHIVE_ERRORS as exc:
            yield _corrupt(name, exc)
            return
    yield from _zip_entries(data, name, library, limits)


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
    limits: Limits = DEFAULT_LIMITS,
) -> Iterator[Project]:
    """Yield the projects of each root, root by root.

    Within a directory or zip root, projects come in sorted name order; within
    a tar root, in archive order (see the module docstring). A wheel root is
    one project whatever `single` says. `library` is the
    target library's import name, used to recognise vendored copies of it.
    `limits` bound what is read (see `corpus.limits`); each project carries them.

    Project names are unique across the roots: a name already handed out (by
    an earlier root, or earlier in the same root) gets `@<root name>`
    appended, the root name being the root's base name without archive
    extension; should that be taken too, `-2`, `-3`, ... follow.

    A corrupt archive does not stop discovery: it becomes a project whose
    single entry, named after the archive file, has `error` set. Root-level
    items that are not projects, and the part of an archive root past a
    bound, are added to `ignored` as (where, reason).
    """
    check_roots(roots)
    names = _Names()
    sink: list[tuple[str, str]] = ignored if ignored is not None else []
    for root in roots:
        location = os.fspath(root)
        root_name = _root_name(location)
        projects: Iterable[Project]
        if single or (_is_wheel_name(location) and not os.path.isdir(location)):
            projects = (_single_project(location, root_name, library, limits),)
        elif os.path.isdir(location):
            projects = _directory_root(location, library, sink, limits)
        elif _is_zip_name(location):
            projects = _zip_root(location, root_name, library, sink, limits)
        else:
            projects = _tar_root(location, root_name, library, sink, limits)
        for project in projects:
            yield dataclasses.replace(project, name=names.claim(project.name, root_name), limits=limits)


def _single_project(location: str, root_name: str, library: str, limits: Limits) -> Project:
    if os.path.isdir(location):
        entries = functools.partial(_folder_entries, location, location, library, limits)
        return Project(root_name, location, entries)
    entries = functools.partial(_archive_file_entries, location, os.path.basename(location), library, limits)
    return Project(root_name, location, entries)


def _replay(entries: tuple[Entry, ...]) -> Iterator[Entry]:
    return iter(entries)


def _fixed(*entries: Entry) -> Callable[[], Iterator[Entry]]:
    return functools.partial(_replay, entries)


# directory roots ---------------------------------------------------------------


def _directory_root(
    root: str, library: str, ignored: list[tuple[str, str]], limits: Limits
) -> Iterator[Project]:
    bounds = _Bounds.of(root, root)
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
        project = _directory_child(child, where, root, bounds, library, limits)
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
    child: os.DirEntry[str], origin: str, root: str, bounds: _Bounds, library: str, limits: Limits
) -> Project | None:
    stem = archive_stem(child.name)
    if child.is_symlink():
        outside = bounds.link_reason(child.path)
        if outside is not None:
            if child.is_dir() or stem is not None or _is_source_name(child.name):
                entry = _skipped(_display(child.name), 0, "", outside)
                return Project(_display(stem or child.name), origin, _fixed(entry))
            return None
        if child.is_dir():
            return None  # the directory it names is a project of its own
    if child.is_dir():
        entries = functools.partial(_folder_entries, child.path, root, library, limits)
        return Project(_display(child.name), origin, entries)
    if not child.is_file():
        return None
    if stem is not None:
        entries = functools.partial(_archive_file_entries, child.path, child.name, library, limits)
        return Project(_display(stem), origin, entries)
    if _is_source_name(child.name):
        entries = functools.partial(_file_entries, child.path, child.name, library, limits)
        return Project(_display(child.name), origin, entries)
    return None


# zip roots -------------------------------------------------------------------


class _SharedZip:
    """A zip root's open ZipFile, shared by its projects while `discover` is on
    that root so that the central directory is read once; a project listed
    later opens the archive again for itself."""

    def __init__(self, location: str, limits: Limits) -> None:
        self.location = location
        self.limits = limits
        self.archive: zipfile.ZipFile | None = None

    @contextlib.contextmanager
    def borrow(self) -> Iterator[zipfile.ZipFile]:
        if self.archive is not None:
            yield self.archive
        else:
            with _open_zip(self.location, self.limits) as archive:
                yield archive


_NOT_A_PROJECT = "not a project (a loose file that is neither source nor archive)"


def _zip_root(
    location: str, root_name: str, library: str, ignored: list[tuple[str, str]], limits: Limits
) -> Iterator[Project]:
    try:
        archive = _open_zip(location, limits)
    except _ARCHIVE_ERRORS as exc:
        yield Project(root_name, location, _fixed(_corrupt(os.path.basename(location), exc)))
        return
    shared = _SharedZip(location, limits)
    with archive:
        cut = _cut_of(archive)
        if cut is not None:
            ignored.append((location, f"{limits.reason('members')}: {cut.note()}"))
        groups: dict[str, list[zipfile.ZipInfo]] = {}
        for info in archive.infolist():
            head = _member_head(info.filename)
            if head is None:
                if not (_zip_dir(info) and _member_parts(info.filename) == ()):  # "./" is harmless
                    ignored.append((f"{location}!{info.filename}", "unsafe path"))
            elif head.startswith("."):
                if not _zip_dir(info):
                    ignored.append((f"{location}!{info.filename}", "hidden"))
            else:
                groups.setdefault(head, []).append(info)
        projects = []
        for head, infos in groups.items():
            project = _zip_root_project(shared, head, infos, f"{location}!{head}", library, limits)
            if project is not None:
                projects.append(project)
            else:
                ignored.append((f"{location}!{head}", _NOT_A_PROJECT))
        projects.sort(key=lambda project: project.name)
        shared.archive = archive
        try:
            yield from projects
        finally:
            shared.archive = None


def _zip_root_project(
    shared: _SharedZip,
    head: str,
    infos: list[zipfile.ZipInfo],
    origin: str,
    library: str,
    limits: Limits,
) -> Project | None:
    if len(infos) == 1 and not _zip_dir(infos[0]) and _member_parts(infos[0].filename) == (head,):
        stem = archive_stem(head)
        if stem is not None:
            entries = functools.partial(_zip_nested, shared, infos[0], library, limits)
            return Project(_display(stem), origin, entries)
        if _is_source_name(head):
            entries = functools.partial(_zip_folder, shared, infos, (), library, limits)
            return Project(_display(head), origin, entries)
        return None
    entries = functools.partial(_zip_folder, shared, infos, (head,), library, limits)
    return Project(_display(head), origin, entries)


def _zip_folder(
    shared: _SharedZip,
    infos: list[zipfile.ZipInfo],
    prefix: tuple[str, ...],
    library: str,
    limits: Limits,
) -> Iterator[Entry]:
    try:
        with shared.borrow() as archive:
            entries = list(_zip_listing(archive, shared.location, infos, prefix, library, limits))
    except _ARCHIVE_ERRORS as exc:
        entries = [_corrupt(os.path.basename(shared.location), exc)]
    yield from entries


def _zip_nested(shared: _SharedZip, info: zipfile.ZipInfo, library: str, limits: Limits) -> Iterator[Entry]:
    """An archive project stored in a zip root."""
    name = os.path.basename(info.filename.replace("\\", "/"))
    try:
        with shared.borrow() as archive:
            yield from _nested_archive(
                name, info.file_size, lambda: archive.open(info), library, limits, info.compress_size
            )
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


@dataclass
class _TarPlan:
    """What a first pass over a tar root's headers tells: for each top-level name (`head`),
    how many members it has, the index of its last, and whether other members come between
    its own (`scattered`). A scattered project cannot be streamed as one run without splitting
    into two projects, so its members are gathered as the stream passes them."""

    count: dict[str, int] = field(default_factory=dict)
    last: dict[str, int] = field(default_factory=dict)
    scattered: set[str] = field(default_factory=set)


def _tar_plan(location: str, limits: Limits) -> _TarPlan:
    """Headers only, read the same way as the pass that lists the projects, so that member
    indexes agree; a corrupt or bounded archive gives the plan of what came before."""
    plan = _TarPlan()
    try:
        handle = open(location, "rb")
    except OSError:
        return plan
    with handle:
        try:
            archive = _open_tar_stream(handle, limits)
        except (LimitExceeded, *_ARCHIVE_ERRORS):
            return plan
        with archive:
            stream = _TarStream(archive, limits)
            previous: str | None = None
            while isinstance(item := stream.peek(), tarfile.TarInfo):
                index = stream.taken
                stream.take()
                head = _member_head(item.name)
                if head is not None and not head.startswith("."):
                    if head in plan.last and previous != head:
                        plan.scattered.add(head)
                    plan.last[head] = index
                    plan.count[head] = plan.count.get(head, 0) + 1
                previous = head
    return plan


class _Gathered:
    """The members of scattered tar root projects, held in memory until each project's last
    member has passed; their bytes together stay within `limits.archive_bytes`."""

    def __init__(self, limits: Limits) -> None:
        self.limits = limits
        self.entries: dict[str, list[Entry]] = {}
        self.held = 0

    def add(self, head: str, entry: Entry) -> None:
        self.entries.setdefault(head, []).append(self._hold(entry))

    def _hold(self, entry: Entry) -> Entry:
        # Bytes a scan may read: sources, and small files it reads as manifests.
        if entry.error is not None or (entry.skip is not None and entry.size >= self.limits.file_bytes):
            return entry
        if self.held + entry.size > self.limits.archive_bytes:
            if entry.skip is not None:
                return entry
            note = self.limits.describe("archive_bytes", self.held + entry.size)
            return _skipped(entry.path, entry.size, entry.stamp, self.limits.reason("archive_bytes"), note)
        try:
            data = entry.read()
        except EntryError as exc:
            return dataclasses.replace(entry, read=functools.partial(_refuse_with, str(exc), exc.reason))
        self.held += len(data)
        return dataclasses.replace(entry, read=functools.partial(_give, data))


def _give(data: bytes) -> bytes:
    return data


def _refuse_with(message: str, reason: str) -> bytes:
    raise EntryError(message, reason)


def _tar_root(
    location: str, root_name: str, library: str, ignored: list[tuple[str, str]], limits: Limits
) -> Iterator[Project]:
    base = os.path.basename(location)
    plan = _tar_plan(location, limits)
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield Project(root_name, location, _fixed(_failed(_display(base), _os_reason(exc))))
        return
    with handle:
        try:
            archive = _open_tar_stream(handle, limits)
        except (LimitExceeded, *_ARCHIVE_ERRORS) as exc:
            yield Project(root_name, location, _fixed(_End.of(exc).entry(base)))
            return
        with archive:
            stream = _TarStream(archive, limits)
            gathered = _Gathered(limits)
            while (item := stream.peek()) is not None:
                if isinstance(item, _End):
                    stream.take()
                    if item.limit:
                        ignored.append((location, item.detail))
                    else:
                        yield Project(root_name, location, _fixed(item.entry(base)))
                    break
                head = _member_head(item.name)
                if head is None or head.startswith("."):
                    stream.take()
                    if head is None and not (item.isdir() and _member_parts(item.name) == ()):
                        ignored.append((f"{location}!{item.name}", "unsafe path"))
                    elif head is not None and not item.isdir():
                        ignored.append((f"{location}!{item.name}", "hidden"))
                    continue
                if head in plan.scattered:
                    index = stream.taken
                    stream.take()
                    entry = _tar_entry(stream, item, (head,), library, limits)
                    if entry is not None:
                        gathered.add(head, entry)
                    if index == plan.last[head]:
                        held = tuple(gathered.entries.pop(head, ()))
                        yield Project(_display(head), f"{location}!{head}", _fixed(*held))
                    continue
                origin = f"{location}!{head}"
                project = _tar_root_project(stream, item, head, origin, library, limits, plan.count.get(head, 1))
                if project is None:
                    ignored.append((origin, _NOT_A_PROJECT))
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
            # Only when the plan and the stream disagree (a bound met at another member).
            for head, entries in gathered.entries.items():
                yield Project(_display(head), f"{location}!{head}", _fixed(*entries))


def _tar_root_project(
    stream: _TarStream,
    item: tarfile.TarInfo,
    head: str,
    origin: str,
    library: str,
    limits: Limits,
    count: int,
) -> Project | None:
    """The project that starts at `item`, a member of a tar root under top-level `head`
    that has `count` members in all."""
    if item.isdir() or _member_parts(item.name) != (head,) or count > 1:
        archive_name = os.path.basename(origin.rpartition("!")[0])
        entries = functools.partial(_tar_run, stream, head, archive_name, library, limits)
        return Project(_display(head), origin, entries)
    stream.take()  # a top-level file alone: a project of its own
    archive = stream.archive
    stem = archive_stem(head)
    if stem is not None and item.isreg():

        def open_member() -> IO[bytes]:
            handle = archive.extractfile(item)
            if handle is None:
                raise tarfile.ExtractError("not a regular file")
            return handle

        entries = functools.partial(_nested_archive, head, item.size, open_member, library, limits)
        return Project(_display(stem), origin, entries)
    if not _is_source_name(head):
        return None
    entry = _tar_entry(stream, item, (), library, limits)
    return None if entry is None else Project(_display(head), origin, _fixed(entry))
