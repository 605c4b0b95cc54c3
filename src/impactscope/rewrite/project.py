"""Rewrite one project: scan it as `scan` does, then turn its resolved sites into new file bytes.

The files are read once: the scan's own reads are kept (a tar member can be read only while
its archive is at that member), and only the files holding a finding are rewritten.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass
from typing import Callable, Iterator

import libcst as cst

from impactscope.changes import Change
from impactscope.corpus import Entry, Project, SourceError, read_notebook
from impactscope.findings import Finding
from impactscope.resolve.query import Query
from impactscope.rewrite.lines import Lines, apply, hunks
from impactscope.rewrite.notebook import NotebookShapeError, cell_sources, splice
from impactscope.rewrite.plan import (
    CellPlan,
    Planner,
    Review,
    follow_imports,
    guarded_imports,
    imported_names,
    top_bindings,
    why_not_rewritten,
)
from impactscope.rewrite.pyfile import PyFile
from impactscope.rewrite.transform import apply_edits
from impactscope.scan.project import scan_project


@dataclass(frozen=True)
class FileRewrite:
    path: str  # POSIX, relative to the project root
    old: bytes
    new: bytes


@dataclass(frozen=True)
class ProjectRewrite:
    name: str
    origin: str
    files: tuple[FileRewrite, ...]
    rewritten: tuple[Finding, ...]  # sites edited
    review: tuple[Review, ...]
    settled: int = 0  # resolved sites of a mechanical change that need no edit
    scanned_files: int = 0


def _keeping(project: Project, kept: dict[str, bytes]) -> Project:
    """`project` whose source files' bytes are kept in `kept` as the scan reads them."""

    def listing() -> Iterator[Entry]:
        for entry in project.entries():
            if entry.path.endswith((".py", ".pyw", ".ipynb")) and entry.skip is None and entry.error is None:
                read = entry.read

                def keep(read: Callable[[], bytes] = read, path: str = entry.path) -> bytes:
                    data = read()
                    kept[path] = data
                    return data

                entry = dataclasses.replace(entry, read=keep)
            yield entry

    return Project(project.name, project.origin, listing, project.limits)


def rewrite_project(project: Project, query: Query) -> ProjectRewrite:
    kept: dict[str, bytes] = {}
    result = scan_project(_keeping(project, kept), query)
    changes = {c.id: c for c in query.changes.changes}
    model = query.model

    def is_class(dotted: str) -> bool:
        return bool(model.is_class(model.canonical(dotted)))

    by_file: dict[str, list[Finding]] = {}
    for finding in result.findings:
        by_file.setdefault(finding.file, []).append(finding)
    texts = {p: d.decode("utf-8", "replace") for p, d in kept.items()}
    files: list[FileRewrite] = []
    rewritten: list[Finding] = []
    review: list[Review] = []
    settled = 0
    tops = sorted(query.changes.top_modules)
    for path, findings in sorted(by_file.items()):
        whys = [why_not_rewritten(f, changes[f.change], is_class) for f in findings]
        if all(why is not None for why in whys) or path not in kept:
            review.extend(Review(f, why or "the file could not be read again") for f, why in zip(findings, whys))
            continue
        others = [t for p, t in texts.items() if p != path]

        def spelled_elsewhere(name: str, others: list[str] = others) -> bool:
            word = re.compile(rf"(?<!\w){re.escape(name)}(?!\w)")
            return any(name in t and word.search(t) for t in others)

        def bound_elsewhere(name: str, top: str, others: list[str] = others) -> bool:
            return any(name in t and _binds_in_text(t, name, top) for t in others)

        outcome = _rewrite_file(path, kept[path], findings, changes, is_class, spelled_elsewhere,
                                _TopNames(tops, bound_elsewhere))
        if isinstance(outcome, str):
            review.extend(Review(f, why or outcome) for f, why in zip(findings, whys))
            continue
        new, done, left, quiet = outcome
        review.extend(left)
        settled += quiet
        if new != kept[path]:
            files.append(FileRewrite(path, kept[path], new))
            rewritten.extend(done)
    return ProjectRewrite(result.name, result.origin, tuple(files), tuple(sorted(rewritten)), tuple(review), settled,
                          len(result.files))


_Outcome = tuple[bytes, list[Finding], list[Review], int]


class _TopNames:
    """Which names of a file are the library's top module: bound so in the file (any cell of a
    notebook), or imported from a project module that binds them so."""

    def __init__(self, tops: list[str], bound_elsewhere: Callable[[str, str], bool]) -> None:
        self.tops = tops
        self.bound_elsewhere = bound_elsewhere
        self.local: dict[str, set[str]] = {top: set() for top in tops}
        self.imported: set[str] = set()

    def read(self, modules: list[cst.Module]) -> "_TopNames":
        for module in modules:
            for top in self.tops:
                self.local[top] |= top_bindings(module, top)
            self.imported |= imported_names(module)
        return self

    def __call__(self, name: str, top: str) -> bool:
        if name in self.local.get(top, ()):
            return True
        return name in self.imported and self.bound_elsewhere(name, top)


