"""Tar archives, compressed or not, read in a single streaming pass through `tarfile`.

Streaming has consequences that callers must respect: a tar project's entries
come in archive order, not sorted, and an entry's `read` only works until the
iterator advances (until then it can be called again: the bytes are held while
the stream is at the member, and only that member's). A tar member is
classified before the members after it are seen, so the rules that look inside
a directory (a `pyvenv.cfg`, an activate script, an `__init__.py`) fall back to
directory names alone (see `classify`).
"""

from __future__ import annotations

import bz2
import dataclasses
import functools
import gzip
import io
import lzma
import tarfile
from collections.abc import Iterator
from typing import IO

from impactscope.corpus.archives.members import End, Member, entry_error, member_entry
from impactscope.corpus.classification import classify_path, read_limit
from impactscope.corpus.entries import ARCHIVE_ERRORS, Entry, EntryError, failure, refuse
from impactscope.corpus.limits import CountingReader, LimitExceeded, Limits, RatioGuard, read_bounded
from impactscope.corpus.names import member_head, top_folder
from impactscope.reasons import Reason

def read_tar(archive: tarfile.TarFile, info: tarfile.TarInfo, limits: Limits) -> bytes:
    try:
        handle = archive.extractfile(info)
        if handle is None:
            raise EntryError("not a regular file")
        with handle:
            return read_bounded(handle, *read_limit(info.name, limits))
    except LimitExceeded as exc:
        raise entry_error(exc) from None
    except tarfile.StreamError:
        raise EntryError("tar member read after its stream moved on") from None
    except ARCHIVE_ERRORS as exc:
        raise EntryError(failure(Reason.CORRUPT_ARCHIVE, str(exc))) from None


def _tar_member(stream: TarStream, info: tarfile.TarInfo) -> Member | None:
    """The member as a file, link or special file, or None for a directory."""
    stamp = f"t{int(info.mtime)}:{info.size}"
    if info.isreg():
        return Member(info.name, info.size, stamp, functools.partial(stream.read, info))
    refused = functools.partial(refuse, Reason.ARCHIVE_LINK)
    if info.issym() or info.islnk():
        # Hard link targets are archive-relative names; symlink targets are relative to the link.
        return Member(
            info.name, info.size, stamp, refused, link=info.linkname, link_from_top=info.islnk()
        )
    if info.isdir():
        return None
    # A FIFO or device member holds no bytes; it is counted like one in a folder.
    return Member(info.name, info.size, stamp, refused, skip=Reason.SPECIAL_FILE)


def tar_entry(
    stream: TarStream, info: tarfile.TarInfo, prefix: tuple[str, ...], library: str, limits: Limits
) -> Entry | None:
    member = _tar_member(stream, info)
    if member is None:
        return None
    entry = member_entry(member, prefix)
    if entry.skip is None and entry.error is None:
        entry = dataclasses.replace(entry, skip=classify_path(entry.path, entry.size, library, None, limits))
    return entry


class TarStream:
    """One forward pass over a tar archive, with one member of look-ahead.

    `peek` gives the next member, an `End` saying why the stream ended early
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
        self._ahead: tarfile.TarInfo | End | None = None
        self._peeked = False
        self._ended = False
        self._held: tuple[tarfile.TarInfo, bytes] | None = None

    def read(self, info: tarfile.TarInfo) -> bytes:
        """The bytes of member `info`, while the stream is still at it."""
        if self._held is not None and self._held[0] is info:
            return self._held[1]
        data = read_tar(self.archive, info, self.limits)
        self._held = (info, data)
        return data

    def peek(self) -> tarfile.TarInfo | End | None:
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

    def _next(self) -> tarfile.TarInfo | End | None:
        try:
            item = self.archive.next()
        except (LimitExceeded, *ARCHIVE_ERRORS) as exc:
            return End.of(exc)
        if item is not None and self.taken >= self.limits.members:
            detail = f"listed the first {self.taken} members; the rest were not read"
            return End(self.limits.reason("members"), detail, True)
        return item

    def take(self) -> None:
        if isinstance(self.peek(), tarfile.TarInfo):
            self.taken += 1
        self._peeked = False


# Compression formats by their leading bytes, as tarfile's own "r|*" detection knows them
# (gzip, bzip2, xz and the older lzma container).
_GZIP, _BZIP2, _XZ, _LZMA_ALONE = b"\x1f\x8b", b"BZh", b"\xfd7zXZ\x00", b"\x5d\x00\x00\x80"


def open_tar_stream(source: IO[bytes], limits: Limits) -> tarfile.TarFile:
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


def tar_run(
    stream: TarStream,
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
        if isinstance(item, End):
            stream.take()
            yield item.entry(name)
            return
        if head is not None and member_head(item.name) != head:
            return
        stream.take()
        entry = tar_entry(stream, item, prefix, library, limits)
        if entry is not None:
            yield entry


def tar_entries(source: IO[bytes], name: str, library: str, limits: Limits) -> Iterator[Entry]:
    """All entries of a tar archive that is one project, in archive order."""
    try:
        archive = open_tar_stream(source, limits)
    except (LimitExceeded, *ARCHIVE_ERRORS) as exc:
        yield End.of(exc).entry(name)
        return
    with archive:
        yield from tar_run(TarStream(archive, limits), None, name, library, limits, top_folder(name))
