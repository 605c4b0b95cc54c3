"""Statements: each kind of statement in order, with branches, loops, `match` arms and
`isinstance` checks narrowing what a name is inside the branch."""

from __future__ import annotations

from typing import Callable, Sequence

import libcst as cst

from impactscope import dunder_all
from impactscope.resolve.scopes import Scope
from impactscope.resolve.values import (
    UNKNOWN,
    Foreign,
    Inst,
    Lib,
    UserClass,
    UserFunc,
    UserInst,
    Value,
    item_of,
)
from impactscope.resolve.walk import Walk


class Statements(Walk):
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
            iterated = self.expr(s.iter, scope)
            self.loop(scope, s.body, s.orelse, lambda: self.assign(s.target, item_of(iterated), scope))
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

    # `__all__` so far (a class-level default: the value is frozen and only ever replaced).
    all_state: dunder_all.DunderAll = dunder_all.ABSENT

    def small(self, s: cst.BaseSmallStatement, scope: Scope) -> None:
        if scope.kind == "module" and (change := all_change(s)) is not None:
            self.all_state = dunder_all.apply(self.all_state, change)
            known = self.all_state.parts if self.all_state.defined else None
            # Another module's list (`x.__all__`) is not looked up here, and an unknowable one is
            # None too: `star_exports` then takes the public names, a guess, where §7.11 would
            # leave the names unknown (the surface's `star_names` does).
            self.result.all_names = None if known is None else dunder_all.names(known)
        if isinstance(s, cst.Expr):
            self.expr(s.value, scope)
        elif isinstance(s, cst.Assign):
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
            return name, Inst(self.q.model.canonical(cls.name))
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
                return Inst(self.q.model.canonical(cls.name))
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

def all_change(s: cst.BaseSmallStatement) -> dunder_all.Change | None:
    """What a statement does to `__all__`, for `impactscope.dunder_all` (None: nothing)."""
    if isinstance(s, cst.Assign) and any(_dotted(t.target) == "__all__" for t in s.targets):
        return dunder_all.Change("=", (_all_term(s.value),))
    if isinstance(s, cst.AnnAssign) and _dotted(s.target) == "__all__" and s.value is not None:
        return dunder_all.Change("=", (_all_term(s.value),))
    if isinstance(s, cst.AugAssign) and _dotted(s.target) == "__all__":
        return dunder_all.Change("+=" if isinstance(s.operator, cst.AddAssign) else "other", (_all_term(s.value),))
    if isinstance(s, cst.Del) and any(_dotted(t) == "__all__" for t in _listed(s.target)):
        return dunder_all.Change("del")
    if (isinstance(s, cst.Expr) and isinstance(call := s.value, cst.Call) and isinstance(call.func, cst.Attribute)
            and _dotted(call.func.value) == "__all__"):
        plain = all(a.keyword is None and not a.star for a in call.args)
        args = tuple(_all_term(a.value) for a in call.args)
        return dunder_all.Change(call.func.attr.value if plain else "other", args)
    return None


def _all_term(node: cst.BaseExpression) -> dunder_all.Term:
    if isinstance(node, (cst.List, cst.Tuple)):
        found = [_text(el.value) if isinstance(el, cst.Element) else None for el in node.elements]
        return dunder_all.OPAQUE if None in found else dunder_all.Names(tuple(t for t in found if t is not None))
    if (text := _text(node)) is not None:
        return dunder_all.Text(text)
    if isinstance(node, cst.Integer):
        return dunder_all.Number(int(node.evaluated_value))
    if isinstance(node, cst.Name) and node.value == "__all__":
        return dunder_all.OWN
    if isinstance(node, cst.Attribute) and node.attr.value == "__all__" and (module := _dotted(node.value)) is not None:
        return dunder_all.Other(module)
    if isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Add):
        return dunder_all.Sum(_all_term(node.left), _all_term(node.right))
    if (isinstance(node, cst.Call) and len(node.args) == 1 and node.args[0].keyword is None and not node.args[0].star
            and (func := _dotted(node.func)) is not None):
        return dunder_all.Call(func, _all_term(node.args[0].value))
    return dunder_all.OPAQUE


def _listed(target: cst.BaseExpression) -> list[cst.BaseExpression]:
    """`del a, b` names two targets (`ast` makes them two; libcst, one tuple)."""
    return [el.value for el in target.elements] if isinstance(target, (cst.Tuple, cst.List)) else [target]


def _text(node: cst.BaseExpression) -> str | None:
    """A string literal's value (`"a" "b"` too), as `ast` reads it; None for bytes and f-strings."""
    value = node.evaluated_value if isinstance(node, (cst.SimpleString, cst.ConcatenatedString)) else None
    return value if isinstance(value, str) else None


def _dotted(node: cst.BaseExpression) -> str | None:
    """`a.b.c` for a Name/Attribute chain, else None."""
    if isinstance(node, cst.Attribute):
        head = _dotted(node.value)
        return None if head is None else f"{head}.{node.attr.value}"
    return node.value if isinstance(node, cst.Name) else None
