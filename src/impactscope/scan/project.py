"""Scan one project: account for every file, prefilter, resolve, collect findings."""

from __future__ import annotations

import dataclasses
import hashlib
import re
from typing import Callable

from impactscope.corpus.entries import EntryError, Project, add_note, failure_reason
from impactscope.corpus.sources import (
    Source,
    SourceError,
    notebook_text,
    read_notebook,
    read_python,
    without_outputs,
)
from impactscope.exposure import is_manifest
from impactscope.findings import Confidence, Finding, Reading
from impactscope.outcomes import FileOutcome, ProjectResult
from impactscope.reasons import Reason
from impactscope.resolve.faults import describe
from impactscope.resolve.legacy import legacy_hits
from impactscope.resolve.project import FileAnalysis, ProjectResolver
from impactscope.resolve.query import Query
from impactscope.scan.budget import FileClock
from impactscope.scan.guard import code_size, too_deep
from impactscope.scan.prefilter import Plan, Prefilter
from impactscope.scan.slicing import narrow

_GUARDED = {Reason.TOO_DEEPLY_NESTED: "nested too deeply to parse safely", Reason.TOO_LARGE_TO_PARSE: "over the limit parse_chars of code to parse (raise it with --limit parse_chars=N)"}


def _is_manifest(path: str, size: int) -> bool:
    """Manifest files, and small text files a requirements file may include with -r / -c."""
    return is_manifest(path) or (path.endswith((".txt", ".in")) and size < 256_000)


