"""Drive a scan: change list and roots in, a results store out; resumable and parallel.

For every project discovered, the project's cache key (see `scan.cache`) is compared with the one
the results file holds from an earlier scan under the same settings; an unchanged project is
reused without reading any of its files. The rest travel in batches to an executor (this process,
a process pool, or a Dask cluster) and come back with their keys; this process alone writes the
store, committing whole projects every half second or so, so a scan that is killed and started
again redoes only uncommitted work and ends with exactly the results of an uninterrupted scan.
"""

from __future__ import annotations

import contextlib
import fcntl
import dataclasses
import itertools
import json
import os
import time
from collections import deque
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Generator, Iterable, Iterator, Sequence, Union

from impactscope.changes import ChangeList, load_change_list
from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.corpus.roots import Entry, NotAProject, Project, archive_stem, check_roots, discover, survey
from impactscope.errors import InputError
from impactscope.reasons import Reason
from impactscope.scan.cache import (
    ScanSettings,
    held,
    origin_stamp,
    picklable,
    project_key,
    replayed,
    streamed,
)
from impactscope.scan.executor import Batch, Scanned, run_inline, run_pool
from impactscope.scan.job import ScanJob
from impactscope.scan.library import library_digest, prepare_library
from impactscope.scan.progress import ScanProgress, Silent, Tally
from impactscope.store import CachedProject, ResultStore, StoreError

# A batch is sent off once it holds this many projects or this many bytes of files.
BATCH_PROJECTS = 8
BATCH_BYTES = 2_000_000
# Finished projects are committed together at most this often (and at the end, and on Ctrl-C).
COMMIT_SECONDS = 0.5
COMMIT_PROJECTS = 200


class ScanOptionError(InputError):
    """Scan options that do not fit together or are out of range."""


@dataclass(frozen=True)
class ScanSummary:
    projects: int
    files: int
    findings: int
    seconds: float
    out: Path
    reused: int = 0  # projects taken unchanged from the earlier scan in the same results file
    removed: int = 0  # projects of the earlier scan that are no longer in the corpus
    # Files by reason of failure, over the whole results file: "analysis error" (an unexpected
    # exception met on that file) and "worker died" (its project's worker process died twice).
    faults: dict[Reason, int] = dataclasses.field(default_factory=dict)

    @property
    def analysis_errors(self) -> int:
        return self.faults.get(Reason.ANALYSIS_ERROR, 0)


class _Tallier:
    """Counts for one scan run (kept by `run_scan`, never shared between runs)."""

    def __init__(self, total: int | None, display: ScanProgress) -> None:
        self.total = total
        self.display = display
        self.started = time.perf_counter()
        self.projects = self.files = self.findings = self.reused = 0

    def tally(self) -> Tally:
        return Tally(self.projects, self.total, self.files, self.reused, self.findings,
                     time.perf_counter() - self.started)

    def add(self, files: int, findings: int, *, reused: bool) -> None:
        self.projects += 1
        self.files += files
        self.findings += findings
        self.reused += int(reused)
        self.display.update(self.tally())


def count_projects(
    roots: Sequence[str | os.PathLike[str]], *, single: bool, library: str, limits: Limits = DEFAULT_LIMITS
) -> int | None:
    """The number of projects, when that is cheap: folder and zip roots list their children
    without reading files; a tar root would have to be streamed whole, so then it is unknown."""
    if single:
        return len(roots)
    total = 0
    for root in roots:
        location = os.fspath(root)
        if not os.path.isdir(location):
            stem = archive_stem(os.path.basename(location))
            if stem is None or not location.lower().endswith(".zip"):
                return None
        total += sum(1 for _ in discover([location], library=library, limits=limits))
    return total


def _weight(project: Project, entries: Sequence[Entry] | None) -> int:
    if entries is None:
        try:
            return os.stat(project.origin).st_size
        except OSError:
            return 0
    return sum(e.size for e in entries if e.skip is None and e.error is None)


