"""Follow bindings through one module (or one notebook's cells) and collect library references.

The walk is flow-sensitive: statements run in order, branches are merged with `values.join`,
and function bodies run once, lazily, when first called or at the end of their scope, so they
see the bindings a real call would see. It only collects; matching and positions come later.
"""

from __future__ import annotations

import builtins
from dataclasses import dataclass, field
from typing import Callable, Iterable, Protocol, Sequence

import libcst as cst
from libcst.helpers import get_full_name_for_node

from impactscope.changes import Kind
from impactscope.resolve.query import Query
from impactscope.resolve.receivers import Receiver, ThroughSuper
from impactscope.resolve.values import (
    UNKNOWN,
    Foreign,
    Inst,
    Lib,
    OneOf,
    ProjMod,
    Super,
    Tup,
    UserClass,
    UserFunc,
    UserInst,
    Value,
    is_library,
    join,
)

_BUILTINS = frozenset(dir(builtins))
# Change kinds that make an import of the member fail on the release.
_IMPORT_BREAKING = frozenset({Kind.REMOVED, Kind.RENAMED, Kind.MOVED})
# Stands in a `OneOf` for an outcome that is not a library class: it owns no change.
_NOT_LIBRARY = "?"
# Built-in callables whose result is a built-in object whatever the arguments (the Python Library
# Reference, "Built-in Functions" and "Built-in Types"). Not `abs`, `round`, `sum`, `min`, `max`,
# `next`, `getattr`, `iter`, `copy`: they hand back what an argument's own methods return.
_BUILTIN_RESULTS = frozenset(
    f"builtins.{name}"
    for name in (
        "list", "dict", "set", "frozenset", "tuple", "str", "bytes", "bytearray", "int", "float",
        "complex", "bool", "range", "len", "repr", "ascii", "sorted", "enumerate", "zip", "map",
        "filter", "reversed", "open", "isinstance", "issubclass", "hasattr", "callable", "id",
        "hash", "format", "chr", "ord", "hex", "oct", "bin", "input", "print", "dir", "vars",
        "object", "memoryview", "slice",
    )
)
_PROPERTY_DECORATORS = frozenset({"builtins.property", "functools.cached_property"})
_FIRST_PARAM_METHODS = frozenset({"method", "property"})
# How many calls deep return values are inferred: deeper chains give "unknown" rather than
# recursing without bound (a call chain through hundreds of functions is not rare in real code).
_INFERENCE_DEPTH = 6


@dataclass(frozen=True)
class CallShape:
    """How a call passes its arguments, literals elided."""

    positional: int  # positional arguments before the first `*args`
    star: bool
    starstar: bool
    keywords: tuple[str, ...]

    def render(self) -> str:
        parts = ["_"] * self.positional
        if self.star:
            parts.append("*_")
        parts.extend(f"{k}=_" for k in self.keywords)
        if self.starstar:
            parts.append("**_")
        return "(" + ", ".join(parts) + ")"


@dataclass
class Ref:
    """A reference collected in a module: resolved (`name`) or on an unknown receiver (`attr`)."""

    cell: int | None
    node: cst.CSTNode
    context: str  # import | use | subclass | decorator | annotation | override
    top: cst.CSTNode | None = None  # the top-level statement of its cell that holds it
    name: str | None = None
    attr: str | None = None
    receiver: Receiver = ""  # how the member was reached, for patterns
    bound: bool = False
    call: CallShape | None = None
    import_text: str = ""
    # Inside `try: <library import> ... except ImportError:`, on a path the release does not
    # take or whose failure the code handles: the `try` body when its import breaks on the
    # release, the handler when it does not. Such a use breaks nothing: possible at most.
    handled: bool = False
    among: tuple[str, ...] = ()  # with `attr`: the receiver is an instance of one of these classes


class ProjectView(Protocol):
    """What a module's analysis asks of the project around it."""

    def find_module(self, dotted: str, importer: str) -> str | None: ...

    def export(self, module: str, name: str) -> Value: ...

    def star_exports(self, module: str) -> dict[str, Value]: ...

    def module_uses_library(self, module: str) -> bool: ...

    def is_module(self, dotted: str) -> bool: ...


class Scope:
    __slots__ = ("kind", "parent", "names", "globals", "nonlocals", "pending", "owner", "returns")

    def __init__(self, kind: str, parent: "Scope | None", owner: UserClass | None = None) -> None:
        self.kind = kind  # module | function | class | comprehension
        self.parent = parent
        self.names: dict[str, Value] = {}
        self.globals: set[str] = set()
        self.nonlocals: set[str] = set()
        self.pending: list[UserFunc] = []
        self.owner = owner  # the user class a method belongs to, for super() and self
        self.returns: list[Value] = []

    def module(self) -> "Scope":
        s = self
        while s.parent is not None:
            s = s.parent
        return s

    def function_home(self) -> "Scope":
        """Nearest scope that can own deferred function bodies (not a class or comprehension)."""
        s = self
        while s.kind in ("class", "comprehension") and s.parent is not None:
            s = s.parent
        return s


@dataclass
class ModuleResult:
    refs: list[Ref] = field(default_factory=list)
    uses_library: bool = False
    exports: dict[str, Value] = field(default_factory=dict)
    all_names: tuple[str, ...] | None = None  # a literal `__all__`, which decides what `*` binds
    imported: set[str] = field(default_factory=set)  # project modules it imports


