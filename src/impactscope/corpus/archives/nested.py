"""An archive file that is one project: on disk, or a member of an archive root (the second
level of nesting, as far as nesting goes)."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import IO

from impactscope.corpus.archives.members import End
from impactscope.corpus.archives.tar import tar_entries
from impactscope.corpus.archives.zip import zip_entries
from impactscope.corpus.entries import ARCHIVE_ERRORS, Entry, corrupt_entry, failed_entry, os_reason, skipped_entry
from impactscope.corpus.limits import LimitExceeded, Limits, RatioGuard, read_bounded
from impactscope.corpus.names import display, is_zip_name

def archive_file_entries(location: str, name: str, library: str, limits: Limits) -> Iterator[Entry]:
    """Entries of an archive file on disk that is one project."""
    if is_zip_name(name):
        yield from zip_entries(location, name, library, limits)
        return
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield failed_entry(display(name), os_reason(exc))
        return
    with handle:
        yield from tar_entries(handle, name, library, limits)


def nested_archive(
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
        yield skipped_entry(display(name), size, "", limits.reason("depth"), note)
        return
    zipped = is_zip_name(name)
    if zipped and size > limits.archive_bytes:
        yield skipped_entry(display(name), size, "", limits.reason("archive_bytes"), limits.describe("archive_bytes", size))
        return
    try:
        member = open_member()
    except ARCHIVE_ERRORS as exc:
        yield corrupt_entry(name, exc)
        return
    with member:
        source: IO[bytes] = member
        if compressed is not None:
            # The outer zip member is a stream of its own that can be a bomb.
            source = RatioGuard(member, lambda: compressed, limits.ratio)
        if not zipped:
            yield from tar_entries(source, name, library, limits)
            return
        try:
            data = read_bounded(source, limits.archive_bytes, limits.reason("archive_bytes"))
        except LimitExceeded as exc:
            yield End.of(exc).entry(name)
            return
        except ARCHIVE_ERRORS as exc:
            yield corrupt_entry(name, exc)
            return
    yield from zip_entries(data, name, library, limits)