@dataclass(frozen=True)
class Reused:
    """A project unchanged since the earlier scan in the same results file: its results stand."""

    name: str
    prior: CachedProject


Planned = Union[Batch, Reused, NotAProject]


def _plan(found: Iterable[Project | NotAProject], cached: dict[str, CachedProject], fingerprint: str) -> Iterator[Planned]:
    """Batches of the projects that need scanning, and the unchanged projects and the root items
    that are not projects (passed on as they are), as they are found."""
    batch: list[Project] = []
    weight = 0
    for project in found:
        if isinstance(project, NotAProject):
            yield project
            continue
        prior = cached.get(project.name)
        stamp = origin_stamp(project.origin)
        entries: list[Entry] | None = None
        if prior is None and stamp is None and not streamed(project) and picklable(project):
            # Nothing cached to compare with: the worker lists the project and keys what it listed,
            # so the listing (a walk and a stat per file) is not done twice, nor serially here.
            batch.append(project)
            if len(batch) >= BATCH_PROJECTS:
                yield tuple(batch)
                batch, weight = [], 0
            continue
        if stamp is not None:
            key = project_key(fingerprint, project, stamp, None)
            work = project
        else:
            # A streamed tar member can only be read now, while its project is being listed.
            entries = [held(e, project.limits) for e in project.entries()] if streamed(project) else list(project.entries())
            key = project_key(fingerprint, project, None, entries)
            work = replayed(project, entries)
        if prior is not None and prior.key == key:
            yield Reused(project.name, prior)
            continue
        if not picklable(work):
            # Holds an open archive: take the bytes now, so it can travel and be listed again.
            # (A streamed project holds them already; a zip root's project can be listed again.)
            again = entries if entries is not None and streamed(project) else project.entries()
            work = replayed(project, [held(e, project.limits) for e in again])
        batch.append(work)
        weight += _weight(project, entries)
        if len(batch) >= BATCH_PROJECTS or weight >= BATCH_BYTES:
            yield tuple(batch)
            batch, weight = [], 0
    if batch:
        yield tuple(batch)