def _binds_in_text(text: str, name: str, top: str) -> bool:
    """A module-level `import top as name`, `import top` (name == top), or `name = __import__(
    "top...")` / `importlib.import_module("top")` in a project file's text."""
    n, t = re.escape(name), re.escape(top)
    patterns = [rf"^import[ \t]+{t}(?:\.[\w.]+)?[ \t]+as[ \t]+{n}[ \t]*(?:#.*)?$",
                rf"^{n}[ \t]*=[ \t]*(?:__import__\([ \t]*['\"]{t}[.'\"]|(?:importlib\.)?import_module\([ \t]*['\"]{t}['\"])"]
    if name == top:
        patterns.append(rf"^import[ \t]+{t}(?:\.[\w.]+)?[ \t]*(?:#.*)?$")
    return any(re.search(p, text, re.MULTILINE) for p in patterns)


def _rewrite_file(path: str, data: bytes, findings: list[Finding], changes: dict[str, Change],
                  is_class: Callable[[str], bool], spelled_elsewhere: Callable[[str], bool],
                  top_names: _TopNames) -> _Outcome | str:
    """New bytes for one file, the sites rewritten, those left for review and the number that
    need no edit; or the reason the whole file goes to review."""
    if path.endswith(".ipynb"):
        return _rewrite_notebook(path, data, findings, changes, is_class, spelled_elsewhere, top_names)
    try:
        file = PyFile.read(data)
        module = cst.parse_module(file.lines.normalised)
    except (SyntaxError, UnicodeDecodeError, LookupError, cst.ParserSyntaxError, RecursionError) as exc:
        return f"cannot be parsed again for rewriting ({type(exc).__name__})"
    plan = Planner(module, changes=changes, is_class=is_class, spelled_elsewhere=spelled_elsewhere,
                   binds_top=top_names.read([module]), guarded=guarded_imports([module])).run(findings)
    follow_imports([plan], top_names)
    new_code = apply_edits(plan.module, plan.edits).code
    text = apply(file.lines, hunks(file.lines.normalised, new_code))
    try:
        new = file.encode(text)
    except UnicodeEncodeError:
        return f"a new name cannot be written in the file's encoding ({file.encoding})"
    return new, plan.rewritten, plan.review, len(plan.settled)


def _rewrite_notebook(path: str, data: bytes, findings: list[Finding], changes: dict[str, Change],
                      is_class: Callable[[str], bool], spelled_elsewhere: Callable[[str], bool],
                      top_names: _TopNames) -> _Outcome | str:
    try:
        raw = data.decode("utf-8")
        sources = cell_sources(raw)
        source = read_notebook(data, path)
    except (UnicodeDecodeError, NotebookShapeError, SourceError) as exc:
        return f"notebook not rewritable: {exc}"
    by_cell: dict[int | None, list[Finding]] = {}
    for f in findings:
        by_cell.setdefault(f.cell, []).append(f)
    code_cells = {c.index: c for c in source.cells}
    parsed: dict[int | None, cst.Module] = {}
    for cell in source.cells:
        try:
            parsed[cell.index] = cst.parse_module(cell.code)
        except (cst.ParserSyntaxError, RecursionError):
            pass
    top_names.read(list(parsed.values()))  # a name bound in one cell serves the cells after it
    guarded = guarded_imports(parsed.values())
    plans: dict[int, CellPlan] = {}
    left: list[Review] = []
    quiet = 0
    for index, cell_findings in sorted(by_cell.items(), key=lambda kv: -1 if kv[0] is None else kv[0]):
        cell = code_cells.get(index) if index is not None else None
        if cell is None or index not in sources:
            left.extend(Review(f, "cell not read as Python (a cell magic of another language?)") for f in cell_findings)
            continue
        module = parsed.get(index)
        if module is None:
            left.extend(Review(f, "cell cannot be parsed again for rewriting") for f in cell_findings)
            continue
        plan = Planner(module, changes=changes, is_class=is_class, spelled_elsewhere=spelled_elsewhere,
                       binds_top=top_names, guarded=guarded, line_offset=cell.first_line - 1).run(cell_findings)
        quiet += len(plan.settled)
        plans[index] = plan
    # The notebook's cells are one module: an import in one cell serves the uses in the others.
    for index, module in parsed.items():
        if index is not None and index in sources and index not in plans:
            plans[index] = CellPlan(module)
    follow_imports([plans[i] for i in sorted(plans)], top_names)
    left.extend(r for i in sorted(plans) for r in plans[i].review)  # after: a chain can go back to review
    new_sources: dict[int, str] = {}
    done: list[Finding] = []
    for index, plan in sorted(plans.items()):
        if not plan.edits:
            continue
        cell = code_cells[index]
        offset = cell.first_line - 1
        original = Lines.of(sources[index].text(raw))
        new_code = apply_edits(plan.module, plan.edits).code
        changed = hunks(cell.code, new_code)
        code_lines = cell.code.split("\n")
        # IPython's transformer rewrote magic and shell lines: an edit may touch only lines
        # that are the cell's own text.
        if any(
            hunk.start + offset + k >= len(original.bodies) or original.bodies[hunk.start + offset + k] != code_lines[hunk.start + k]
            for hunk in changed
            for k in range(hunk.stop - hunk.start)
        ):
            left.extend(Review(f, "on a line IPython rewrites (a magic or shell escape): edit it by hand") for f in plan.rewritten)
            continue
        shifted = [dataclasses.replace(h, start=h.start + offset, stop=h.stop + offset) for h in changed]
        new_sources[index] = apply(original, shifted)
        done.extend(plan.rewritten)
    if not new_sources:
        return data, done, left, quiet
    return splice(raw, new_sources).encode("utf-8"), done, left, quiet
