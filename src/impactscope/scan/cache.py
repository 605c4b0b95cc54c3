"""Cache keys for resumable scans, and projects that can be replayed from memory.

A file's findings depend on the other files of its project (cross-module resolution), so the unit
of reuse is the whole project. Its key covers:

- the scan settings: change-list digest, tool version, prefilter on or off, key schema;
- the project's name and origin;
- for a project that is one file on disk (an archive or a loose source file), that file's stat
  (device, inode, mtime, size), so a warm rescan never opens the archive;
- otherwise every entry's path, size, stamp (mtime+size in folders, CRC+size in zips, mtime+size
  in tars), skip reason and error.

A project whose entries cannot be listed twice or shipped to another process (one streamed out of
a tar root, one borrowing a zip root's open archive) is turned into a `Project` that replays
entries and bytes held in memory; it is picklable and lists the same entries, so it has the same
key.
"""

from __future__ import annotations

import dataclasses

import functools
import hashlib
import os
import pickle
import stat
from dataclasses import dataclass
from typing import Iterable, Iterator, Sequence

from impactscope import __version__
from impactscope.changes import ChangeList
from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.corpus.entries import Entry, EntryError, Project, hold, may_be_read, replaying
from impactscope.corpus.names import archive_stem

KEY_SCHEMA = "2"  # 2: the library source is keyed by content, not by file stamps


@dataclass(frozen=True)
class ScanSettings:
    """What besides the corpus decides a scan's results; a store made under other settings is void."""

    changes_digest: str
    tool_version: str
    prefilter: bool
    library_digest: str = ""  # content hash of the library source the scan resolves against, if any
    limits: str = ""  # the reading limits, as their repr: other limits account files otherwise

    @classmethod
    def of(cls, changes: ChangeList, *, prefilter: bool, library: str = "",
           limits: Limits = DEFAULT_LIMITS) -> "ScanSettings":
        """`library` is `scan.library.source_digest` of the change list's source ("" without one):
        editing the library changes what its surface says, so it voids the cache like the change list."""
        return cls(changes.digest, __version__, prefilter, library, repr(limits))

    @property
    def fingerprint(self) -> str:
        text = (
            f"{KEY_SCHEMA}\0{self.changes_digest}\0{self.tool_version}\0{int(self.prefilter)}"
            f"\0{self.library_digest}\0{self.limits}"
        )
        return hashlib.sha256(text.encode()).hexdigest()


def origin_stamp(origin: str) -> str | None:
    """The stat stamp of a project that is one regular file on disk, else None."""
    try:
        link = os.lstat(origin)
        info = os.stat(origin)
    except (OSError, ValueError):
        return None
    if not stat.S_ISREG(info.st_mode):
        return None
    return f"f{info.st_dev}:{info.st_ino}:{info.st_mtime_ns}:{info.st_size}/{link.st_ino}:{link.st_mtime_ns}"


def _digest(parts: Iterable[str]) -> str:
    h = hashlib.sha256()
    for part in parts:
        h.update(part.encode("utf-8", "surrogatepass"))
        h.update(b"\0")
    return h.hexdigest()


def _entry_fields(entries: Iterable[Entry]) -> Iterator[str]:
    for e in entries:
        yield f"{e.path}\x1f{e.size}\x1f{e.stamp}\x1f{e.skip or ''}\x1f{e.error or ''}"


def project_key(fingerprint: str, project: Project, stamp: str | None, entries: Sequence[Entry] | None) -> str:
    """The cache key of `project`: from its file stamp if it has one, else from its entries."""
    head = (fingerprint, project.name, project.origin)
    if stamp is not None:
        return _digest((*head, "file", stamp))
    if entries is None:
        raise ValueError(f"project {project.name!r}: a key needs its file stamp or its entries")
    return _digest((*head, "entries", *_entry_fields(entries)))


def picklable(project: Project) -> bool:
    try:
        pickle.dumps(project)
    except Exception:  # noqa: BLE001 - anything unpicklable is kept in this process
        return False
    return True


def streamed(project: Project) -> bool:
    """A project read from a tar root: its members can only be read while its entries are listed."""
    root, bang, _ = project.origin.partition("!")
    stem = archive_stem(os.path.basename(root))
    return bool(bang) and stem is not None and not root.lower().endswith(".zip")


# ------------------------------------------------------------------ replayable projects


def held(entry: Entry, limits: Limits = DEFAULT_LIMITS) -> Entry:
    """`entry` with its bytes (or the error reading them) read now and held in memory."""
    if not may_be_read(entry, limits):
        # Never read by a scan; drop the reader, which may hold an open archive.
        refuse = functools.partial(_refuse, f"{entry.path}: not kept in memory")
        return dataclasses.replace(entry, read=refuse)
    return hold(entry)[0]


def _refuse(message: str) -> bytes:
    raise EntryError(message)


def replayed(project: Project, entries: Iterable[Entry]) -> Project:
    """A picklable project that lists `entries` (already held) again and again."""
    return Project(project.name, project.origin, replaying(*entries), project.limits)


__all__ = [
    "ScanSettings",
    "held",
    "origin_stamp",
    "picklable",
    "project_key",
    "replayed",
    "streamed",
]