def scan_project(project: Project, query: Query, *, prefilter: bool = True, narrowing: bool = True) -> ProjectResult:
    """Account for every file of `project` and collect its findings. `prefilter=False` resolves
    every file whole and `narrowing=False` keeps kept files whole: both only for tests that show
    the shortcuts change no finding."""
    result = ProjectResult(name=project.name, origin=project.origin)
    outcomes: dict[str, FileOutcome] = {}
    sources: dict[str, Source] = {}
    raw_texts: dict[str, str] = {}
    notebooks: dict[str, bytes] = {}
    order: list[str] = []
    faults: dict[str, str] = {}  # files whose analysis failed unexpectedly: their one-line detail
    token_level: set[str] = set()  # files read at token level: Python 2, or nested too deeply
    clock = FileClock(project.limits.file_seconds)  # every per-file stage below is charged to its file
    for entry in project.entries():
        order.append(entry.path)
        if entry.error is None and entry.size < project.limits.file_bytes and _is_manifest(entry.path, entry.size):
            try:
                result.manifests[entry.path] = entry.read()
            except Exception:  # noqa: BLE001 - an unreadable manifest only loses its constraint
                pass
        if entry.error is not None:
            outcomes[entry.path] = FileOutcome(entry.path, "unparsed", failure_reason(entry.error), entry.error)
            continue
        if entry.skip is not None:
            outcomes[entry.path] = FileOutcome(entry.path, "skipped", entry.skip, entry.note)
            continue
        try:
            data = entry.read()
        except EntryError as exc:  # a damaged member, or a limit reached while reading
            limit = exc.reason != Reason.UNREADABLE
            outcomes[entry.path] = FileOutcome(entry.path, "skipped" if limit else "unparsed", exc.reason,
                                               add_note(entry.note, str(exc)))
            continue
        except Exception as exc:  # noqa: BLE001 - a damaged member is counted, the scan goes on
            outcomes[entry.path] = FileOutcome(entry.path, "unparsed", Reason.UNREADABLE,
                                               add_note(entry.note, f"{type(exc).__name__}: {exc}"))
            continue
        digest = hashlib.sha256(data).hexdigest()
        kind = "notebook" if entry.path.endswith(".ipynb") else "module"
        try:
            if kind == "notebook":
                # Full reading (nbformat, IPython's transformer) waits until the prefilter keeps it;
                # until then only the code is held, not the outputs.
                data = without_outputs(data)
                raw_texts[entry.path] = notebook_text(data, entry.path, limits=project.limits)
                notebooks[entry.path] = data
            else:
                sources[entry.path] = read_python(data, entry.path)
        except SourceError as exc:
            status = "skipped" if exc.skipped else "unparsed"  # a notebook's code size
            outcomes[entry.path] = FileOutcome(entry.path, status, exc.reason, add_note(entry.note, exc.detail), digest, kind)
            continue
        outcomes[entry.path] = FileOutcome(entry.path, "skipped", Reason.NO_CANDIDATE, entry.note, digest, kind)

    texts = {path: "\n".join(c.code for c in s.cells) for path, s in sources.items()}
    texts.update(raw_texts)
    # Built per project: its patterns come from the re module's cache after the first project.
    shortcuts = Prefilter(query.tops, query.names, query.loose_names)
    plan = shortcuts.plan(texts) if prefilter else Plan(set(texts), set(texts))
    keep = set(plan.keep)
    for path in sorted(keep & set(notebooks)):
        try:
            sources[path] = clock.run(path, read_notebook, notebooks[path], path, limits=project.limits)
        except SourceError as exc:
            prior = outcomes[path]
            outcomes[path] = FileOutcome(path, "unparsed", exc.reason, exc.detail, prior.digest, prior.kind)
            keep.discard(path)
        except Exception as exc:  # noqa: BLE001 - a bug in the notebook transform costs this file only
            faults[path] = describe(exc, stage="notebook")
            keep.discard(path)
    if narrowing:
        for path in sorted(keep - plan.whole):
            exported = _spelled_elsewhere(texts, path) if path in plan.importable else None
            try:
                sources[path] = clock.run(path, narrow, sources[path], query.names, plan.relays, exported)
            except Exception as exc:  # noqa: BLE001 - a narrowing bug costs this file only
                faults[path] = describe(exc, stage="narrowing")
                keep.discard(path)
    for path in sorted(sources):
        if path in faults:
            continue
        try:
            deep = clock.run(path, _without_deep_cells, sources[path], project.limits.parse_chars)
        except Exception as exc:  # noqa: BLE001 - the guard is part of the analysis of this file
            faults[path] = describe(exc, stage="nesting guard")
            keep.discard(path)
            continue
        if isinstance(deep, Reason):
            prior = outcomes[path]
            outcomes[path] = FileOutcome(path, "unparsed", deep, f"{_GUARDED[deep]}; read at token level",
                                         prior.digest, prior.kind)
            del sources[path]
            keep.discard(path)
            token_level.add(path)
        else:
            sources[path] = deep
    # A file that failed before the resolver is no module of the project for the others either.
    # The files with an import line of the library, resolved or not: in a project that has one, a
    # helper that never imports it may still be handed its objects (docs/findings.md, the upper bound).
    importers = {path for path, text in texts.items() if shortcuts.imports_library(text)}
    resolver = ProjectResolver(project.name, query, {p: s for p, s in sources.items() if p not in faults},
                               bool(importers))
    for path in sorted(keep):
        try:
            clock.run(path, resolver.analyse, path)
        except Exception as exc:  # noqa: BLE001 - the resolver isolates files itself; this is the last net
            faults[path] = describe(exc, stage="resolver")
            if path in clock.over:  # its importers see an unknown module, not a second try at it
                resolver.files.setdefault(path, FileAnalysis(path, "unparsed"))
    try:
        resolver.finish()
    except Exception as exc:  # noqa: BLE001 - as above: no finding of a file that did not finish
        for path in resolver.files:
            faults.setdefault(path, describe(exc, stage="matching"))
    for path, fa in resolver.files.items():
        if path in faults:
            continue
        prior = outcomes[path]
        detail = add_note(prior.detail, fa.detail)
        if fa.reason is Reason.ANALYSIS_ERROR:
            # The resolver failed on it (a fault it isolated itself): read as the faults below are.
            kept = _fallback_findings(project.name, path, texts, prior, query)
            if kept is not None:
                result.findings.extend(kept)
                detail += _TOKEN_LEVEL_NOTE
        outcomes[path] = FileOutcome(path, fa.status, fa.reason, detail, prior.digest, prior.kind)
        result.findings.extend(fa.findings)
        if fa.reason in (Reason.PYTHON_2, Reason.TOO_DEEPLY_NESTED):
            token_level.add(path)
        if fa.result is not None and fa.result.uses_library:
            result.uses_library = True
    for path in sorted(token_level - set(faults)):
        # A file no syntax tree can be had of still shows its uses to a token-level reading.
        try:
            result.findings.extend(clock.run(path, _legacy_findings, project.name, path, texts[path], query))
        except Exception as exc:  # noqa: BLE001 - the token-level reading is best effort too
            faults[path] = describe(exc, stage="token-level reading")
    for path, detail in faults.items():
        prior = outcomes[path]
        result.findings = [f for f in result.findings if f.file != path]
        kept = _fallback_findings(project.name, path, texts, prior, query)
        if kept is not None:
            result.findings.extend(kept)
        note = _TOKEN_LEVEL_NOTE if kept is not None else ""
        if path in clock.over:  # a limit reached, like a file too large: skipped with its reason
            outcomes[path] = FileOutcome(path, "skipped", Reason.OVER_TIME_BUDGET, clock.over[path] + note,
                                         prior.digest, prior.kind)
        else:
            outcomes[path] = FileOutcome(path, "unparsed", Reason.ANALYSIS_ERROR, detail + note, prior.digest, prior.kind)
    if not result.uses_library:
        # Files the prefilter passed over may still import the library without touching a change.
        # So may files that did not parse (Python 2), read by the same import-line test.
        result.uses_library = any(
            p not in resolver.files or resolver.files[p].result is None for p in importers
        )
    result.files = [outcomes[p] for p in order]
    result.findings.sort()
    return result