class ModuleEvaluator:
    """Runs one module's cells in order in one module scope."""

    def __init__(
        self, query: Query, project: ProjectView, module: str, is_package: bool, path: str, importer: str
    ) -> None:
        self.q = query
        self.importer = importer  # the package or script directory imports are looked up from
        self.project = project
        self.module = module
        self.is_package = is_package
        self.path = path
        self.result = ModuleResult()
        self.scope = Scope("module", None)
        self.cell: int | None = None
        self._last: tuple[cst.CSTNode, list[Ref]] | None = None
        self._handled = False
        self._quiet = 0  # > 0 while a body is read only to learn what it returns
        self.top: cst.CSTNode | None = None

    # ------------------------------------------------------------------ driving
    def partial(self) -> ModuleResult:
        """What another module importing this one mid-run (an import cycle) sees: the names bound
        so far, as Python's partially initialised module would show them."""
        return ModuleResult(uses_library=self.result.uses_library, exports=dict(self.scope.names),
                            all_names=self.result.all_names)

    def run(self, cells: Iterable[tuple[int | None, cst.Module]]) -> ModuleResult:
        for index, module in cells:
            self.cell = index
            for stmt in module.body:
                self.top = stmt
                self.stmt(stmt, self.scope)
        self._flush(self.scope)
        self.result.exports = self.scope.names
        return self.result

    def resume(self) -> None:
        """Read the module-level bodies that later calls sent back, once the module has run."""
        self._flush(self.scope)

    def _flush(self, scope: Scope) -> None:
        """Run deferred bodies with the bindings their scope ends with, recording references."""
        while scope.pending:
            func = scope.pending.pop(0)
            if func.state == "pending":
                self._run(func, record=True)

    # ------------------------------------------------------------------ names
    def lookup(self, scope: Scope, name: str) -> Value:
        if name in scope.globals:
            return self.scope.names.get(name, self._builtin(name))
        s: Scope | None = scope
        first = True
        while s is not None:
            if s.kind == "class" and not first:
                s = s.parent
                continue
            if name in s.names:
                return s.names[name]
            first = False
            s = s.parent
        return self._builtin(name)

    @staticmethod
    def _builtin(name: str) -> Value:
        if name in _BUILTINS:
            return Foreign("builtins." + name)
        return UNKNOWN

    def bind(self, scope: Scope, name: str, value: Value) -> None:
        if name in scope.globals:
            self.scope.names[name] = value
            return
        if name in scope.nonlocals:
            s = scope.parent
            while s is not None and s.kind != "module":
                if s.kind == "function" and name in s.names:
                    s.names[name] = value
                    return
                s = s.parent
        scope.names[name] = value

    # ------------------------------------------------------------------ references
    def _ref(self, node: cst.CSTNode, context: str, **kw: object) -> Ref:
        ref = Ref(cell=self.cell, node=node, context=context, top=self.top, handled=self._handled, **kw)  # type: ignore[arg-type]
        if not self._quiet:
            self.result.refs.append(ref)
        return ref

    # ------------------------------------------------------------------ statements
    def block(self, stmts: Sequence[cst.BaseStatement] | Sequence[cst.BaseSmallStatement], scope: Scope) -> None:
        for stmt in stmts:
            self.stmt(stmt, scope)

    def suite(self, body: cst.BaseSuite, scope: Scope) -> None:
        self.block(body.body, scope)  # IndentedBlock and SimpleStatementSuite both hold `.body`

    def stmt(self, s: cst.CSTNode, scope: Scope) -> None:
        if isinstance(s, cst.SimpleStatementLine):
            for small in s.body:
                self.small(small, scope)
        elif isinstance(s, cst.BaseSmallStatement):
            self.small(s, scope)
        elif isinstance(s, cst.FunctionDef):
            self.function_def(s, scope)
        elif isinstance(s, cst.ClassDef):
            self.class_def(s, scope)
        elif isinstance(s, cst.If):
            self.expr(s.test, scope)
            narrowed = self._isinstance(s.test, scope)

            def body() -> None:
                if narrowed is None:
                    self.suite(s.body, scope)
                    return
                name, value = narrowed
                had = name in scope.names
                prior = scope.names.get(name)
                self.bind(scope, name, value)
                self.suite(s.body, scope)
                if scope.names.get(name) is value:
                    # The check tells nothing after the branch (join would let it win there).
                    if had:
                        scope.names[name] = prior  # type: ignore[assignment]
                    else:
                        scope.names.pop(name, None)

            self.branches(scope, [body, lambda: s.orelse and self.stmt(s.orelse, scope)])
        elif isinstance(s, cst.Else):
            self.suite(s.body, scope)
        elif isinstance(s, cst.For):
            self.expr(s.iter, scope)
            self.loop(scope, s.body, s.orelse, lambda: self.assign(s.target, UNKNOWN, scope))
        elif isinstance(s, cst.While):
            self.expr(s.test, scope)
            self.loop(scope, s.body, s.orelse, None)
        elif isinstance(s, (cst.Try, cst.TryStar)):
            self.try_stmt(s, scope)
        elif isinstance(s, cst.With):
            for item in s.items:
                value = self.expr(item.item, scope)
                if item.asname is not None:
                    self.assign(item.asname.name, self._entered(value), scope)
            self.suite(s.body, scope)
        elif isinstance(s, cst.Match):
            self.expr(s.subject, scope)
            arms = [self._case(case, scope) for case in s.cases]
            self.branches(scope, arms + [lambda: None])
        else:
            self.generic(s, scope)

    def _isinstance(self, test: cst.BaseExpression, scope: Scope) -> tuple[str, Value] | None:
        """`isinstance(name, lib.Class)` (also first in an `and`): inside the branch, `name` is an
        instance of that class. Several classes in a tuple tell no one class."""
        while isinstance(test, cst.BooleanOperation) and isinstance(test.operator, cst.And):
            test = test.left
        if not (isinstance(test, cst.Call) and len(test.args) == 2 and isinstance(test.args[0].value, cst.Name)):
            return None
        if test.args[0].star or test.args[1].star:
            return None
        func = self.expr(test.func, scope, record=False)
        if not (isinstance(func, Foreign) and func.name == "builtins.isinstance"):
            return None
        cls = self.expr(test.args[1].value, scope, record=False)
        name = test.args[0].value.value
        if isinstance(cls, Lib) and self.q.model.kind(cls.name) in ("class", None):
            return name, Inst(cls.name)
        if isinstance(cls, UserClass):
            return name, UserInst(cls)
        return None

    def _entered(self, manager: Value) -> Value:
        """What `with manager as name` binds: `__enter__`'s return value."""
        if isinstance(manager, UserInst):
            enter = manager.cls.lookup("__enter__")
            if isinstance(enter, UserFunc):
                return self.returns_of(enter)
            if not manager.cls.all_lib_bases():
                return UNKNOWN
            return manager
        if isinstance(manager, Inst):
            declared = self.q.model.returns(f"{manager.cls}.__enter__")
            return Inst(declared) if declared is not None else manager  # most managers return self
        return UNKNOWN

    def pattern(self, node: cst.MatchPattern, scope: Scope) -> Value:
        """Bind the captures of a match pattern; the value a capture of the whole pattern gets."""
        if isinstance(node, cst.MatchAs):
            value = self.pattern(node.pattern, scope) if node.pattern is not None else UNKNOWN
            if node.name is not None:
                self.bind(scope, node.name.value, value)
            return value
        if isinstance(node, cst.MatchClass):
            cls = self.expr(node.cls, scope)
            # Positional sub-patterns are MatchSequenceElement (`.value`), keyword ones
            # MatchKeywordElement (`.pattern`), as libcst spells them.
            for element in node.patterns:
                self.pattern(element.value, scope)
            for keyword in node.kwds:
                self.pattern(keyword.pattern, scope)
            if isinstance(cls, Lib):
                return Inst(cls.name)
            if isinstance(cls, UserClass):
                return UserInst(cls)
            return UNKNOWN
        if isinstance(node, cst.MatchStar):
            if node.name is not None:
                self.bind(scope, node.name.value, UNKNOWN)
            return UNKNOWN
        if isinstance(node, cst.MatchValue):
            self.expr(node.value, scope)
            return UNKNOWN
        if isinstance(node, cst.MatchOr):
            for el in node.patterns:
                self.pattern(el.pattern, scope)
            return UNKNOWN
        for child in node.children:
            if isinstance(child, cst.MatchPattern):
                self.pattern(child, scope)
            elif isinstance(child, cst.MatchSequenceElement):  # `case [a, b]:` binds a and b
                self.pattern(child.value, scope)
            elif hasattr(child, "pattern") and isinstance(getattr(child, "pattern"), cst.MatchPattern):
                self.pattern(child.pattern, scope)  # type: ignore[attr-defined]
            elif hasattr(child, "key") and isinstance(getattr(child, "key"), cst.BaseExpression):
                self.expr(child.key, scope)  # type: ignore[attr-defined]
                if isinstance(getattr(child, "pattern", None), cst.MatchPattern):
                    self.pattern(child.pattern, scope)  # type: ignore[attr-defined]
        if isinstance(node, cst.MatchMapping) and node.rest is not None:
            self.bind(scope, node.rest.value, UNKNOWN)
        return UNKNOWN

    def _case(self, case: cst.MatchCase, scope: Scope) -> Callable[[], None]:
        def run() -> None:
            self.pattern(case.pattern, scope)
            if case.guard is not None:
                self.expr(case.guard, scope)
            self.suite(case.body, scope)

        return run

    def branches(self, scope: Scope, arms: Sequence[Callable[[], object]]) -> None:
        before = dict(scope.names)
        merged: dict[str, Value] | None = None
        for arm in arms:
            scope.names = dict(before)
            arm()
            merged = scope.names if merged is None else _merge(merged, scope.names)
        scope.names = merged if merged is not None else before

    def loop(self, scope: Scope, body: cst.BaseSuite, orelse: cst.Else | None, bind_target: Callable[[], None] | None) -> None:
        before = dict(scope.names)
        if bind_target is not None:
            bind_target()
        self.suite(body, scope)
        if orelse is not None:
            self.suite(orelse.body, scope)
        scope.names = _merge(before, scope.names)

    def try_stmt(self, s: cst.Try | cst.TryStar, scope: Scope) -> None:
        # `try: import new / except ImportError: import old` (or the other way round): on the
        # release exactly one path runs, decided by whether the `try` imports break there.
        imported = _library_imports(s.body, self.q)
        guarded = bool(imported) and any(_catches_import_error(h) for h in s.handlers)
        breaks = guarded and any(
            cc.change.kind in _IMPORT_BREAKING for name in imported for cc in self.q.match(name)
        )
        before = dict(scope.names)
        outer = self._handled
        self._handled = outer or breaks
        try:
            self.suite(s.body, scope)
            if s.orelse is not None:
                self.suite(s.orelse.body, scope)
        finally:
            self._handled = outer
        after_body = scope.names
        merged = after_body
        for handler in s.handlers:
            fallback = guarded and _catches_import_error(handler)
            scope.names = dict(before) if fallback and breaks else _merge(before, after_body)
            if handler.type is not None:
                self.expr(handler.type, scope)
            if handler.name is not None:
                self.assign(handler.name.name, UNKNOWN, scope)
            self._handled = outer or (fallback and not breaks)
            try:
                self.suite(handler.body, scope)
            finally:
                self._handled = outer
            if fallback and breaks:
                # On the release the `try` import fails and this handler's bindings are the ones.
                merged = {**merged, **{k: v for k, v in scope.names.items() if before.get(k) is not v}}
            else:
                merged = _merge(merged, scope.names)
        scope.names = merged
        if s.finalbody is not None:
            self.suite(s.finalbody.body, scope)

    def small(self, s: cst.BaseSmallStatement, scope: Scope) -> None:
        if isinstance(s, cst.Expr):
            self.expr(s.value, scope)
        elif isinstance(s, cst.Assign):
            if scope.kind == "module" and any(
                isinstance(t.target, cst.Name) and t.target.value == "__all__" for t in s.targets
            ):
                self.result.all_names = _literal_names(s.value)
            pairs = _unpacked(s)
            if pairs is not None:
                values = [self.expr(el.value, scope) for el in pairs]
                for target in s.targets:
                    for t_el, value in zip(target.target.elements, values):  # type: ignore[attr-defined]
                        self.assign(t_el.value, value, scope)
                return
            value = self.expr(s.value, scope)
            for target in s.targets:
                self.assign(target.target, value, scope)
        elif isinstance(s, cst.AnnAssign):
            declared = self.annotation(s.annotation.annotation, scope, record=True)
            value = self.expr(s.value, scope) if s.value is not None else UNKNOWN
            if value is UNKNOWN and declared is not None:
                value = declared
            if s.value is not None or isinstance(s.target, cst.Name):
                self.assign(s.target, value, scope)
        elif isinstance(s, cst.AugAssign):
            self.expr(s.target, scope)
            self.expr(s.value, scope)
            if isinstance(s.target, cst.Name):
                self.bind(scope, s.target.value, UNKNOWN)
        elif isinstance(s, cst.Import):
            self.import_stmt(s, scope)
        elif isinstance(s, cst.ImportFrom):
            self.import_from(s, scope)
        elif isinstance(s, cst.Return):
            value = self.expr(s.value, scope) if s.value is not None else Foreign("builtins.None")
            scope.function_home().returns.append(value)
        elif isinstance(s, cst.Del):
            self.delete(s.target, scope)
        elif isinstance(s, cst.Assert):
            self.generic(s, scope)
            narrowed = self._isinstance(s.test, scope)
            if narrowed is not None:
                self.bind(scope, *narrowed)
        elif isinstance(s, cst.Global):
            scope.globals.update(n.name.value for n in s.names)
        elif isinstance(s, cst.Nonlocal):
            scope.nonlocals.update(n.name.value for n in s.names)
        else:
            self.generic(s, scope)

    def delete(self, target: cst.BaseExpression, scope: Scope) -> None:
        if isinstance(target, cst.Name):
            self.bind(scope, target.value, UNKNOWN)
        elif isinstance(target, (cst.Tuple, cst.List)):
            for el in target.elements:
                self.delete(el.value, scope)
        else:
            self.expr(target, scope)

    def assign(self, target: cst.BaseExpression, value: Value, scope: Scope) -> None:
        if isinstance(target, cst.Name):
            self.bind(scope, target.value, value)
        elif isinstance(target, (cst.Tuple, cst.List)):
            items: tuple[Value, ...] | None = None
            if isinstance(value, Tup) and len(value.items) == len(target.elements) and not any(
                isinstance(el.value, cst.StarredElement) for el in target.elements
            ):
                items = value.items
            for i, el in enumerate(target.elements):
                inner = el.value
                item = items[i] if items is not None else UNKNOWN
                self.assign(inner.value if isinstance(inner, cst.StarredElement) else inner, item, scope)
        elif isinstance(target, cst.StarredElement):
            self.assign(target.value, UNKNOWN, scope)
        elif isinstance(target, cst.Attribute):
            receiver = self.expr(target.value, scope, record=not isinstance(target.value, (cst.Name, cst.Attribute)))
            if isinstance(receiver, UserInst):
                cls = receiver.cls
                cls.attrs[target.attr.value] = join(cls.attrs.get(target.attr.value, UNKNOWN), value)
            else:
                self._attribute_ref(target, receiver, scope)
        else:
            self.expr(target, scope)

    # ------------------------------------------------------------------ imports
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
                    self.result.imported.add(found)
                    if self.project.module_uses_library(found):
                        self.result.uses_library = True
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

    def _package(self, level: int) -> str:
        parts = self.module.split(".")
        if not self.is_package:
            parts = parts[:-1]
        if level > 1:
            parts = parts[: len(parts) - (level - 1)] if level - 1 <= len(parts) else []
        return ".".join(parts)

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
            return
        if project_mod is None:
            project_mod = self.project.find_module(dotted, self.importer)
        if project_mod is not None:
            if project_mod:
                self.result.imported.add(project_mod)
            if project_mod and self.project.module_uses_library(project_mod):
                self.result.uses_library = True
            if isinstance(s.names, cst.ImportStar):
                for name, value in self.project.star_exports(project_mod).items():
                    self.bind(scope, name, value)
                return
            for alias in s.names:
                name = get_full_name_for_node(alias.name) or ""
                sub = f"{project_mod}.{name}" if project_mod else name
                if self._is_project_module(sub):
                    self.result.imported.add(sub)
                    if self.project.module_uses_library(sub):
                        self.result.uses_library = True
                    value: Value = ProjMod(sub)
                else:
                    value = self.project.export(project_mod, name)
                self.assign(alias.asname.name if alias.asname else alias.name, value, scope)
            return
        if isinstance(s.names, cst.ImportStar):
            return
        for alias in s.names:
            name = get_full_name_for_node(alias.name) or ""
            self.assign(alias.asname.name if alias.asname else alias.name, Foreign(f"{dotted}.{name}"), scope)

    def _is_project_module(self, dotted: str) -> bool:
        return self.project.is_module(dotted)

    # ------------------------------------------------------------------ definitions
    def function_def(self, node: cst.FunctionDef, scope: Scope) -> None:
        kind = "method" if scope.kind == "class" else "function"
        wrapped_by_library = False
        for deco in node.decorators:
            value = self.expr(deco.decorator, scope, context="decorator")
            name = value.name if isinstance(value, Foreign) else None
            if name in ("builtins.staticmethod",):
                kind = "staticmethod"
            elif name in ("builtins.classmethod",):
                kind = "classmethod"
            elif name in _PROPERTY_DECORATORS or (
                isinstance(deco.decorator, cst.Attribute) and deco.decorator.attr.value in ("setter", "getter", "deleter")
            ):
                kind = "property" if scope.kind == "class" else kind
            elif isinstance(value, Lib):
                wrapped_by_library = True
        params = node.params
        defaults: dict[str, Value] = {}
        for p in (*params.posonly_params, *params.params, *params.kwonly_params):
            if p.default is not None:
                defaults[p.name.value] = self.expr(p.default, scope)
        declared: dict[str, Value] = {}
        starred = {id(params.star_arg), id(params.star_kwarg)}
        for p in _all_params(params):
            if p.annotation is not None:
                t = self.annotation(p.annotation.annotation, scope, record=True)
                # `*args: T` and `**kw: T` describe the elements; the names are a tuple and a dict.
                if t is not None and id(p) not in starred:
                    declared[p.name.value] = t
        if node.returns is not None:
            returns_decl = self.annotation(node.returns.annotation, scope, record=True)
        else:
            returns_decl = None
        func = UserFunc(
            node=node, scope=scope, owner=scope.owner if scope.kind == "class" else None, kind=kind, cell=self.cell,
            home=self, top=self.top, declared=declared, returns_decl=returns_decl,
            passed={k: v for k, v in defaults.items() if is_library(v)},
        )
        scope.function_home().pending.append(func)
        self.bind(scope, node.name.value, UNKNOWN if wrapped_by_library else func)

    def returns_of(self, func: UserFunc) -> Value:
        """What a call returns. A body not run yet is read quietly now, with the bindings of the
        moment of the call; its references are recorded once, when its scope ends."""
        if func.returns is not None:
            return func.returns
        if func.state == "running" or self._quiet >= _INFERENCE_DEPTH:
            return UNKNOWN
        return self._run(func, record=False)

    def _run(self, func: UserFunc, record: bool) -> Value:
        assert isinstance(func.node, cst.FunctionDef)
        previous_state = func.state
        func.state = "running"
        caller_cell, self.cell = self.cell, func.cell
        caller_top, self.top = self.top, func.top  # type: ignore[assignment]
        if not record or func.home is not self:
            record = False
            self._quiet += 1
        try:
            result = self._run_body(func)
        finally:
            self.cell = caller_cell
            self.top = caller_top
            if not record:
                self._quiet -= 1
        func.returns = result
        # A quiet reading changes nothing about the recorded run still to come.
        func.state = "done" if record and not self._quiet else previous_state
        return result

    def _run_body(self, func: UserFunc) -> Value:
        assert isinstance(func.node, cst.FunctionDef)
        fscope = Scope("function", func.scope, owner=func.owner)  # type: ignore[arg-type]
        declared = func.declared
        positional = [*func.node.params.posonly_params, *func.node.params.params]
        for i, p in enumerate(_all_params(func.node.params)):
            value: Value = declared.get(p.name.value) or func.passed.get(p.name.value, UNKNOWN)
            if i == 0 and p in positional and func.owner is not None:
                if func.kind in _FIRST_PARAM_METHODS:
                    value = UserInst(func.owner)
                elif func.kind == "classmethod":
                    value = func.owner
            fscope.names[p.name.value] = value
        self.suite(func.node.body, fscope)
        self._flush(fscope)
        result: Value = UNKNOWN
        for r in fscope.returns:
            result = join(result, r)
        decl = func.returns_decl
        if result is UNKNOWN and decl is not None:
            result = decl
        elif isinstance(result, Tup) and isinstance(decl, Tup) and len(result.items) == len(decl.items):
            result = Tup(tuple(d if r is UNKNOWN else r for r, d in zip(result.items, decl.items)))
        return result

    def class_def(self, node: cst.ClassDef, scope: Scope) -> None:
        for deco in node.decorators:
            self.expr(deco.decorator, scope, context="decorator")
        lib_bases: list[str] = []
        user_bases: list[UserClass] = []
        for arg in node.bases:
            value = self.expr(arg.value, scope, context="subclass")
            if isinstance(value, Lib):
                lib_bases.append(value.name)
            elif isinstance(value, UserClass):
                user_bases.append(value)
        for kw in node.keywords:
            self.expr(kw.value, scope)
        cls = UserClass(name=node.name.value, lib_bases=tuple(lib_bases), user_bases=tuple(user_bases))
        body = Scope("class", scope, owner=cls)
        self.suite(node.body, body)
        cls.members.update(body.names)
        ancestry = cls.all_lib_bases()
        if ancestry:
            for stmt in _class_level_defs(node.body):
                if isinstance(stmt, cst.FunctionDef):
                    for base in ancestry:
                        self._ref(stmt.name, "override", name=f"{base}.{stmt.name.value}", receiver=base)
        # __init__ (and unittest's setUp) first, so attributes they set are known to the other methods.
        home = scope.function_home()
        mine = [f for f in home.pending if f.owner is cls]
        if mine:
            rest = [f for f in home.pending if f.owner is not cls]
            mine.sort(key=lambda f: 0 if f.node.name.value in ("__init__", "setUp", "__post_init__") else 1)  # type: ignore[union-attr]
            home.pending[:] = rest + mine
        self.bind(scope, node.name.value, cls)

    def annotation(self, expr: cst.BaseExpression, scope: Scope, record: bool) -> Value | None:
        """The instance type an annotation declares, if it names a library or user class."""
        if isinstance(expr, cst.SimpleString):
            try:
                inner = cst.parse_expression(expr.evaluated_value if isinstance(expr.evaluated_value, str) else "")
            except (cst.ParserSyntaxError, Exception):  # noqa: BLE001 - any unparsable string is just text
                return None
            return self.annotation(inner, scope, record=False)
        if isinstance(expr, cst.BinaryOperation) and isinstance(expr.operator, cst.BitOr):
            left = self.annotation(expr.left, scope, record)
            right = self.annotation(expr.right, scope, record)
            return left or right
        if isinstance(expr, cst.Subscript):
            head = self.expr(expr.value, scope, record=record, context="annotation")
            head_name = head.name if isinstance(head, (Foreign, Lib)) else None
            if head_name in ("typing.Tuple", "builtins.tuple"):
                parts = [
                    self.annotation(el.slice.value, scope, record) if isinstance(el.slice, cst.Index) else None
                    for el in expr.slice
                ]
                if any(p is not None for p in parts):
                    return Tup(tuple(p if p is not None else UNKNOWN for p in parts))
                return None
            found: Value | None = None
            for el in expr.slice:
                if isinstance(el.slice, cst.Index):
                    t = self.annotation(el.slice.value, scope, record)
                    if found is None and t is not None and head_name in (
                        "typing.Optional", "typing.Union", "typing.Annotated", "typing_extensions.Annotated",
                    ):
                        found = t
                else:
                    self.generic(el.slice, scope)
            return found
        if isinstance(expr, (cst.Name, cst.Attribute)):
            value = self.expr(expr, scope, record=record, context="annotation")
            if isinstance(value, Lib):
                return Inst(value.name)
            if isinstance(value, UserClass):
                return UserInst(value)
            return None
        if record:
            self.expr(expr, scope)
        return None

    # ------------------------------------------------------------------ expressions
    def expr(self, node: cst.BaseExpression, scope: Scope, record: bool = True, context: str = "use") -> Value:
        if isinstance(node, cst.Name):
            return self._name(node, scope, record, context)
        if isinstance(node, cst.Attribute):
            inner_chain = isinstance(node.value, (cst.Name, cst.Attribute))
            receiver = self.expr(node.value, scope, record=not inner_chain)
            return self._attribute_ref(node, receiver, scope, record, context)
        if isinstance(node, cst.Call):
            return self.call(node, scope)
        if isinstance(node, (cst.SimpleString, cst.Integer, cst.Float, cst.Imaginary, cst.Ellipsis)):
            return Foreign("literal")
        if isinstance(node, cst.Tuple) and not any(isinstance(el, cst.StarredElement) for el in node.elements):
            return Tup(tuple(self.expr(el.value, scope) for el in node.elements))
        if isinstance(node, cst.ConcatenatedString):
            # A chain `'a' 'b' 'c' ...` nests one node per part: walked in a loop, not recursively,
            # or a long one (pydoc_data/topics.py has hundreds of parts) exhausts the stack.
            part: cst.BaseExpression = node
            while isinstance(part, cst.ConcatenatedString):
                if isinstance(part.left, cst.FormattedString):
                    self.generic(part.left, scope)
                part = part.right
            if isinstance(part, cst.FormattedString):
                self.generic(part, scope)
            return Foreign("literal")
        if isinstance(node, (cst.FormattedString, cst.List, cst.Tuple, cst.Set, cst.Dict)):
            self.generic(node, scope)
            return Foreign("literal")
        if isinstance(node, (cst.ListComp, cst.SetComp, cst.DictComp, cst.GeneratorExp)):
            self.comprehension(node, scope)
            return Foreign("literal")
        if isinstance(node, cst.Lambda):
            self.lambda_expr(node, scope)
            return Foreign("lambda")
        if isinstance(node, cst.Subscript):
            return self.subscript(node, scope)
        if isinstance(node, cst.IfExp):
            self.expr(node.test, scope)
            return join(self.expr(node.body, scope), self.expr(node.orelse, scope))
        if isinstance(node, cst.BooleanOperation):
            return join(self.expr(node.left, scope), self.expr(node.right, scope))
        if isinstance(node, cst.NamedExpr):
            value = self.expr(node.value, scope)
            target_scope = scope
            while target_scope.kind == "comprehension" and target_scope.parent is not None:
                target_scope = target_scope.parent
            self.assign(node.target, value, target_scope)
            return value
        self.generic(node, scope)
        return UNKNOWN

    def subscript(self, node: cst.Subscript, scope: Scope) -> Value:
        """`x[key]`: for a library instance, what the library's `__getitem__` is typed to return
        (column selection, `.loc[...]` indexers); anything else is not known."""
        receiver = self.expr(node.value, scope)
        for element in node.slice:
            self.generic(element, scope)
        if isinstance(receiver, Inst):
            typed = self.q.model.returns(f"{receiver.cls}.__getitem__")
            if typed is not None:
                return Inst(typed)
            return self._instance_of(self.q.model.returns_all(f"{receiver.cls}.__getitem__"))
        if isinstance(receiver, Tup) and len(node.slice) == 1 and isinstance(node.slice[0].slice, cst.Index):
            key = node.slice[0].slice.value
            if isinstance(key, cst.Integer) and int(key.value, 0) < len(receiver.items):
                return receiver.items[int(key.value, 0)]
        return UNKNOWN

    def _name(self, node: cst.Name, scope: Scope, record: bool, context: str) -> Value:
        if node.value == "None":
            return UNKNOWN  # a placeholder that is usually rebound later: it tells nothing
        if node.value in ("True", "False"):
            return Foreign("literal")
        value = self.lookup(scope, node.value)
        if record and isinstance(value, Lib):
            ref = self._ref(node, context, name=value.name, receiver=value.name.rpartition(".")[0], bound=value.bound)
            self._last = (node, [ref])
        return value

    def _attribute_ref(
        self, node: cst.Attribute, receiver: Value, scope: Scope, record: bool = True, context: str = "use"
    ) -> Value:
        attr = node.attr.value
        value, how = self.attribute(receiver, attr)
        refs: list[Ref] = []
        named = how if isinstance(value, Inst) else None  # a typed attribute: its own path, kept
        if record and (isinstance(value, Lib) or named is not None):
            name = value.name if isinstance(value, Lib) else f"{named}.{attr}"
            bound = value.bound if isinstance(value, Lib) else True
            receiver_text = how if isinstance(value, Lib) else f"<{named}>"
            refs.append(self._ref(node.attr, context, name=name, receiver=receiver_text, bound=bound))
        if attr in self.q.names and isinstance(receiver, OneOf) and not receiver.member:
            shown = "|".join(receiver.classes)
            refs.append(self._ref(node.attr, context, attr=attr, receiver=f"<{shown}>", among=receiver.classes))
        elif attr in self.q.names and (receiver is UNKNOWN or self._untyped(receiver) or self._unlinked(value)):
            # The receiver is not proven to be anything in particular: the name alone decides.
            refs.append(self._ref(node.attr, context, attr=attr, receiver="?"))
        if refs:
            self._last = (node, refs)
        return value

    def _unlinked(self, value: Value) -> bool:
        """Without the library's source a path it re-exports under another name
        (`lib.sub.f` for `lib.f`) cannot be told from another member: the name alone decides."""
        return isinstance(value, Lib) and not self.q.model.knows_kinds and not self.q.match(value.name)

    def _untyped(self, receiver: Value) -> bool:
        """A library value whose own type is not known: an attribute reached through an instance
        (a column, an attribute the source does not type) rather than a module or class path."""
        if not isinstance(receiver, Lib) or not receiver.bound:
            return False
        kind = self.q.model.kind(receiver.name)
        return kind not in ("module", "class", "method", "function", "classmethod", "staticmethod")

    def attribute(self, receiver: Value, attr: str) -> tuple[Value, Receiver]:
        """The value of `receiver.attr`, and how a pattern should name the receiver.

        An attribute of a library instance that the library types (a property, a typed
        attribute) is an instance of that type; then `how` is the receiver's class."""
        if isinstance(receiver, Lib):
            return Lib(f"{receiver.name}.{attr}", bound=receiver.bound), receiver.name
        if isinstance(receiver, Inst):
            dotted = f"{receiver.cls}.{attr}"
            typed = self.q.model.attribute_type(dotted)
            if typed is not None:
                return Inst(typed), receiver.cls
            return Lib(dotted, bound=True), f"<{receiver.cls}>"
        if isinstance(receiver, OneOf):
            if receiver.member:
                return UNKNOWN, "?"
            kinds = {self.q.model.attribute_type(f"{cls}.{attr}") for cls in receiver.classes}
            if len(kinds) == 1 and None not in kinds:
                return Inst(kinds.pop()), ""  # type: ignore[arg-type]
            return OneOf(receiver.classes, attr), ""
        if isinstance(receiver, ProjMod):
            sub = f"{receiver.name}.{attr}"
            if self._is_project_module(sub):
                return ProjMod(sub), ""
            return self.project.export(receiver.name, attr), ""
        if isinstance(receiver, (UserClass, UserInst)):
            cls = receiver if isinstance(receiver, UserClass) else receiver.cls
            found = cls.lookup(attr)
            if found is not None:
                if isinstance(receiver, UserInst) and isinstance(found, UserFunc) and found.kind == "property":
                    return self.returns_of(found), ""
                return found, ""
            bases = cls.all_lib_bases()
            if bases:
                return Lib(f"{bases[0]}.{attr}", bound=isinstance(receiver, UserInst)), f"<{bases[0]}>"
            return Foreign(None), ""
        if isinstance(receiver, Super):
            for base in receiver.cls.user_bases:
                found = base.lookup(attr)
                if found is not None:
                    return found, ""
            bases = receiver.cls.all_lib_bases()
            if bases:
                return Lib(f"{bases[0]}.{attr}", bound=True), ThroughSuper(bases[0])
            return Foreign(None), ""
        if isinstance(receiver, Foreign):
            return Foreign(f"{receiver.name}.{attr}" if receiver.name and receiver.name != "literal" else None), ""
        if isinstance(receiver, (UserFunc, Tup)):
            return Foreign(None), ""
        return UNKNOWN, "?"

    def call(self, node: cst.Call, scope: Scope) -> Value:
        self._last = None
        func = self.expr(node.func, scope)
        last = self._last
        shape = _shape(node.args)
        if last is not None and last[0] is node.func:
            for ref in last[1]:
                ref.call = shape
        self._last = None
        values = [self.expr(arg.value, scope) for arg in node.args]
        if isinstance(func, UserFunc) and isinstance(func.node, cst.FunctionDef):
            _note_arguments(func, node, values)
        if isinstance(func, Foreign) and func.name in ("importlib.import_module", "builtins.__import__"):
            return self._dynamic_import(node, func.name)
        if isinstance(func, Foreign) and func.name == "builtins.type" and len(node.args) == 1 and not node.args[0].star:
            of = self.expr(node.args[0].value, scope, record=False)
            if isinstance(of, Inst):
                return Lib(of.cls)
            if isinstance(of, UserInst):
                return of.cls
            return UNKNOWN
        if isinstance(func, Foreign) and func.name == "builtins.super":
            owner = _method_owner(scope)
            return Super(owner) if owner is not None else UNKNOWN
        if isinstance(func, Foreign) and func.name in _BUILTIN_RESULTS:
            # `list()`, `dict(x)`, `len(x)`: the Language Reference's built-in types and functions
            # return what they are documented to, whatever they are given.
            return Foreign(f"{func.name}()")
        if isinstance(func, UserFunc):
            return self._call_user(func, scope)
        if isinstance(func, UserClass):
            # Instantiating runs __init__: from module level, with that moment's bindings, so the
            # attributes it sets are known to methods called on the instance afterwards.
            init = func.lookup("__init__")
            if isinstance(init, UserFunc):
                self._call_user(init, scope)
        return self.call_result(func)

    def _dynamic_import(self, node: cst.Call, how: str) -> Value:
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

    def call_result(self, func: Value) -> Value:
        if isinstance(func, Lib):
            returned = self.q.model.returns(func.name)
            if returned is not None:
                return Inst(returned)
            if self.q.model.is_class(func.name):
                return Inst(func.name)
            outcomes = self.q.model.returns_all(func.name)
            if len(outcomes) == 1:
                # One library class among outcomes that do not agree: the others are not the
                # library's (`read_excel` gives a DataFrame, or a dict of them).
                return OneOf((outcomes[0], _NOT_LIBRARY))
            return self._instance_of(outcomes)
        if isinstance(func, OneOf) and func.member:
            outcomes: list[str] = []
            for cls in func.classes:
                dotted = f"{cls}.{func.member}"
                if cls != _NOT_LIBRARY and self.q.model.knows_kinds and self.q.model.kind(dotted) is None:
                    continue  # that class has no such member: the code runs only on the others
                # An alternative that gives no library class keeps the outcome open.
                outcomes.extend(self.q.model.returns_all(dotted) or (_NOT_LIBRARY,))
            found = tuple(dict.fromkeys(outcomes))
            return UNKNOWN if found == (_NOT_LIBRARY,) else self._instance_of(found)
        if isinstance(func, UserClass):
            return UserInst(func)
        if isinstance(func, UserFunc):
            return self.returns_of(func)
        return UNKNOWN

    @staticmethod
    def _instance_of(classes: tuple[str, ...]) -> Value:
        if not classes:
            return UNKNOWN
        return Inst(classes[0]) if len(classes) == 1 else OneOf(classes)

    def _call_user(self, func: UserFunc, scope: Scope) -> Value:
        """A call from module level runs the body with the bindings of that moment (the Language
        Reference resolves free names when the code runs), recording what it sees; a few such
        runs cover "called before the import, and after"."""
        if (
            scope.kind == "module" and func.home is self and func.state != "running"
            and func.top_runs < 3 and not self._quiet
        ):
            func.top_runs += 1
            return self._run(func, record=True)
        return self.returns_of(func)

    def comprehension(self, node: cst.BaseComp, scope: Scope) -> None:
        inner = Scope("comprehension", scope)
        clause: cst.CompFor | None = node.for_in
        first = True
        while clause is not None:
            self.expr(clause.iter, scope if first else inner)
            first = False
            self.assign(clause.target, UNKNOWN, inner)
            for cond in clause.ifs:
                self.expr(cond.test, inner)
            clause = clause.inner_for_in
        if isinstance(node, cst.DictComp):
            self.expr(node.key, inner)
            self.expr(node.value, inner)
        else:
            self.expr(node.elt, inner)  # type: ignore[attr-defined]

    def lambda_expr(self, node: cst.Lambda, scope: Scope) -> None:
        for p in (*node.params.posonly_params, *node.params.params, *node.params.kwonly_params):
            if p.default is not None:
                self.expr(p.default, scope)
        inner = Scope("function", scope)
        for p in _all_params(node.params):
            inner.names[p.name.value] = UNKNOWN
        self.expr(node.body, inner)

    def generic(self, node: cst.CSTNode, scope: Scope) -> None:
        """Evaluate every expression below a node this walk has no special rule for."""
        for child in node.children:
            if isinstance(child, cst.BaseExpression):
                self.expr(child, scope)
            elif isinstance(child, (cst.BaseStatement, cst.BaseSmallStatement)):
                self.stmt(child, scope)
            elif isinstance(child, cst.BaseSuite):
                self.suite(child, scope)
            else:
                self.generic(child, scope)