def run_scan(
    changes_path: str | os.PathLike[str],
    roots: Sequence[str | os.PathLike[str]],
    out: str | os.PathLike[str],
    *,
    single: bool = False,
    jobs: int = 1,
    prefilter: bool = True,
    progress: ScanProgress | None = None,
    fresh: bool = False,
    cluster: str | None = None,
    library_source: str | os.PathLike[str] | None = None,
    library_installed: str | None = None,
    library_stubs: str | os.PathLike[str] | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> ScanSummary:
    """Scan `roots` for the changes in `changes_path` into the results file `out`.

    Unless `fresh`, an existing `out` written under the same change list, tool version and
    prefilter setting is resumed: unchanged projects are reused, the rest scanned, vanished ones
    removed. `jobs` <= 0 means one worker per core; `cluster` is a Dask scheduler address or
    "local". Raises KeyboardInterrupt after committing the finished projects.
    """
    changes = with_library(load_change_list(changes_path), library_source, library_installed, library_stubs)
    check_roots(roots)
    out = Path(out)
    _check_out(out)
    # Absolute, so that origins and cache keys do not depend on the working directory and
    # workers elsewhere (a cluster) find the corpus at the same path.
    roots = [os.path.abspath(os.fspath(root)) for root in roots]
    if cluster is not None and not cluster.strip():
        raise ScanOptionError("--cluster needs a scheduler address such as tcp://host:8786, or `local`")
    workers = jobs if jobs > 0 else (os.cpu_count() or 1)
    digest = library_digest(changes)
    settings = ScanSettings.of(changes, prefilter=prefilter, library=digest, limits=limits)
    fingerprint = settings.fingerprint
    found = _nonempty(survey(roots, single=single, library=changes.import_name, limits=limits), roots)
    lock = _exclusive(out)  # held until this process ends or closes it: one writer at a time
    try:
        if fresh:
            # The text the change list was read from (once: a pipe cannot be read twice), which
            # its digest, hence `fingerprint`, was taken of.
            store, kept = ResultStore.create(out, changes, changes.text, settings=fingerprint), False
        else:
            store, kept = ResultStore.resume(out, changes, changes.text, settings=fingerprint)
    except BaseException:
        lock.close()
        raise
    display = progress if progress is not None else Silent()
    total = None if isinstance(display, Silent) else count_projects(
        roots, single=single, library=changes.import_name, limits=limits
    )
    tallier = _Tallier(total, display)
    seen: set[str] = set()
    ignored: list[tuple[str, str]] = []  # root-level items that are not projects, as they come
    removed = 0
    faults: dict[str, int] = {}
    display.start(total)
    try:
        with contextlib.ExitStack() as stack:
            cached = store.cached() if kept else {}
            planned = _plan(found, cached, fingerprint)
            results = stack.enter_context(
                contextlib.closing(_execute(planned, changes, out, settings, workers, cluster))
            )
            last_commit = time.monotonic()
            uncommitted = 0
            for scanned in results:
                if isinstance(scanned, NotAProject):
                    ignored.append((scanned.where, scanned.reason))
                    continue
                if isinstance(scanned, Reused):
                    seen.add(scanned.name)
                    tallier.add(scanned.prior.files, scanned.prior.findings, reused=True)
                    continue
                result = scanned.result
                seen.add(result.name)
                store.add_project(result, scanned.key, commit=False)
                uncommitted += 1
                tallier.add(len(result.files), len(result.findings), reused=False)
                now = time.monotonic()
                if uncommitted >= COMMIT_PROJECTS or now - last_commit >= COMMIT_SECONDS:
                    store.commit()
                    last_commit, uncommitted = now, 0
        store.commit()
        removed = store.prune(seen)
        store.set_meta(not_projects=json.dumps(sorted(ignored)), complete="1")
        faults = store.fault_counts()
    finally:
        # Whatever finished is whole and worth keeping: a rerun resumes from here.
        try:
            store.commit()
        except StoreError:
            pass  # the write that failed is being reported; what was committed before stays
        store.close()
        lock.close()
        display.finish(tallier.tally())
    return ScanSummary(
        tallier.projects, tallier.files, tallier.findings, time.perf_counter() - tallier.started,
        out, tallier.reused, removed, faults,
    )


def with_library(
    changes: ChangeList, source: str | os.PathLike[str] | None, installed: str | None,
    stubs: str | os.PathLike[str] | None = None,
) -> ChangeList:
    """Apply --library-source / --library-installed / --library-stubs: the change list then names
    that source, so workers, clusters and the cache fingerprint all see one library."""
    if stubs is not None:
        where = Path(stubs)
        if not where.exists():
            raise ScanOptionError(f"--library-stubs {where}: no such file or folder; pass the stub package's folder")
        changes = dataclasses.replace(changes, stubs=where.resolve())
    if changes.stubs is not None and not changes.stubs.exists():
        raise ScanOptionError(
            f"[library] stubs {changes.stubs}: no such file or folder; fix the path (it is relative to the change list)"
        )
    if source is not None and installed is not None:
        raise ScanOptionError("give --library-source or --library-installed, not both")
    if installed is not None:
        from impactscope.surface import locate_installed

        return dataclasses.replace(changes, source=locate_installed(installed).resolve())
    if source is not None:
        where = Path(source)
        if not where.exists():
            raise ScanOptionError(f"--library-source {where}: no such file or folder; pass the library's package folder")
        return dataclasses.replace(changes, source=where.resolve())
    if changes.source is not None and not changes.source.exists():
        raise ScanOptionError(
            f"[library] source {changes.source}: no such file or folder; fix the path (it is relative to the change list)"
        )
    return changes


def _exclusive(out: Path) -> IO[str]:
    """Take the results file for this scan alone: two scans writing one file would each drop the
    other's projects. The lock is the kernel's (flock on `OUT.lock`), so it ends with the process
    however that ends; the file keeps the holder's process id for the message."""
    handle = open(out.with_name(out.name + ".lock"), "a+", encoding="utf-8")
    try:
        fcntl.flock(handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        handle.seek(0)
        holder = handle.read().strip() or "another process"
        handle.close()
        raise ScanOptionError(
            f"{out}: another scan (process {holder}) is writing this results file; "
            "wait for it to finish, or pass another --out"
        ) from None
    handle.seek(0)
    handle.truncate()
    handle.write(str(os.getpid()))
    handle.flush()
    return handle


def _check_out(out: Path) -> None:
    """Refuse an --out that cannot be written before any work is done."""
    folder = out.parent
    if not folder.exists():
        raise ScanOptionError(f"--out {out}: the folder {folder} does not exist; create it or pass another --out")
    if not folder.is_dir():
        raise ScanOptionError(f"--out {out}: {folder} is not a folder; pass another --out")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise ScanOptionError(f"--out {out}: the folder {folder} is not writable; pass another --out")


def _nonempty(found: Iterator[Project | NotAProject], roots: Sequence[str]) -> Iterator[Project | NotAProject]:
    """`found`, after checking that it holds a project (read up to the first; the rest are
    discovered as the scan goes). A scan of nothing is a mistake (a wrong path), not a result."""
    ignored: list[NotAProject] = []
    first = next(found, None)
    while isinstance(first, NotAProject):
        ignored.append(first)
        first = next(found, None)
    if first is None:
        where = ", ".join(roots)
        what = "the root" if len(roots) == 1 else "the roots"
        if ignored:
            reasons = sorted({item.reason for item in ignored})
            held = f"{'holds' if len(roots) == 1 else 'hold'} {len(ignored)} item(s) that are not projects ({'; '.join(reasons)})"
        else:
            held = "is empty" if len(roots) == 1 else "are empty"
        raise ScanOptionError(
            f"{where}: no projects to scan: {what} {held}; pass a folder or archive whose children are "
            "projects, or add --single to scan a root as one project"
        )
    return itertools.chain(ignored, (first,), found)


def _execute(
    planned: Iterable[Planned],
    changes: ChangeList,
    out: Path,
    settings: ScanSettings,
    workers: int,
    cluster: str | None,
) -> Generator[Scanned | Reused | NotAProject, None, None]:
    """Run the batches, passing the reused projects on in between; the library is prepared
    (surface read or loaded from beside `out`) only once there is a batch, so a rescan that
    changed nothing never touches it."""
    # The executor pulls batches as it has room; the reused projects met on the way wait here
    # until the next result goes out.
    waiting: deque[Reused | NotAProject] = deque()

    def batches() -> Iterator[Batch]:
        for item in planned:
            if isinstance(item, (Reused, NotAProject)):
                waiting.append(item)
            else:
                yield item

    work = batches()
    first = next(work, None)
    yield from _drained(waiting)
    if first is None:
        return
    job = ScanJob(prepare_library(changes, out, settings.library_digest), settings)
    work = itertools.chain((first,), work)
    if cluster is not None:
        from impactscope.scan.cluster import scan_on_cluster

        scanned = scan_on_cluster(cluster.strip(), work, job)
    elif workers > 1:
        scanned = run_pool(work, job, workers)
    else:
        scanned = run_inline(work, job)
    with contextlib.closing(scanned):  # closed with this generator: a pool stops its workers
        for result in scanned:
            yield from _drained(waiting)
            yield result
    yield from _drained(waiting)


def _drained(waiting: deque[Reused | NotAProject]) -> Iterator[Reused | NotAProject]:
    while waiting:
        yield waiting.popleft()


__all__ = ["ChangeList", "ScanOptionError", "ScanSummary", "count_projects", "run_scan"]
