"""Zip archives and wheels (a wheel is a zip, PEP 427): listed through `zipfile`, in full and
sorted by path; a central directory with more than `members` records is cut before zipfile
parses it, and member bytes are bounded while they are read."""

from __future__ import annotations

import functools
import io
import os
import stat
import struct
import zipfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import IO

from impactscope.corpus.archives.members import Member, entry_error, member_entry
from impactscope.corpus.classification import classified, read_limit
from impactscope.corpus.entries import ARCHIVE_ERRORS, Entry, EntryError, corrupt_entry, failure, skipped_entry
from impactscope.corpus.limits import RATIO_FLOOR, LimitExceeded, Limits, read_bounded
from impactscope.corpus.names import display, top_folder
from impactscope.reasons import Reason

# A zip archive: the path of a file, or the bytes of a nested archive.
ZipSource = str | bytes

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


def open_zip(source: ZipSource, limits: Limits) -> zipfile.ZipFile:
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


def zip_dir(info: zipfile.ZipInfo) -> bool:
    # ZipInfo.is_dir fails (IndexError) on a member with an empty name.
    return info.filename.endswith("/")


def cut_of(archive: zipfile.ZipFile) -> _Cut | None:
    return archive.cut if isinstance(archive, _CappedZip) else None


def _read_member(archive: zipfile.ZipFile, info: zipfile.ZipInfo, limit: int, reason: str, ratio: int) -> bytes:
    with archive.open(info) as handle:
        # zipfile reads no more than the declared compressed size: a sound base for the ratio.
        return read_bounded(handle, limit, reason, compressed=info.compress_size, ratio=ratio)


def read_zip(archive: zipfile.ZipFile, source: ZipSource, info: zipfile.ZipInfo, limits: Limits) -> bytes:
    """A member's bytes, at most the read limit of its kind: from the open archive, or from the
    archive opened again once the listing that produced the entry has finished and closed it."""
    limit, reason = read_limit(info.filename, limits)
    try:
        if archive.fp is not None:
            return _read_member(archive, info, limit, reason, limits.ratio)
        with open_zip(source, limits) as again:
            return _read_member(again, info, limit, reason, limits.ratio)
    except LimitExceeded as exc:
        raise entry_error(exc) from None
    except ARCHIVE_ERRORS as exc:
        raise EntryError(failure(Reason.CORRUPT_ARCHIVE, str(exc))) from None


def _declared_ratio(info: zipfile.ZipInfo, limits: Limits) -> Reason | None:
    """The ratio reason when a member's own header already claims more than the ratio allows."""
    if info.file_size > RATIO_FLOOR and info.file_size > limits.ratio * max(info.compress_size, 1):
        return limits.reason("ratio")
    return None


# A link target longer than any path a system allows (PATH_MAX is 4096 on Linux, from memory)
# is no link a person made.
_LINK_TARGET_BYTES = 4096


def _zip_members(
    archive: zipfile.ZipFile, source: ZipSource, infos: Iterable[zipfile.ZipInfo], limits: Limits
) -> Iterator[tuple[zipfile.ZipInfo, Member]]:
    for info in infos:
        if not zip_dir(info):
            yield info, _zip_member(archive, source, info, limits)


def _zip_member(archive: zipfile.ZipFile, source: ZipSource, info: zipfile.ZipInfo, limits: Limits) -> Member:
    stamp = f"c{info.CRC}:{info.file_size}"
    read = functools.partial(read_zip, archive, source, info, limits)
    if info.flag_bits & 0x1:
        return Member(info.filename, info.file_size, stamp, read, error=Reason.ENCRYPTED_MEMBER)
    if stat.S_ISLNK(info.external_attr >> 16):
        try:  # a zip symlink stores its target as the member's content
            raw = _read_member(archive, info, _LINK_TARGET_BYTES, "link target", limits.ratio)
            target = raw.decode("utf-8", "replace")
        except (LimitExceeded, *ARCHIVE_ERRORS):
            target = "/"
        return Member(info.filename, info.file_size, stamp, read, link=target)
    return Member(info.filename, info.file_size, stamp, read)


def zip_listing(
    archive: zipfile.ZipFile,
    source: ZipSource,
    infos: Iterable[zipfile.ZipInfo],
    prefix: tuple[str, ...],
    library: str,
    limits: Limits,
) -> Iterator[Entry]:
    entries = []
    # Members whose own header claims more than the ratio allows, by entry (entries are alive
    # throughout, so their ids stay theirs).
    claims: dict[int, tuple[Reason, str]] = {}
    for info, member in _zip_members(archive, source, infos, limits):
        entry = member_entry(member, prefix)
        if (reason := _declared_ratio(info, limits)) is not None:
            claims[id(entry)] = (reason, f"declares {info.file_size} bytes from {info.compress_size} compressed")
        entries.append(entry)
    yield from classified(entries, library, limits, lambda entry: claims.get(id(entry)))


def zip_entries(source: ZipSource, name: str, library: str, limits: Limits) -> Iterator[Entry]:
    """All entries of a zip archive (or wheel) that is one project.

    They are handed out while the archive is still open, so that reading each as it comes
    (as a scan does) never opens the archive again.
    """
    try:
        archive = open_zip(source, limits)
    except ARCHIVE_ERRORS as exc:
        yield corrupt_entry(name, exc)
        return
    with archive:
        try:
            infos = archive.infolist()
            entries = list(zip_listing(archive, source, infos, top_folder(name), library, limits))
        except ARCHIVE_ERRORS as exc:
            entries = [corrupt_entry(name, exc)]
        cut = cut_of(archive)
        if cut is not None:
            entries.append(skipped_entry(display(name), 0, "", limits.reason("members"), cut.note()))
        yield from entries
