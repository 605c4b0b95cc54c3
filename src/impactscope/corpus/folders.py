"""The files of a folder project (or a loose file), listed in full and sorted by path.

Symbolic links are never followed out of the project (or, at the top level,
out of the root): such a link is an entry skipped as "link outside the corpus"
(its target is outside the corpus root) or "link outside the project" (inside
the root, in another project). Links to directories inside are left out, since
the directory's own files are listed where they are. A FIFO, socket or device
is never opened: it is an entry skipped as "special file" (see `corpus.files`).
"""

from __future__ import annotations

import functools
import os
import stat
from collections.abc import Iterator
from dataclasses import dataclass

from impactscope.corpus.classification import classified, read_limit
from impactscope.corpus.entries import Entry, EntryError, failed_entry, os_reason, skipped_entry
from impactscope.corpus.files import FileRefused, read_regular, within
from impactscope.corpus.limits import Limits
from impactscope.corpus.names import display, join
from impactscope.reasons import Reason


@dataclass(frozen=True)
class Bounds:
    """The resolved folders that links in a folder project must stay in."""

    project: str
    root: str

    @classmethod
    def of(cls, project: str, root: str) -> Bounds:
        return cls(os.path.realpath(project), os.path.realpath(root))

    def link_reason(self, location: str) -> Reason | None:
        """Why the link at `location` is not followed, or None if its target is in the project."""
        target = os.path.realpath(location)
        if within(target, self.project):
            return None
        return Reason.LINK_OUTSIDE_PROJECT if within(target, self.root) else Reason.LINK_OUTSIDE_CORPUS


def read_path(location: str, limit: int, reason: Reason) -> bytes:
    try:
        return read_regular(location, limit, reason=reason)
    except FileRefused as exc:
        raise EntryError(exc.detail, exc.reason) from None
    except OSError as exc:
        raise EntryError(os_reason(exc)) from None


def _file_entry(path: str, location: str, info: os.stat_result, limits: Limits) -> Entry:
    """A regular file; `location` is read without following a link (resolve links first)."""
    stamp = f"m{info.st_mtime_ns}:{info.st_size}"
    shown = display(path)
    read = functools.partial(read_path, location, *read_limit(shown, limits))
    return Entry(shown, info.st_size, stamp, None, None, read)


def _stat_stamp(location: str) -> tuple[int, str]:
    info = os.lstat(location)
    return info.st_size, f"m{info.st_mtime_ns}:{info.st_size}"


def _link_entry(path: str, location: str, bounds: Bounds, limits: Limits) -> Entry | None:
    """A symbolic link inside a folder project, or None for a link to a directory
    inside it (whose files are listed where they are)."""
    outside = bounds.link_reason(location)
    if outside is not None:
        return skipped_entry(display(path), *_stat_stamp(location), outside)
    target = os.path.realpath(location)
    try:
        info = os.stat(target)
    except OSError:  # dangling, or a loop (realpath stops on loops instead of following them)
        return failed_entry(display(path), Reason.BROKEN_LINK)
    if stat.S_ISDIR(info.st_mode):
        return None
    if not stat.S_ISREG(info.st_mode):
        return skipped_entry(display(path), *_stat_stamp(location), Reason.SPECIAL_FILE)
    return _file_entry(path, target, info, limits)


def _walk(top: str, bounds: Bounds, limits: Limits) -> Iterator[Entry]:
    """Every file under `top`, unclassified, folder by folder in name order."""
    pending = [("", top)]
    while pending:
        relative, directory = pending.pop()
        try:
            with os.scandir(directory) as listing:
                # Name order, so that which of two names shown alike gets a suffix is stable.
                children = sorted(listing, key=lambda child: child.name)
        except OSError as exc:
            yield failed_entry(display(relative or "."), f"{Reason.UNREADABLE_DIRECTORY}: {exc.strerror or exc}")
            continue
        subfolders = []
        for child in children:
            path = join(relative, child.name)
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
                    yield skipped_entry(display(path), *_stat_stamp(child.path), Reason.SPECIAL_FILE)
            except OSError as exc:
                yield failed_entry(display(path), os_reason(exc))
        pending.extend(reversed(subfolders))


def folder_entries(top: str, root: str, library: str, limits: Limits) -> Iterator[Entry]:
    yield from classified(_walk(top, Bounds.of(top, root), limits), library, limits)


def file_entries(location: str, name: str, library: str, limits: Limits) -> Iterator[Entry]:
    try:
        info = os.stat(location)
        if stat.S_ISREG(info.st_mode):
            entry = _file_entry(name, os.path.realpath(location), info, limits)
        else:
            entry = skipped_entry(display(name), 0, "", Reason.SPECIAL_FILE)
    except OSError as exc:
        entry = failed_entry(display(name), os_reason(exc))
    yield from classified((entry,), library, limits)
