"""Open a file of a folder only when it is a regular file that stays inside the folder.

Corpus folders are read through these checks, and so can a library source folder be:

- a FIFO, socket or device is never opened: opening a FIFO blocks until a writer comes, and a
  device can be read forever;
- a symbolic link is followed only when its target lies inside the boundary (the corpus root,
  the project, the library source), so a link cannot make a scan read or report a file from
  elsewhere on the machine; links that loop end as "broken link" (`os.path.realpath` stops on
  a loop instead of following it);
- the open itself asks for O_NONBLOCK and O_NOFOLLOW and checks the opened descriptor with
  fstat, so a file swapped for a FIFO or a link after it was listed is refused as well;
- the read is bounded (`limits.read_bounded`): a file that grows past its limit stops there.
"""

from __future__ import annotations

import os
import stat

from impactscope.corpus.limits import LimitExceeded, read_bounded
from impactscope.errors import InputError
from impactscope.reasons import Reason

__all__ = ["FileRefused", "read_regular", "refusal", "within"]

# O_NONBLOCK: opening a FIFO (swapped in after listing) returns at once instead of blocking.
# O_NOFOLLOW: a link swapped in at the last step is refused (ELOOP) instead of followed.
_OPEN_FLAGS = (
    os.O_RDONLY
    | getattr(os, "O_NONBLOCK", 0)
    | getattr(os, "O_NOFOLLOW", 0)
    | getattr(os, "O_CLOEXEC", 0)
    | getattr(os, "O_BINARY", 0)
)


class FileRefused(InputError):
    """A file that is not read: `reason` is a short stable key (Reason.SPECIAL_FILE, a limit's
    reason, a link's reason; the library source's reader passes labels of its own), `detail`
    says what and where, for people."""

    def __init__(self, reason: str, detail: str) -> None:
        super().__init__(reason, detail)
        self.reason = reason
        self.detail = detail

    def __str__(self) -> str:
        return self.detail


def within(path: str, boundary: str) -> bool:
    """Whether `path` is `boundary` or lies under it (both already resolved)."""
    return path == boundary or path.startswith(boundary.rstrip(os.sep) + os.sep)


def refusal(path: str, boundary: str, *, outside: str = Reason.LINK_OUTSIDE_CORPUS) -> str | None:
    """Why the file or folder at `path` must not be opened, or None.

    `boundary` is the resolved folder (`os.path.realpath`) that links must stay in; `outside`
    is the reason given to a link that leaves it. A regular file, a folder, or a link to one
    inside the boundary is fine; anything else is a special file or a broken link. Raises OSError
    when `path` itself cannot be looked at.
    """
    info = os.lstat(path)
    if stat.S_ISLNK(info.st_mode):
        if not within(os.path.realpath(path), boundary):
            return outside
        try:
            info = os.stat(path)
        except OSError:  # dangling, or a loop
            return Reason.BROKEN_LINK
    if stat.S_ISREG(info.st_mode) or stat.S_ISDIR(info.st_mode):
        return None
    return Reason.SPECIAL_FILE


def read_regular(
    path: str,
    limit: int,
    *,
    reason: str = Reason.TOO_LARGE,
    boundary: str | None = None,
    outside: str = Reason.LINK_OUTSIDE_CORPUS,
) -> bytes:
    """The bytes of the regular file at `path`, at most `limit` of them.

    With `boundary`, `path` may be a link: its target is read if it lies inside the boundary.
    Without it, a link at the last step of `path` is refused. Raises FileRefused for a special
    file, a link leading outside, or more than `limit` bytes (with `reason`); OSError when the
    file cannot be opened or read.
    """
    if boundary is not None:
        target = os.path.realpath(path)
        if not within(target, boundary):
            raise FileRefused(outside, f"{path}: {outside}")
        path = target
    fd = os.open(path, _OPEN_FLAGS)
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            raise FileRefused(Reason.SPECIAL_FILE, f"{path}: {Reason.SPECIAL_FILE}, not read")
        handle = os.fdopen(fd, "rb", buffering=0)
    except BaseException:
        os.close(fd)
        raise
    with handle:
        try:
            return read_bounded(handle, limit, reason)
        except LimitExceeded as exc:
            raise FileRefused(exc.reason, f"{path}: {exc.detail}") from None
