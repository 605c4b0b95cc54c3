"""Find the projects in corpus roots, without unpacking (`discover`).

A root is a directory or an archive (.zip, .whl, .tar, .tar.gz, .tgz,
.tar.bz2, .tar.xz). Each immediate child of a root is one project: a folder
(named by the folder), an archive (named by its file name without the archive
extension) or a loose `.py` / `.ipynb` file (named by its file name). Hidden
children (names starting with ".") and other loose files are not projects.
With `single=True` each root is itself one project. A wheel given as a root
is always one project, as if `single` were set: it holds exactly one
distribution (its package folders and its `.dist-info` belong together), and
it is then named as it would be in a folder of wheels.

Archives are read in place (see `corpus.archives`); folders are listed by
`corpus.folders`; every file of a project comes out as an `Entry` (see
`corpus.entries`), including the ones that should not be read (see
`corpus.classification`), so that totals can account for each file.

A tar *root* is streamed once for all its projects, so its projects come in
archive order, and each project's entries must be consumed before `discover`
is advanced (afterwards `entries()` raises EntryError); a first pass over the
headers finds projects whose members are not all together (a folder member
after another project's members): those are gathered in memory as the stream
passes them and come, whole, after their last member, so that no project is
split in two.

Folder and zip projects are listed in full first, so their entries come sorted
by path, can be listed again at any time, and stay readable afterwards.
"""

from __future__ import annotations

import contextlib
import dataclasses
import functools
import os
import tarfile
import zipfile
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import IO

from impactscope.corpus.archives.members import End
from impactscope.corpus.archives.nested import archive_file_entries, nested_archive
from impactscope.corpus.archives.tar import TarStream, open_tar_stream, tar_entry, tar_run
from impactscope.corpus.archives.zip import cut_of, open_zip, zip_dir, zip_listing
from impactscope.corpus.classification import classify
from impactscope.corpus.entries import (
    ARCHIVE_ERRORS,
    CorpusError,
    Entry,
    EntryError,
    Project,
    corrupt_entry,
    failed_entry,
    hold,
    may_be_read,
    os_reason,
    replaying,
    skipped_entry,
)
from impactscope.corpus.folders import Bounds, file_entries, folder_entries
from impactscope.corpus.limits import DEFAULT_LIMITS, LimitExceeded, Limits
from impactscope.corpus.names import (
    ARCHIVE_SUFFIXES,
    SOURCE_SUFFIXES,
    archive_stem,
    display,
    is_source_name,
    is_wheel_name,
    is_zip_name,
    member_head,
    member_parts,
)
from impactscope.reasons import Reason


__all__ = [
    "ARCHIVE_SUFFIXES",
    "SOURCE_SUFFIXES",
    "CorpusError",
    "Entry",
    "NotAProject",
    "EntryError",
    "Limits",
    "Project",
    "archive_stem",
    "check_roots",
    "classify",
    "discover",
    "survey",
]

_NOT_A_PROJECT = "not a project (a loose file that is neither source nor archive)"



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


@dataclass(frozen=True)
class NotAProject:
    """A root-level item that is not a project (`reason` says why), or the part of an archive
    root past a bound. `where` is its path, `archive!member` inside an archive root."""

    where: str
    reason: str


def survey(
    roots: Sequence[str | os.PathLike[str]],
    *,
    single: bool = False,
    library: str,
    limits: Limits = DEFAULT_LIMITS,
) -> Iterator[Project | NotAProject]:
    """Each root's projects, root by root, and in their place the items that are not projects.

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
    bound, come as `NotAProject`.
    """
    check_roots(roots)
    names = _Names()
    for root in roots:
        location = os.fspath(root)
        root_name = _root_name(location)
        found: Iterable[Project | NotAProject]
        if single or (is_wheel_name(location) and not os.path.isdir(location)):
            found = (_single_project(location, root_name, library, limits),)
        elif os.path.isdir(location):
            found = _directory_root(location, library, limits)
        elif is_zip_name(location):
            found = _zip_root(location, root_name, library, limits)
        else:
            found = _tar_root(location, root_name, library, limits)
        for item in found:
            if isinstance(item, Project):
                item = dataclasses.replace(item, name=names.claim(item.name, root_name), limits=limits)
            yield item


def discover(
    roots: Sequence[str | os.PathLike[str]],
    *,
    single: bool = False,
    library: str,
    limits: Limits = DEFAULT_LIMITS,
) -> Iterator[Project]:
    """The projects of `survey`, for callers that have no use for what is not a project."""
    for item in survey(roots, single=single, library=library, limits=limits):
        if isinstance(item, Project):
            yield item


def _single_project(location: str, root_name: str, library: str, limits: Limits) -> Project:
    if os.path.isdir(location):
        entries = functools.partial(folder_entries, location, location, library, limits)
        return Project(root_name, location, entries)
    entries = functools.partial(archive_file_entries, location, os.path.basename(location), library, limits)
    return Project(root_name, location, entries)