def _unpacked(s: cst.Assign) -> Sequence[cst.BaseElement] | None:
    """`a, b = x, y`: the value elements, when every target unpacks them one to one."""
    if not isinstance(s.value, (cst.Tuple, cst.List)):
        return None
    elements = s.value.elements
    if any(isinstance(el, cst.StarredElement) for el in elements):
        return None
    for target in s.targets:
        t = target.target
        if not isinstance(t, (cst.Tuple, cst.List)) or len(t.elements) != len(elements):
            return None
        if any(isinstance(el.value, cst.StarredElement) or isinstance(el, cst.StarredElement) for el in t.elements):
            return None
    return elements


def _note_arguments(func: UserFunc, node: cst.Call, values: Sequence[Value]) -> None:
    """Remember the library values a call passes to a project function's parameters, so its body
    sees them (a call through an instance or class attribute binds the first parameter itself)."""
    assert isinstance(func.node, cst.FunctionDef)
    params = func.node.params
    positional = [p.name.value for p in (*params.posonly_params, *params.params)]
    if func.owner is not None and func.kind in ("method", "classmethod") and isinstance(node.func, cst.Attribute):
        positional = positional[1:]
    named = {p.name.value for p in (*params.params, *params.kwonly_params)}
    index = 0
    for arg, value in zip(node.args, values):
        if arg.star:
            if arg.star == "*":
                index = len(positional)  # what follows a `*args` cannot be placed
            continue
        if arg.keyword is not None:
            name: str | None = arg.keyword.value if arg.keyword.value in named else None
        else:
            name = positional[index] if index < len(positional) else None
            index += 1
        if name is not None and is_library(value) and func.passed.get(name) != value:
            func.passed[name] = join(func.passed.get(name, UNKNOWN), value)
            if func.state == "done" and func.reruns < 1:
                # Its body was read before this call: read it once more, at the end of its scope.
                func.reruns += 1
                func.state = "pending"
                func.scope.function_home().pending.append(func)  # type: ignore[attr-defined]


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


