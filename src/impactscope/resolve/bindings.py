"""Bindings: looking a name up, binding it (honouring `global` and `nonlocal`), assignment
targets, and the merge of what branches and loops bind."""

from __future__ import annotations

import builtins
from typing import Callable, Sequence

import libcst as cst

from impactscope.resolve.scopes import Scope, merge
from impactscope.resolve.values import UNKNOWN, Foreign, Tup, UserInst, Value, join, plain
from impactscope.resolve.walk import Walk

_BUILTINS = frozenset(dir(builtins))


class Bindings(Walk):
    def lookup(self, scope: Scope, name: str) -> Value:
        if name in scope.globals:
            return self.scope.names.get(name, _builtin(name))
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
        return _builtin(name)

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

    def assign(self, target: cst.BaseExpression, value: Value, scope: Scope) -> None:
        if not isinstance(target, (cst.Tuple, cst.List)):
            value = plain(value)
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
                self.attribute_ref(target, receiver, scope)
        else:
            self.expr(target, scope)

    def delete(self, target: cst.BaseExpression, scope: Scope) -> None:
        if isinstance(target, cst.Name):
            self.bind(scope, target.value, UNKNOWN)
        elif isinstance(target, (cst.Tuple, cst.List)):
            for el in target.elements:
                self.delete(el.value, scope)
        else:
            self.expr(target, scope)

    def branches(self, scope: Scope, arms: Sequence[Callable[[], object]]) -> None:
        before = dict(scope.names)
        merged: dict[str, Value] | None = None
        for arm in arms:
            scope.names = dict(before)
            arm()
            merged = scope.names if merged is None else merge(merged, scope.names)
        scope.names = merged if merged is not None else before

    def loop(self, scope: Scope, body: cst.BaseSuite, orelse: cst.Else | None, bind_target: Callable[[], None] | None) -> None:
        before = dict(scope.names)
        if bind_target is not None:
            bind_target()
        self.suite(body, scope)
        if orelse is not None:
            self.suite(orelse.body, scope)
        scope.names = merge(before, scope.names)


def _builtin(name: str) -> Value:
    if name in _BUILTINS:
        return Foreign("builtins." + name)
    return UNKNOWN