# directory roots ---------------------------------------------------------------


def _directory_root(root: str, library: str, limits: Limits) -> Iterator[Project | NotAProject]:
    bounds = Bounds.of(root, root)
    try:
        with os.scandir(root) as listing:
            children = sorted(listing, key=lambda child: child.name)
    except OSError as exc:
        raise CorpusError(f"cannot list corpus root {root!r}: {exc.strerror or exc}") from None
    projects = []
    for child in children:
        where = os.path.join(root, child.name)
        if child.name.startswith("."):
            yield NotAProject(where, "hidden")
            continue
        project = _directory_child(child, where, root, bounds, library, limits)
        if project is not None:
            projects.append(project)
        else:
            yield NotAProject(where, _not_a_project(child))
    projects.sort(key=lambda project: project.name)  # stable: equal names keep file-name order
    yield from projects


def _not_a_project(child: os.DirEntry[str]) -> str:
    if child.is_symlink() and child.is_dir():
        return "link to a folder inside the root"
    if not child.is_file():
        return "not a regular file"
    return _NOT_A_PROJECT


def _directory_child(
    child: os.DirEntry[str], origin: str, root: str, bounds: Bounds, library: str, limits: Limits
) -> Project | None:
    stem = archive_stem(child.name)
    if child.is_symlink():
        outside = bounds.link_reason(child.path)
        if outside is not None:
            if child.is_dir() or stem is not None or is_source_name(child.name):
                entry = skipped_entry(display(child.name), 0, "", outside)
                return Project(display(stem or child.name), origin, replaying(entry))
            return None
        if child.is_dir():
            return None  # the directory it names is a project of its own
    if child.is_dir():
        entries = functools.partial(folder_entries, child.path, root, library, limits)
        return Project(display(child.name), origin, entries)
    if not child.is_file():
        return None
    if stem is not None:
        entries = functools.partial(archive_file_entries, child.path, child.name, library, limits)
        return Project(display(stem), origin, entries)
    if is_source_name(child.name):
        entries = functools.partial(file_entries, child.path, child.name, library, limits)
        return Project(display(child.name), origin, entries)
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
            with open_zip(self.location, self.limits) as archive:
                yield archive


def _zip_root(location: str, root_name: str, library: str, limits: Limits) -> Iterator[Project | NotAProject]:
    try:
        archive = open_zip(location, limits)
    except ARCHIVE_ERRORS as exc:
        yield Project(root_name, location, replaying(corrupt_entry(os.path.basename(location), exc)))
        return
    shared = _SharedZip(location, limits)
    with archive:
        cut = cut_of(archive)
        if cut is not None:
            yield NotAProject(location, f"{limits.reason('members')}: {cut.note()}")
        groups: dict[str, list[zipfile.ZipInfo]] = {}
        for info in archive.infolist():
            head = member_head(info.filename)
            if head is None:
                if not (zip_dir(info) and member_parts(info.filename) == ()):  # "./" is harmless
                    yield NotAProject(f"{location}!{info.filename}", Reason.UNSAFE_PATH)
            elif head.startswith("."):
                if not zip_dir(info):
                    yield NotAProject(f"{location}!{info.filename}", "hidden")
            else:
                groups.setdefault(head, []).append(info)
        projects = []
        for head, infos in groups.items():
            project = _zip_root_project(shared, head, infos, f"{location}!{head}", library, limits)
            if project is not None:
                projects.append(project)
            else:
                yield NotAProject(f"{location}!{head}", _NOT_A_PROJECT)
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
    if len(infos) == 1 and not zip_dir(infos[0]) and member_parts(infos[0].filename) == (head,):
        stem = archive_stem(head)
        if stem is not None:
            entries = functools.partial(_zip_nested, shared, infos[0], library, limits)
            return Project(display(stem), origin, entries)
        if is_source_name(head):
            entries = functools.partial(_zip_folder, shared, infos, (), library, limits)
            return Project(display(head), origin, entries)
        return None
    entries = functools.partial(_zip_folder, shared, infos, (head,), library, limits)
    return Project(display(head), origin, entries)


def _zip_folder(
    shared: _SharedZip,
    infos: list[zipfile.ZipInfo],
    prefix: tuple[str, ...],
    library: str,
    limits: Limits,
) -> Iterator[Entry]:
    try:
        with shared.borrow() as archive:
            entries = list(zip_listing(archive, shared.location, infos, prefix, library, limits))
    except ARCHIVE_ERRORS as exc:
        entries = [corrupt_entry(os.path.basename(shared.location), exc)]
    yield from entries


