"""Drive a rewrite over the corpus: scan each project, rewrite its proven sites, write patches
(or the files in place), and the review files."""

from __future__ import annotations

import concurrent.futures
import functools
import json
import os
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Iterator, Sequence

from impactscope.changes import ChangeList, load_change_list
from impactscope.corpus import Project, check_roots, discover
from impactscope.corpus.roots import archive_stem
from impactscope.errors import InputError
from impactscope.rewrite.patch import project_patch
from impactscope.rewrite.plan import Review
from impactscope.rewrite.project import ProjectRewrite, rewrite_project
from impactscope.rewrite.review import review_json, review_markdown
from impactscope.scan.cache import held, picklable, replayed, streamed
from impactscope.scan.library import ScanLibrary, prepare_library
from impactscope.scan.progress import ScanProgress, Silent, Tally
from impactscope.scan.run import count_projects, with_library

REVIEW_MD = "review.md"
REVIEW_JSON = "review.json"


class RewriteOptionError(InputError):
    """Rewrite options that do not fit together or the input: the message says which and why."""


@dataclass(frozen=True)
class RewriteSummary:
    projects: int
    patched: int  # projects with at least one rewritten file
    files: int  # files rewritten
    rewritten: int  # sites rewritten
    review: int  # sites left for review
    settled: int  # resolved sites of a mechanical change that need no edit
    seconds: float
    out: Path
    applied: bool

    @property
    def pending(self) -> bool:
        return self.files > 0


def run_rewrite(
    changes_path: str | os.PathLike[str],
    roots: Sequence[str | os.PathLike[str]],
    out: str | os.PathLike[str],
    *,
    single: bool = False,
    jobs: int = 1,
    library_source: str | os.PathLike[str] | None = None,
    library_stubs: str | os.PathLike[str] | None = None,
    apply: bool = False,
    progress: ScanProgress | None = None,
) -> RewriteSummary:
    """Rewrite the corpus under `roots` for the changes in `changes_path`; patches and review
    files go to the folder `out` (with `apply`, folder projects are edited in place instead)."""
    changes = with_library(load_change_list(changes_path), library_source, None, library_stubs)
    check_roots(roots)
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise RewriteOptionError(f"--out {out}: not a folder; give a folder for the patches and review files")
    out.mkdir(parents=True, exist_ok=True)
    roots = [os.path.abspath(os.fspath(r)) for r in roots]
    library = prepare_library(changes, out / "rewrite")
    display = progress if progress is not None else Silent()
    # As the scan does: counted only when cheap (folders and zips), and only for a display.
    total = None if isinstance(display, Silent) else count_projects(roots, single=single, library=changes.import_name)
    started = time.perf_counter()
    display.start(total)
    done: list[ProjectRewrite] = []
    files = findings = 0
    try:
        for result in _execute(discover(roots, single=single, library=changes.import_name), library, jobs):
            done.append(result)
            files += result.scanned_files
            findings += len(result.rewritten) + len(result.review)
            display.update(Tally(len(done), total, files, 0, findings, time.perf_counter() - started))
    finally:
        display.finish(Tally(len(done), total, files, 0, findings, time.perf_counter() - started))
    done.sort(key=lambda r: r.name)
    if apply:
        _apply(done)
    # An earlier run's patches are stale either way: applied now, or written again below.
    for stale in _previous_patches(out):
        (out / stale).unlink(missing_ok=True)
    written = [] if apply else _write_patches(done, out)
    reviews: list[Review] = [r for p in done for r in p.review]
    rewritten = sum(len(p.rewritten) for p in done)
    patched = [p for p in done if p.files]
    (out / REVIEW_MD).write_text(review_markdown(reviews, rewritten=rewritten, projects=len(patched)), encoding="utf-8")
    (out / REVIEW_JSON).write_text(_with_patches(review_json(reviews), written), encoding="utf-8")
    return RewriteSummary(
        projects=len(done), patched=len(patched), files=sum(len(p.files) for p in done), rewritten=rewritten,
        review=len(reviews), settled=sum(p.settled for p in done), seconds=time.perf_counter() - started,
        out=out, applied=apply,
    )


def _one(library: ScanLibrary, project: Project) -> ProjectRewrite:
    return rewrite_project(project, library.query)


def _execute(projects: Iterable[Project], library: ScanLibrary, jobs: int) -> Iterator[ProjectRewrite]:
    workers = jobs if jobs > 0 else (os.cpu_count() or 1)
    if workers == 1:
        for project in projects:
            yield _one(library, project)
        return
    # As the scan does: a tar member is readable only while its archive is there, so a project
    # from a tar root is read into memory before it travels to a worker.
    def sendable(project: Project) -> Project:
        if streamed(project) or not picklable(project):
            return replayed(project, [held(e, project.limits) for e in project.entries()])
        return project

    with concurrent.futures.ProcessPoolExecutor(max_workers=workers) as pool:
        yield from pool.map(functools.partial(_one, library), (sendable(p) for p in projects), chunksize=4)


def _patch_name(project: str) -> str:
    return project.replace("/", "_").replace("\\", "_").replace("\0", "_") + ".patch"


def _write_patches(done: list[ProjectRewrite], out: Path) -> list[str]:
    written = []
    for project in done:
        if not project.files:
            continue
        name = _patch_name(project.name)
        (out / name).write_bytes(project_patch((f.path, f.old, f.new) for f in project.files))
        written.append(name)
    return written


def _previous_patches(out: Path) -> list[str]:
    """The patches an earlier run listed in review.json: a project with nothing left loses its patch."""
    try:
        listed = json.loads((out / REVIEW_JSON).read_text(encoding="utf-8")).get("patches", [])
    except (OSError, ValueError, AttributeError):
        return []
    return [n for n in listed if isinstance(n, str) and n.endswith(".patch") and "/" not in n and "\\" not in n]


def _with_patches(text: str, written: list[str]) -> str:
    data = json.loads(text)
    data["patches"] = written
    return json.dumps(data, indent=2, ensure_ascii=False) + "\n"


def _apply(done: list[ProjectRewrite]) -> None:
    """Write the new bytes into folder projects; refused for any archive, before anything is written."""
    archives = [p.origin for p in done if p.files and _target(p, p.files[0].path) is None]
    if archives:
        raise RewriteOptionError(
            f"--apply edits folder projects only; {archives[0]} is an archive"
            f"{f' (and {len(archives) - 1} more)' if len(archives) > 1 else ''}: write patches without --apply and apply them"
        )
    for project in done:
        for f in project.files:
            target = _target(project, f.path)
            assert target is not None
            if target.read_bytes() != f.old:
                raise RewriteOptionError(f"{target}: changed while it was being rewritten; run the rewrite again")
    for project in done:
        for f in project.files:
            target = _target(project, f.path)
            assert target is not None
            target.write_bytes(f.new)


def _target(project: ProjectRewrite, path: str) -> Path | None:
    """Where a project's file is on disk: in its folder, or the loose file itself; None inside an archive."""
    if os.path.isdir(project.origin):
        return Path(project.origin, *path.split("/"))
    if os.path.isfile(project.origin) and archive_stem(os.path.basename(project.origin)) is None:
        return Path(project.origin)
    return None