def _catches_import_error(handler: cst.ExceptHandler | cst.ExceptStarHandler) -> bool:
    """`except ImportError`, `except ModuleNotFoundError`, a tuple holding one, or a bare `except`."""
    if handler.type is None:
        return True
    names = handler.type.elements if isinstance(handler.type, cst.Tuple) else [handler.type]
    for el in names:
        value = el.value if isinstance(el, cst.Element) else el
        if get_full_name_for_node(value) in ("ImportError", "ModuleNotFoundError", "builtins.ImportError",
                                             "Exception", "BaseException"):
            return True
    return False


def _merge(a: dict[str, Value], b: dict[str, Value]) -> dict[str, Value]:
    out = dict(a)
    for key, value in b.items():
        out[key] = join(a.get(key, UNKNOWN), value) if key in a else value
    return out


def _all_params(params: cst.Parameters) -> list[cst.Param]:
    out = [*params.posonly_params, *params.params]
    if isinstance(params.star_arg, cst.Param):
        out.append(params.star_arg)
    out.extend(params.kwonly_params)
    if params.star_kwarg is not None:
        out.append(params.star_kwarg)
    return out


def _shape(args: Sequence[cst.Arg]) -> CallShape:
    positional = 0
    star = starstar = False
    keywords: list[str] = []
    for arg in args:
        if arg.star == "**":
            starstar = True
        elif arg.star == "*":
            star = True
        elif arg.keyword is not None:
            keywords.append(arg.keyword.value)
        elif not star:
            positional += 1
    return CallShape(positional=positional, star=star, starstar=starstar, keywords=tuple(sorted(keywords)))