def _zip_nested(shared: _SharedZip, info: zipfile.ZipInfo, library: str, limits: Limits) -> Iterator[Entry]:
    """An archive project stored in a zip root."""
    name = os.path.basename(info.filename.replace("\\", "/"))
    try:
        with shared.borrow() as archive:
            yield from nested_archive(
                name, info.file_size, lambda: archive.open(info), library, limits, info.compress_size
            )
    except ARCHIVE_ERRORS as exc:
        yield corrupt_entry(name, exc)


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
            archive = open_tar_stream(handle, limits)
        except (LimitExceeded, *ARCHIVE_ERRORS):
            return plan
        with archive:
            stream = TarStream(archive, limits)
            previous: str | None = None
            while isinstance(item := stream.peek(), tarfile.TarInfo):
                index = stream.taken
                stream.take()
                head = member_head(item.name)
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
        if not may_be_read(entry, self.limits):
            return entry
        if self.held + entry.size > self.limits.archive_bytes:
            if entry.skip is not None:
                return entry
            note = self.limits.describe("archive_bytes", self.held + entry.size)
            return skipped_entry(entry.path, entry.size, entry.stamp, self.limits.reason("archive_bytes"), note)
        entry, size = hold(entry)
        self.held += size
        return entry


def _tar_root(location: str, root_name: str, library: str, limits: Limits) -> Iterator[Project | NotAProject]:
    base = os.path.basename(location)
    plan = _tar_plan(location, limits)
    try:
        handle = open(location, "rb")
    except OSError as exc:
        yield Project(root_name, location, replaying(failed_entry(display(base), os_reason(exc))))
        return
    with handle:
        try:
            archive = open_tar_stream(handle, limits)
        except (LimitExceeded, *ARCHIVE_ERRORS) as exc:
            yield Project(root_name, location, replaying(End.of(exc).entry(base)))
            return
        with archive:
            stream = TarStream(archive, limits)
            gathered = _Gathered(limits)
            while (item := stream.peek()) is not None:
                if isinstance(item, End):
                    stream.take()
                    if item.limit:
                        yield NotAProject(location, item.detail)
                    else:
                        yield Project(root_name, location, replaying(item.entry(base)))
                    break
                head = member_head(item.name)
                if head is None or head.startswith("."):
                    stream.take()
                    if head is None and not (item.isdir() and member_parts(item.name) == ()):
                        yield NotAProject(f"{location}!{item.name}", Reason.UNSAFE_PATH)
                    elif head is not None and not item.isdir():
                        yield NotAProject(f"{location}!{item.name}", "hidden")
                    continue
                if head in plan.scattered:
                    index = stream.taken
                    stream.take()
                    entry = tar_entry(stream, item, (head,), library, limits)
                    if entry is not None:
                        gathered.add(head, entry)
                    if index == plan.last[head]:
                        held = tuple(gathered.entries.pop(head, ()))
                        yield Project(display(head), f"{location}!{head}", replaying(*held))
                    continue
                origin = f"{location}!{head}"
                project = _tar_root_project(stream, item, head, origin, library, limits, plan.count.get(head, 1))
                if project is None:
                    yield NotAProject(origin, _NOT_A_PROJECT)
                    continue
                turn = _Turn()
                guarded = functools.partial(_in_turn, turn, project.name, project._list)
                yield dataclasses.replace(project, _list=guarded)
                turn.current = False
                # Pass over whatever of this project the caller left unread.
                while isinstance(rest := stream.peek(), tarfile.TarInfo):
                    if member_head(rest.name) != head:
                        break
                    stream.take()
            # Only when the plan and the stream disagree (a bound met at another member).
            for head, entries in gathered.entries.items():
                yield Project(display(head), f"{location}!{head}", replaying(*entries))


def _tar_root_project(
    stream: TarStream,
    item: tarfile.TarInfo,
    head: str,
    origin: str,
    library: str,
    limits: Limits,
    count: int,
) -> Project | None:
    """The project that starts at `item`, a member of a tar root under top-level `head`
    that has `count` members in all."""
    if item.isdir() or member_parts(item.name) != (head,) or count > 1:
        archive_name = os.path.basename(origin.rpartition("!")[0])
        entries = functools.partial(tar_run, stream, head, archive_name, library, limits)
        return Project(display(head), origin, entries)
    stream.take()  # a top-level file alone: a project of its own
    archive = stream.archive
    stem = archive_stem(head)
    if stem is not None and item.isreg():

        def open_member() -> IO[bytes]:
            handle = archive.extractfile(item)
            if handle is None:
                raise tarfile.ExtractError("not a regular file")
            return handle

        entries = functools.partial(nested_archive, head, item.size, open_member, library, limits)
        return Project(display(stem), origin, entries)
    if not is_source_name(head):
        return None
    entry = tar_entry(stream, item, (), library, limits)
    return None if entry is None else Project(display(head), origin, replaying(entry))
