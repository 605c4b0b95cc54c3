"""Imports: `import`, `from ... import`, `importlib.import_module` and `__import__`, and the
`try: import new / except ImportError: import old` fallback, taken as the release takes it."""

from __future__ import annotations

from dataclasses import replace
from typing import Protocol, Sequence

import libcst as cst
from libcst.helpers import get_full_name_for_node

from impactscope.changes import Kind
from impactscope.import_names import package_of, resolve_relative
from impactscope.resolve.query import Query
from impactscope.resolve.scopes import Scope, merge
from impactscope.resolve.values import UNKNOWN, Foreign, Lib, ProjMod, Value
from impactscope.resolve.walk import Walk

# Change kinds that make an import of the member fail on the release.
_IMPORT_BREAKING = frozenset({Kind.REMOVED, Kind.RENAMED, Kind.MOVED})


class ProjectView(Protocol):
    """What a module's analysis asks of the project around it."""

    def find_module(self, dotted: str, importer: str) -> str | None: ...

    def export(self, module: str, name: str) -> Value: ...

    def star_exports(self, module: str) -> dict[str, Value]: ...

    def module_uses_library(self, module: str) -> bool: ...

    def is_module(self, dotted: str) -> bool: ...

    def is_partial(self, module: str) -> bool: ...


