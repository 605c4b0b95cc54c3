"""Scopes: the names a module, function, class or comprehension binds while the walk reads it."""

from __future__ import annotations

from typing import TYPE_CHECKING, Literal

from impactscope.resolve.values import Value, either

if TYPE_CHECKING:
    from impactscope.resolve.values import UserClass, UserFunc

ScopeKind = Literal["module", "function", "class", "comprehension"]


class Scope:
    __slots__ = ("kind", "parent", "names", "globals", "nonlocals", "pending", "owner", "returns")

    def __init__(self, kind: ScopeKind, parent: "Scope | None", owner: "UserClass | None" = None) -> None:
        self.kind = kind
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

    def method_owner(self) -> "UserClass | None":
        """The user class whose method is being read here (`super()` and `self` need it)."""
        s: Scope | None = self
        while s is not None:
            if s.kind == "function" and s.owner is not None:
                return s.owner
            s = s.parent
        return None


def merge(a: dict[str, Value], b: dict[str, Value]) -> dict[str, Value]:
    """The bindings after two paths that bound `a` and `b`."""
    out = dict(a)
    for key, value in b.items():
        out[key] = either(a[key], value) if key in a else value
    return out
