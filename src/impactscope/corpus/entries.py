"""A project of a corpus and its files: `Entry`, `Project`, and the rules every listing keeps.

Paths are unique within a project. Names that normalise alike (`./a.py` and
`a.py`, `a\\b.py` and `a/b.py`, two zip or tar members of one name) are all
kept: the first in listing order keeps the path, each later one gets `~2`,
`~3`, ... before its extension (`a~2.py`, which no longer names an importable
module) and a `note` that says why.

A listing can be replayed from memory (`replaying`), with each entry's bytes, or the error reading
them, held (`hold`): the form a streamed project takes once its stream has moved on.
"""

from __future__ import annotations

import dataclasses
import functools
import lzma
import struct
import tarfile
import zipfile
import zlib
from collections.abc import Callable, Collection, Iterable, Iterator
from dataclasses import dataclass, field

from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.corpus.names import display
from impactscope.errors import InputError
from impactscope.reasons import Reason, reason_of

# Malformed or hostile archives fail inside zipfile, tarfile and the
# decompressors with a wide range of exception types.
ARCHIVE_ERRORS: tuple[type[BaseException], ...] = (
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
    a limit reached while reading). `reason` is the file's reason, as a skip reason is."""

    def __init__(self, message: str, reason: Reason = Reason.UNREADABLE) -> None:
        super().__init__(message)
        self.reason = reason


def refuse(reason: Reason) -> bytes:
    raise EntryError(reason, reason)


@dataclass(frozen=True)
class Entry:
    """One file of a project.

    `stamp` is a cheap change-detection key: `m{mtime_ns}:{size}` for files in
    folders, `c{crc32}:{size}` for zip members, `t{mtime}:{size}` for tar
    members. `skip` is the reason not to read the file, `error` why it cannot
    be read at all (`failure`: its reason, then what went wrong); at most one
    is set. `read` returns the bytes and
    raises EntryError on failure (a read is bounded by the project's Limits);
    for tar members it only works until the iterator that produced the entry
    advances. `note` says, for people, anything unusual about the entry (a
    path given a suffix because an earlier file had it, what a limit left out).
    """

    path: str
    size: int
    stamp: str
    skip: Reason | None
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
        return unique_paths(self._list())


def unique_paths(entries: Iterable[Entry], reserved: Collection[str] = frozenset()) -> Iterator[Entry]:
    """`entries` with each path that was already listed given a free `~N` suffix and a note.
    A suffixed path avoids the `reserved` ones too (the paths of a listing known in full, so
    that a file really named `a~2.py` keeps its name)."""
    taken: set[str] = set()
    for entry in entries:
        if entry.path in taken:
            path = _free_path(entry.path, _Either(taken, reserved))
            note = f"a file listed earlier has the same path {entry.path!r}; this one is listed as {path!r}"
            entry = dataclasses.replace(entry, path=path, note=add_note(entry.note, note))
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


def add_note(note: str, more: str) -> str:
    """A file's note (a renamed duplicate, what a limit left out) and what happened to it."""
    return "; ".join(part for part in (note, more) if part)


def skipped_entry(path: str, size: int, stamp: str, reason: Reason, note: str = "") -> Entry:
    return Entry(path, size, stamp, reason, None, functools.partial(refuse, reason), note)


def failed_entry(path: str, error: str, size: int = 0, stamp: str = "") -> Entry:
    """An entry that cannot be read; `error` is a `failure` (a Reason alone is one)."""
    return Entry(path, size, stamp, None, error, functools.partial(_refuse_with, error, failure_reason(error)))


def corrupt_entry(archive_name: str, problem: BaseException | str) -> Entry:
    detail = problem if isinstance(problem, str) else (str(problem) or type(problem).__name__)
    return failed_entry(display(archive_name), failure(Reason.CORRUPT_ARCHIVE, detail))


def os_reason(exc: OSError) -> str:
    return failure(Reason.CANNOT_READ, str(exc.strerror or exc))


def failure(reason: Reason, detail: str) -> str:
    """An entry's `error`: its reason, then what went wrong, for people."""
    return f"{reason}: {detail}"


def failure_reason(error: str) -> Reason | str:
    """The reason a file is counted under, from an entry's `error` (see `failure`)."""
    return reason_of(error.split(":", 1)[0])



def replaying(*entries: Entry) -> Callable[[], Iterator[Entry]]:
    """A listing that gives `entries` again each time it is called (picklable)."""
    return functools.partial(_replay, entries)


def _replay(entries: tuple[Entry, ...]) -> Iterator[Entry]:
    return iter(entries)


def may_be_read(entry: Entry, limits: Limits = DEFAULT_LIMITS) -> bool:
    """Whether a scan might read `entry`: a source, or any file small enough to read (manifests
    and the files they include are picked by the scan's own rules, which are not repeated here)."""
    return entry.error is None and (entry.skip is None or entry.size < limits.file_bytes)


def hold(entry: Entry) -> tuple[Entry, int]:
    """`entry` with its bytes (or the error reading them) read now and held in memory, and how
    many bytes that holds. The reader, which may hold an open archive or a stream, is dropped."""
    try:
        data = entry.read()
    except EntryError as exc:
        return dataclasses.replace(entry, read=functools.partial(_refuse_with, str(exc), exc.reason)), 0
    except Exception as exc:  # noqa: BLE001 - replayed as it happened
        return dataclasses.replace(entry, read=functools.partial(_raise, exc)), 0
    return dataclasses.replace(entry, read=functools.partial(_give, data)), len(data)


def _give(data: bytes) -> bytes:
    return data


def _refuse_with(message: str, reason: Reason | str) -> bytes:
    # A new EntryError each time: pickling one would lose its reason (it is not in `args`).
    raise EntryError(message, reason)


def _raise(exc: BaseException) -> bytes:
    raise exc