class Imports(Walk):
    def import_stmt(self, s: cst.Import, scope: Scope) -> None:
        for alias in s.names:
            dotted = get_full_name_for_node(alias.name) or ""
            if self.q.is_library_module(dotted):
                self.result.uses_library = True
                self._ref(alias, "import", name=dotted, import_text=f"import {dotted}")
                value: Value = Lib(dotted)
                top: Value = Lib(dotted.split(".")[0])
            else:
                found = self.project.find_module(dotted, self.importer)
                if found is not None:
                    self._imports_project(found, s)
                    value = ProjMod(found)
                    top_name = found[: len(found) - len(dotted)] + dotted.split(".")[0] if found.endswith(dotted) else found
                    top = ProjMod(top_name)
                else:
                    value = Foreign(dotted)
                    top = Foreign(dotted.split(".")[0])
            if alias.asname is not None:
                self.assign(alias.asname.name, value, scope)
            else:
                self.bind(scope, dotted.split(".")[0], top)

    def _imports_project(self, module: str, s: cst.CSTNode) -> None:
        """Note that statement `s` imports the project's own `module` (and through it, maybe, the library)."""
        self.result.imported.add(module)
        if self._always_runs(s):
            self.result.imported_first.add(module)
        if self.project.module_uses_library(module):
            self.result.uses_library = True

    def _always_runs(self, s: cst.CSTNode) -> bool:
        """A module's own top-level statement, outside any `if`, `try` or definition: it runs on
        every import of the module (a notebook's cells run one by one, so never there)."""
        top = self.at.top
        return self.at.cell is None and isinstance(top, cst.SimpleStatementLine) and any(x is s for x in top.body)

    def _absent_on_old(self, module: str, name: str) -> bool:
        """Whether the library's source or stubs show that `from module import name` fails on the
        release they describe: the module's top-level names are all known and `name` is not one
        of them (whatever they are bound to: a compiled module's function counts), nor a
        submodule, and no change names it (`dynamic`)."""
        model = self.q.model
        if not model.knows_kinds or model.kind(module) != "module" or name.startswith("__"):
            return False  # module dunders (`__doc__`, `__file__`) are always there
        full = f"{module}.{name}"
        return model.binds(module, name) is False and model.kind(full) is None and not self.q.match(full)

    def _package(self, level: int) -> str:
        """The package `level` leading dots name (the Language Reference's rule, one
        implementation: import_names.resolve_relative). Where Python would refuse the import
        (more dots than the module's package has levels, or a top-level module), the project's
        root is taken instead: a project's module names start at its root folder, which is often
        not the top of the package the code was written in (a repository's `src/`, a subfolder
        shipped alone), so the dots may well be right in the code's own layout."""
        package = package_of(self.module, self.is_package)
        return resolve_relative(package, level) or ""

    def import_from(self, s: cst.ImportFrom, scope: Scope) -> None:
        level = len(s.relative)
        written = get_full_name_for_node(s.module) if s.module is not None else ""
        written = written or ""
        if level:
            base = self._package(level)
            dotted = ".".join(p for p in (base, written) if p)
            project_mod: str | None = dotted  # relative imports always stay inside the project
        else:
            dotted = written
            project_mod = None
        if not level and self.q.is_library_module(dotted):
            self.result.uses_library = True
            if isinstance(s.names, cst.ImportStar):
                self._ref(s.names, "import", name=dotted, import_text=f"from {dotted} import *")
                for name in self.q.model.star_names(dotted) or ():
                    self.bind(scope, name, Lib(f"{dotted}.{name}"))
                return
            for alias in s.names:
                name = get_full_name_for_node(alias.name) or ""
                full = f"{dotted}.{name}"
                self._ref(alias, "import", name=full, import_text=f"from {dotted} import {name}")
                self.assign(alias.asname.name if alias.asname else alias.name, Lib(full), scope)
                if not self.result.fails_on_old and self._always_runs(s) and self._absent_on_old(dotted, name):
                    self.result.fails_on_old = full
            return
        if project_mod is None:
            project_mod = self.project.find_module(dotted, self.importer)
        if project_mod is not None:
            if project_mod:
                self._imports_project(project_mod, s)
            if isinstance(s.names, cst.ImportStar):
                for name, value in self.project.star_exports(project_mod).items():
                    self.bind(scope, name, value)
                return
            for alias in s.names:
                name = get_full_name_for_node(alias.name) or ""
                sub = f"{project_mod}.{name}" if project_mod else name
                if self.is_project_module(sub):
                    self._imports_project(sub, s)
                    value: Value = ProjMod(sub)
                else:
                    value = self.export_of(project_mod, name)
                self.assign(alias.asname.name if alias.asname else alias.name, value, scope)
            return
        if isinstance(s.names, cst.ImportStar):
            return
        for alias in s.names:
            name = get_full_name_for_node(alias.name) or ""
            self.assign(alias.asname.name if alias.asname else alias.name, Foreign(f"{dotted}.{name}"), scope)

    def is_project_module(self, dotted: str) -> bool:
        return self.project.is_module(dotted)

    def dynamic_import(self, node: cst.Call, how: str) -> Value:
        if not node.args or not isinstance(node.args[0].value, cst.SimpleString):
            return UNKNOWN
        target = node.args[0].value.evaluated_value
        if not isinstance(target, str) or not target:
            return UNKNOWN
        if target.startswith("."):
            target = _anchor(target, node.args, how)
            if target is None:
                return UNKNOWN
        if how == "builtins.__import__":
            # The Python Language Reference: __import__("a.b") returns the top-level package `a`
            # unless a non-empty fromlist is given.
            fromlist = _nonempty_fromlist(node.args)
            bound = target if fromlist else target.split(".")[0]
        else:
            bound = target
        if self.q.is_library_module(target):
            self.result.uses_library = True
            self._ref(node.args[0], "import", name=target, import_text=f"{how.split('.')[-1]}({target!r})")
            return Lib(bound)
        found = self.project.find_module(bound, self.importer)
        if found is not None:
            self.result.imported.add(found)
            if self.project.module_uses_library(found):
                self.result.uses_library = True
            return ProjMod(found)
        return Foreign(bound)

    def try_stmt(self, s: cst.Try | cst.TryStar, scope: Scope) -> None:
        # `try: import new / except ImportError: import old` (or the other way round): on the
        # release exactly one path runs, decided by whether the `try` imports break there.
        imported = _library_imports(s.body, self.q)
        guarded = bool(imported) and any(catches_import_error(h) for h in s.handlers)
        breaks = guarded and any(
            cc.change.kind in _IMPORT_BREAKING for name in imported for cc in self.q.match(name)
        )
        before = dict(scope.names)
        outer = self.at.handled
        with self._standing(replace(self.at, handled=outer or breaks)):
            self.suite(s.body, scope)
            if s.orelse is not None:
                self.suite(s.orelse.body, scope)
        after_body = scope.names
        merged = after_body
        for handler in s.handlers:
            fallback = guarded and catches_import_error(handler)
            scope.names = dict(before) if fallback and breaks else merge(before, after_body)
            if handler.type is not None:
                self.expr(handler.type, scope)
            if handler.name is not None:
                self.assign(handler.name.name, UNKNOWN, scope)
            with self._standing(replace(self.at, handled=outer or (fallback and not breaks))):
                self.suite(handler.body, scope)
            if fallback and breaks:
                # On the release the `try` import fails and this handler's bindings are the ones.
                merged = {**merged, **{k: v for k, v in scope.names.items() if before.get(k) is not v}}
            else:
                merged = merge(merged, scope.names)
        scope.names = merged
        if s.finalbody is not None:
            self.suite(s.finalbody.body, scope)


