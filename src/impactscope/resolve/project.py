"""Resolve references across one project's own modules: re-exports, relative imports, packages.

Modules are parsed on demand: a file the prefilter kept is analysed, and so is every project
module it imports, transitively, because a re-export may rename what it passes on.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import libcst as cst

from impactscope.corpus.sources import Source, looks_like_python2
from impactscope.findings import Confidence, Finding
from impactscope.import_names import module_name, package_of
from impactscope.reasons import Reason
from impactscope.resolve.evaluate import ModuleEvaluator, ModuleResult, Ref
from impactscope.resolve.faults import describe, statement_line
from impactscope.resolve.match import judge, pattern
from impactscope.resolve.positions import Positions
from impactscope.resolve.query import Query
from impactscope.resolve.values import UNKNOWN, ProjMod, Value


@dataclass
class FileAnalysis:
    """How one file went: parsed or not, and what it holds."""

    path: str
    status: str = "parsed"  # parsed | unparsed
    reason: Reason | None = None
    detail: str = ""
    cells: list[tuple[int | None, int, cst.Module]] = field(default_factory=list)
    unparsed_cells: list[tuple[int, Reason]] = field(default_factory=list)
    result: ModuleResult | None = None
    findings: list[Finding] = field(default_factory=list)
    matched_as_user: bool | None = None  # the uses-library answer `findings` were matched under
    matched_refs: int = -1  # how many references `findings` were matched from
    matched_in_user: bool | None = None  # whether the project used the library when they were matched
    matched_broken: str | None = None  # `result.fails_on_old` when they were matched


class ProjectResolver:
    def __init__(self, project: str, query: Query, sources: Mapping[str, Source], uses_library: bool = False) -> None:
        """`uses_library`: some file of the project imports the library, as far as the caller
        can tell from files it does not hand over (the resolved ones tell for themselves)."""
        self.project = project
        self._uses_library = uses_library
        self.q = query
        self.sources = sources
        self._index: dict[str, str] = {}  # dotted module name -> path
        self._module_of: dict[str, tuple[str, bool]] = {}
        for path in sorted(sources):
            name, is_package = module_name(path)
            self._module_of[path] = (name, is_package)
            if sources[path].kind != "module":
                continue
            self._index.setdefault(name, path)
            if name.startswith("src."):
                self._index.setdefault(name[4:], path)  # the src/ layout puts src/ on the path
        # PEP 420: a folder of modules is importable as a namespace package without __init__.py.
        self._namespaces: set[str] = set()
        for name in list(self._index):
            parts = name.split(".")
            for i in range(1, len(parts)):
                prefix = ".".join(parts[:i])
                if prefix not in self._index:
                    self._namespaces.add(prefix)
        self.files: dict[str, FileAnalysis] = {}
        self._running: dict[str, ModuleEvaluator | None] = {}
        # Kept after their run: a call from a module read later may pass a library value to a
        # function of theirs, whose body is then read once more in its own module.
        self._evaluators: dict[str, ModuleEvaluator] = {}

    # ---------------------------------------------------------------- ProjectView
    def find_module(self, dotted: str, importer: str) -> str | None:
        if self.is_module(dotted):
            return dotted
        if importer:
            # A script's own directory is first on sys.path, so `import helpers` next to it works.
            local = f"{importer}.{dotted}"
            if self.is_module(local):
                return local
        return None

    def is_module(self, dotted: str) -> bool:
        return dotted in self._index or dotted in self._namespaces

    def is_partial(self, module: str) -> bool:
        """Whether the module is still running (an import cycle): what it binds is not all known."""
        path = self._index.get(module)
        return path is not None and path in self._running

    def export(self, module: str, name: str) -> Value:
        if f"{module}.{name}" in self._index:
            return ProjMod(f"{module}.{name}")
        result = self._module_result(module)
        if result is None:
            return UNKNOWN
        return result.exports.get(name, UNKNOWN)

    def star_exports(self, module: str) -> dict[str, Value]:
        """What `from module import *` binds: `__all__` when it can be read statically
        (dunder_all), else its public names (the Python Language Reference, the import
        statement): where `__all__` cannot be known, the public names are the best guess."""
        result = self._module_result(module)
        if result is None:
            return {}
        if result.all_names is not None:
            return {k: self.export(module, k) for k in result.all_names}
        return {k: v for k, v in result.exports.items() if not k.startswith("_")}

    def module_uses_library(self, module: str) -> bool:
        result = self._module_result(module)
        return bool(result and result.uses_library)

    # ---------------------------------------------------------------- analysis
    def _module_result(self, module: str) -> ModuleResult | None:
        path = self._index.get(module)
        if path is None:
            return None
        if path in self._running:
            running = self._running[path]
            return running.partial() if running is not None else None
        return self._analyse(path).result

    def analyse(self, path: str) -> FileAnalysis:
        """Analyse one file (and, on demand, the project modules it imports) and match it."""
        fa = self._analyse(path)
        if not self._running:
            self.finish()
        return fa

    def _analyse(self, path: str) -> FileAnalysis:
        done = self.files.get(path)
        if done is not None:
            return done
        if path in self._running:
            return FileAnalysis(path)  # an import cycle: the caller reads the partial module instead
        self._running[path] = None
        try:
            fa = self._parse(path)
            if fa.cells:
                name, is_package = self._module_of[path]
                importer = package_of(name, is_package)
                evaluator = ModuleEvaluator(self.q, self, name, is_package, path, importer)
                self._running[path] = evaluator
                try:
                    fa.result = evaluator.run((index, module) for index, _, module in fa.cells)
                    self._evaluators[path] = evaluator
                except RecursionError:
                    fa.status, fa.reason, fa.detail = "unparsed", Reason.TOO_DEEPLY_NESTED, ""
                    fa.result = None
                except Exception as exc:  # noqa: BLE001 - a resolver bug costs this file, not its project
                    module = next((m for index, _, m in fa.cells if index == evaluator.at.cell), None)
                    line = statement_line(module, evaluator.at.top) if module is not None else None
                    fa.status, fa.reason = "unparsed", Reason.ANALYSIS_ERROR
                    fa.detail = describe(exc, stage="resolver", line=line, cell=evaluator.at.cell)
                    fa.result = None
            self.files[path] = fa
            return fa
        finally:
            self._running.pop(path, None)

    def finish(self) -> None:
        """Once every needed module is analysed: settle who uses the library, then match.

        "Uses the library" spreads along a project's own imports; in an import cycle a module
        may have been read before the module it imports had bound anything, so this is a
        fixpoint over the finished results rather than what each module saw while it ran.
        """
        self._resume()
        results = {path: fa.result for path, fa in self.files.items() if fa.result is not None}
        by_module = {self._module_of[path][0]: r for path, r in results.items()}
        changed = True
        while changed:
            changed = False
            for r in results.values():
                if not r.uses_library and any(
                    by_module[m].uses_library for m in r.imported if m in by_module
                ):
                    r.uses_library = True
                    changed = True
        changed = True
        while changed:
            changed = False
            for r in results.values():
                if not r.fails_on_old:
                    failing = next((by_module[m] for m in sorted(r.imported_first)
                                    if m in by_module and by_module[m].fails_on_old), None)
                    if failing is not None:
                        r.fails_on_old = failing.fails_on_old
                        changed = True
        in_user = self._uses_library or any(r.uses_library for r in results.values())
        for fa in self.files.values():
            if fa.result is not None and (
                fa.matched_as_user is not fa.result.uses_library or fa.matched_refs != len(fa.result.refs)
                or fa.matched_in_user is not in_user or fa.matched_broken != fa.result.fails_on_old
            ):
                try:
                    fa.findings = self._findings(fa, in_user)
                except Exception as exc:  # noqa: BLE001 - a matching or positions bug costs this file only
                    fa.status, fa.reason = "unparsed", Reason.ANALYSIS_ERROR
                    fa.detail = describe(exc, stage="matching")
                    fa.findings, fa.result = [], None
                    continue
                fa.matched_as_user = fa.result.uses_library
                fa.matched_refs = len(fa.result.refs)
                fa.matched_in_user = in_user
                fa.matched_broken = fa.result.fails_on_old
                # Said, not acted on: its lines still spell the changed members, and a fix of the
                # other import would bring them to life.
                note = f"fails to import on the library's old release already ({fa.result.fails_on_old} is not there)"
                if fa.result.fails_on_old and note not in fa.detail:
                    fa.detail = f"{fa.detail}; {note}" if fa.detail else note

    def _resume(self) -> None:
        """Read again the bodies that calls from other modules sent back (each at most once)."""
        for evaluator in self._evaluators.values():
            if not evaluator.met_partial:
                continue
            # The first reading saw an import cycle half-run, which a body never does when it is
            # called: every function of the module is read again, its first reading dropped.
            evaluator.met_partial = False
            inside: set[int] = set()
            for func in evaluator.functions:
                if func.state == "done":
                    inside |= _descendants(func.node.body)  # its decorators and annotations stay
                    func.state, func.returns = "pending", None
                    evaluator.scope.pending.append(func)
            evaluator.result.refs[:] = [r for r in evaluator.result.refs if id(r.node) not in inside]
        for _ in range(3):
            resumed = False
            for path, evaluator in list(self._evaluators.items()):
                fa = self.files.get(path)
                if fa is None or fa.result is None or not evaluator.scope.pending:
                    continue
                resumed = True
                try:
                    evaluator.resume()
                except RecursionError:
                    fa.status, fa.reason, fa.detail = "unparsed", Reason.TOO_DEEPLY_NESTED, ""
                    fa.result, fa.findings = None, []
                    del self._evaluators[path]
                except Exception as exc:  # noqa: BLE001 - a resolver bug costs this file, not its project
                    fa.status, fa.reason = "unparsed", Reason.ANALYSIS_ERROR
                    fa.detail = describe(exc, stage="resolver", cell=evaluator.at.cell)
                    fa.result, fa.findings = None, []
                    del self._evaluators[path]
            if not resumed:
                return

    def _parse(self, path: str) -> FileAnalysis:
        source = self.sources[path]
        fa = FileAnalysis(path)
        for cell in source.cells:
            try:
                module = cst.parse_module(cell.code)
            except cst.ParserSyntaxError as exc:
                reason = Reason.PYTHON_2 if looks_like_python2(cell.code) else Reason.SYNTAX_ERROR
                if cell.index is None:
                    fa.status, fa.reason = "unparsed", reason
                    fa.detail = f"line {exc.raw_line}: {exc.message}"
                    return fa
                fa.unparsed_cells.append((cell.index, reason))
                continue
            except RecursionError:
                if cell.index is None:
                    fa.status, fa.reason = "unparsed", Reason.TOO_DEEPLY_NESTED
                    return fa
                fa.unparsed_cells.append((cell.index, Reason.TOO_DEEPLY_NESTED))
                continue
            except Exception as exc:  # noqa: BLE001 - a parser bug costs this file (or cell) only
                if cell.index is None:
                    fa.status, fa.reason, fa.detail = "unparsed", Reason.ANALYSIS_ERROR, describe(exc, stage="parser")
                    return fa
                fa.unparsed_cells.append((cell.index, Reason.ANALYSIS_ERROR))
                continue
            fa.cells.append((cell.index, cell.first_line, module))
        if source.kind == "notebook":
            if fa.unparsed_cells and not fa.cells:
                fa.status, fa.reason = "unparsed", fa.unparsed_cells[0][1]
            parts = []
            if fa.unparsed_cells:
                parts.append(f"{len(fa.unparsed_cells)} cell(s) unparsed")
            if source.skipped_cells:
                parts.append(f"{len(source.skipped_cells)} cell(s) skipped")
            fa.detail = "; ".join(parts)
        return fa

    def _findings(self, fa: FileAnalysis, in_user: bool) -> list[Finding]:
        """Match a file's references. In a file that does not use the library, a name on an
        unknown receiver counts only when some file of the project does (a library object may be
        handed to this one), only for a class's member whose name no builtin type has, and only at
        `possible`; in a project that never uses the library, only references proven to be it."""
        assert fa.result is not None
        refs = fa.result.refs
        guessing = fa.result.uses_library
        if not guessing:
            refs = [r for r in refs if r.name is not None or in_user]
        judged: list[tuple[Ref, list]] = []
        for ref in refs:
            hits = judge(ref, self.q)
            if hits and not guessing and ref.name is None:
                hits = [(cc, min(c, Confidence.POSSIBLE)) for cc, c in hits if cc.change.name in self.q.loose_names]
            if hits:
                judged.append((ref, hits))
        if not judged:
            return []
        texts = {cell.index: cell for cell in self.sources[fa.path].cells}
        cells = {
            index: (first_line, module, texts[index].code, texts[index].statement_lines)
            for index, first_line, module in fa.cells
        }
        where = Positions(cells).locate((ref.cell, ref.top, ref.node) for ref, _ in judged)
        out: set[Finding] = set()
        for (ref, hits), (line, column) in zip(judged, where):
            for cc, confidence in hits:
                out.add(
                    Finding(
                        project=self.project,
                        file=fa.path,
                        cell=ref.cell,
                        line=line,
                        column=column,
                        change=cc.change.id,
                        confidence=confidence,
                        pattern=pattern(ref, cc, self.q),
                    )
                )
        return _strongest(out)


def _strongest(findings: set[Finding]) -> list[Finding]:
    """One finding per site and change: the most confident reading wins."""
    best: dict[tuple, Finding] = {}
    for f in findings:
        key = (f.file, f.cell, f.line, f.column, f.change)
        if key not in best or f.confidence > best[key].confidence:
            best[key] = f
    return sorted(best.values())


def _descendants(node: cst.CSTNode) -> set[int]:
    """The ids of `node` and every node under it."""
    found: set[int] = set()
    stack = [node]
    while stack:
        n = stack.pop()
        found.add(id(n))
        stack.extend(n.children)
    return found
