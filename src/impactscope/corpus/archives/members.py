"""An archive member as an entry of its project: its path under the project's folder, a link's
fate, and the entry that stands for the rest of an archive whose listing ended early."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from impactscope.corpus.entries import Entry, EntryError, corrupt_entry, failed_entry, skipped_entry
from impactscope.corpus.limits import LimitExceeded
from impactscope.corpus.names import DRIVE, display, member_parts
from impactscope.reasons import Reason

@dataclass(frozen=True)
class Member:
    """An archive member that is a file or a link, under its archive-level name."""

    name: str
    size: int
    stamp: str
    read: Callable[[], bytes]
    link: str | None = None  # a link's target
    link_from_top: bool = False  # the target is archive-relative (tar hard links)
    error: str | None = None
    skip: Reason | None = None  # known not to be read before any reading (a special file)


def _link_reason(member: Member, parts: tuple[str, ...], prefix: tuple[str, ...]) -> Reason:
    """Where an archive link points: out of the archive, out of the project, or at a member."""
    target = (member.link or "").replace("\\", "/")
    if target.startswith("/") or DRIVE.match(target):
        return Reason.LINK_OUTSIDE_CORPUS
    resolved = [] if member.link_from_top else list(parts[:-1])
    for part in target.split("/"):
        if part == "..":
            if not resolved:
                return Reason.LINK_OUTSIDE_CORPUS
            resolved.pop()
        elif part not in ("", "."):
            resolved.append(part)
    if tuple(resolved[: len(prefix)]) != prefix:
        return Reason.LINK_OUTSIDE_PROJECT
    return Reason.ARCHIVE_LINK  # the target is listed, and read, as a member of its own


def member_entry(member: Member, prefix: tuple[str, ...]) -> Entry:
    """The unclassified entry of a member that lies under `prefix` (the project's folder)."""
    parts = member_parts(member.name)
    if not parts:  # unsafe, or a file named like the archive's own top ("." or "/")
        raw = member.name.replace("\\", "/")
        head = "".join(f"{part}/" for part in prefix)
        path = raw[len(head) :] if head and raw.startswith(head) else raw
        return skipped_entry(display(path or raw or "(unnamed member)"), member.size, member.stamp, Reason.UNSAFE_PATH)
    # Outside the project's folder, or the folder's own name given to a file: keep it whole.
    if parts[: len(prefix)] != prefix or len(parts) == len(prefix):
        prefix = ()
    path = display("/".join(parts[len(prefix) :]))
    if member.error is not None:
        return failed_entry(path, member.error, member.size, member.stamp)
    if member.link is not None:
        return skipped_entry(path, member.size, member.stamp, _link_reason(member, parts, prefix))
    if member.skip is not None:
        return skipped_entry(path, member.size, member.stamp, member.skip)
    return Entry(path, member.size, member.stamp, None, None, member.read)


@dataclass(frozen=True)
class End:
    """Why an archive's listing ended early: a bound reached (`limit`), or corruption."""

    reason: Reason
    detail: str
    limit: bool

    @classmethod
    def of(cls, exc: BaseException) -> End:
        if isinstance(exc, LimitExceeded):
            return cls(exc.reason, exc.detail, True)
        return cls(Reason.CORRUPT_ARCHIVE, str(exc) or type(exc).__name__, False)

    def entry(self, archive_name: str) -> Entry:
        """The entry that stands for the rest of the archive, named after it."""
        if self.limit:
            return skipped_entry(display(archive_name), 0, "", self.reason, self.detail)
        return corrupt_entry(archive_name, self.detail)


def entry_error(exc: LimitExceeded) -> EntryError:
    return EntryError(exc.detail, exc.reason)