def failed_project(project: Project, reason: Reason, detail: str) -> ProjectResult:
    """A project that could not be scanned as a whole: every file it lists is still accounted for,
    its sources as unparsed with `reason` (skipped and unreadable files keep their own reasons)."""
    result = ProjectResult(name=project.name, origin=project.origin)
    try:
        for entry in project.entries():
            if entry.error is not None:
                outcome = FileOutcome(entry.path, "unparsed", failure_reason(entry.error), entry.error)
            elif entry.skip is not None:
                outcome = FileOutcome(entry.path, "skipped", entry.skip)
            else:
                outcome = FileOutcome(entry.path, "unparsed", reason, detail)
            result.files.append(outcome)
    except Exception:  # noqa: BLE001 - what was listed before the listing failed is kept
        pass
    return result


def _without_deep_cells(source: Source, parse_chars: int) -> Source | Reason:
    """`source` without the cells libcst must not parse (they are counted as skipped): nested too
    deeply (its native parser would crash the process) or, past the first `parse_chars` of code
    (Limits.parse_chars), too large (its tree would take gigabytes). For a module file that is
    either, the reason."""
    refused: list[tuple[int | None, Reason]] = []
    kept = []
    size = 0
    for cell in source.cells:
        cost = code_size(cell.code)
        reason = Reason.TOO_DEEPLY_NESTED if too_deep(cell.code) else Reason.TOO_LARGE_TO_PARSE if size + cost > parse_chars else None
        if reason is None:
            kept.append(cell)
            size += cost
        else:
            refused.append((cell.index, reason))
    if not refused:
        return source
    if source.kind == "module":
        return refused[0][1]
    return dataclasses.replace(source, cells=tuple(kept), skipped_cells=(*source.skipped_cells, *refused))


def _spelled_elsewhere(texts: dict[str, str], path: str) -> Callable[[str], bool]:
    """Whether a file of the project other than `path` spells a name as a whole word."""
    others = [text for other, text in texts.items() if other != path]

    def spelled(name: str) -> bool:
        word = re.compile(rf"(?<![\w]){re.escape(name)}(?![\w])")
        return any(name in text and word.search(text) for text in others)

    return spelled


_TOKEN_LEVEL_NOTE = "; read at token level"


def _fallback_findings(project: str, path: str, texts: dict[str, str], prior: FileOutcome,
                       query: Query) -> list[Finding] | None:
    """The token-level findings of a module whose analysis failed or ran out of time, so that its
    uses still count at `possible` and "at most" stays a bound; None where there is no such
    reading (a notebook's text is its cells joined) or it failed too. Read outside the file's
    clock: a file stopped by its budget has none left, and the reading is linear."""
    if prior.kind != "module" or path not in texts:
        return None
    try:
        return _legacy_findings(project, path, texts[path], query)
    except Exception:  # noqa: BLE001 - best effort: the file keeps its reason either way
        return None


def _legacy_findings(project: str, path: str, text: str, query: Query) -> list[Finding]:
    """Python 2 files and files nested too deeply do not parse: a token-level reading still
    finds their uses, as `possible`."""
    out: set[Finding] = set()
    for top in sorted(query.tops):
        for hit in legacy_hits(text, top, query.names):
            for cc in query.by_name(hit.name):
                # The receiver's spelling is the user's own; patterns keep only the shape.
                shape = f"?.{hit.name}" if "." in hit.dotted else hit.name
                out.add(
                    Finding(project, path, None, hit.line, hit.column, cc.change.id, Confidence.POSSIBLE,
                            shape, Reading.TOKEN_LEVEL)
                )
    return sorted(out)