def _library_imports(body: cst.BaseSuite, query: Query) -> tuple[str, ...]:
    """Dotted library names a `try` body imports at its own level (the new location, usually)."""
    out: list[str] = []
    for stmt in body.body:
        for small in stmt.body if isinstance(stmt, cst.SimpleStatementLine) else ():
            if isinstance(small, cst.Import):
                out.extend(
                    dotted for alias in small.names
                    if query.is_library_module(dotted := get_full_name_for_node(alias.name) or "")
                )
            elif isinstance(small, cst.ImportFrom) and not small.relative and small.module is not None:
                module = get_full_name_for_node(small.module) or ""
                if not query.is_library_module(module):
                    continue
                if isinstance(small.names, cst.ImportStar):
                    out.append(module)
                else:
                    out.extend(f"{module}.{get_full_name_for_node(a.name)}" for a in small.names)
    return tuple(out)

# The Library Reference, "Built-in Exceptions": ModuleNotFoundError is an ImportError, and both
# are Exceptions, so each of these handlers catches a failed import.
_CATCH_IMPORT_ERROR = frozenset(
    f"{prefix}{name}" for prefix in ("", "builtins.")
    for name in ("ImportError", "ModuleNotFoundError", "Exception", "BaseException")
)


def catches_import_error(handler: cst.ExceptHandler | cst.ExceptStarHandler) -> bool:
    """`except ImportError` (or a class it derives from), a tuple holding one, or a bare `except`."""
    if handler.type is None:
        return True
    names = handler.type.elements if isinstance(handler.type, cst.Tuple) else [handler.type]
    return any(
        get_full_name_for_node(el.value if isinstance(el, cst.Element) else el) in _CATCH_IMPORT_ERROR for el in names
    )


def _nonempty_fromlist(args: Sequence[cst.Arg]) -> bool:
    """Whether `__import__(name, globals, locals, fromlist, level)` is given a non-empty fromlist."""
    given: cst.BaseExpression | None = None
    for i, arg in enumerate(args):
        if arg.keyword is not None and arg.keyword.value == "fromlist":
            given = arg.value
        elif arg.keyword is None and not arg.star and i == 3:
            given = arg.value
    if given is None:
        return False
    if isinstance(given, (cst.List, cst.Tuple)):
        return bool(given.elements)
    if isinstance(given, cst.Name) and given.value == "None":
        return False
    return True  # an expression we cannot see into: most code passing one passes names

def _anchor(name: str, args: Sequence[cst.Arg], how: str) -> str | None:
    """`importlib.import_module(".sub", "pkg")`: a relative name resolved against its package."""
    if how != "importlib.import_module":
        return None
    package: cst.BaseExpression | None = None
    for i, arg in enumerate(args):
        if arg.keyword is not None and arg.keyword.value == "package":
            package = arg.value
        elif arg.keyword is None and i == 1:
            package = arg.value
    if not isinstance(package, cst.SimpleString) or not isinstance(package.evaluated_value, str):
        return None
    level = len(name) - len(name.lstrip("."))
    return resolve_relative(package.evaluated_value, level, name[level:])