def _method_owner(scope: Scope) -> UserClass | None:
    s: Scope | None = scope
    while s is not None:
        if s.kind == "function" and s.owner is not None:
            return s.owner
        s = s.parent
    return None


def _class_level_defs(body: cst.BaseSuite) -> list[cst.FunctionDef]:
    """Methods a class body defines, also under `if`/`try`/`with` at class level (not nested defs)."""
    out: list[cst.FunctionDef] = []
    stack: list[cst.CSTNode] = list(body.body)
    while stack:
        node = stack.pop(0)
        if isinstance(node, cst.FunctionDef):
            out.append(node)
        elif isinstance(node, (cst.If, cst.Try, cst.TryStar, cst.With, cst.For, cst.While, cst.Else, cst.Finally,
                               cst.ExceptHandler, cst.ExceptStarHandler)):
            for child in node.children:
                if isinstance(child, cst.BaseSuite):
                    stack.extend(child.body)
                elif isinstance(child, (cst.If, cst.Else, cst.Finally, cst.ExceptHandler, cst.ExceptStarHandler)):
                    stack.append(child)
    return out


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
    parts = package.evaluated_value.split(".")
    if level - 1 > len(parts) - 1:
        return None
    base = parts[: len(parts) - (level - 1)]
    rest = name[level:]
    return ".".join(base + ([rest] if rest else []))


def _literal_names(value: cst.BaseExpression) -> tuple[str, ...] | None:
    if not isinstance(value, (cst.List, cst.Tuple)):
        return None
    names = []
    for el in value.elements:
        if not isinstance(el.value, cst.SimpleString) or not isinstance(el.value.evaluated_value, str):
            return None
        names.append(el.value.evaluated_value)
    return tuple(names)
