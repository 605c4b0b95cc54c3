"""What the resolver needs to know about the library, behind one small protocol.

The change list's `[types]` table gives a minimal model; the surface read from the library's
own source (impactscope.surface) gives a complete one. Both answer the same questions.
"""

from __future__ import annotations

from typing import Protocol

from impactscope.changes import ChangeList


class LibraryModel(Protocol):
    def canonical(self, dotted: str) -> str: ...

    def returns(self, dotted: str) -> str | None: ...

    def is_class(self, dotted: str) -> bool: ...

    def star_names(self, module: str) -> tuple[str, ...] | None: ...

    def owners(self, attr: str) -> frozenset[str]: ...


class TypesModel:
    """The model the change list alone gives: return types from `[types]`, nothing canonicalised."""

    def __init__(self, changes: ChangeList) -> None:
        self._returns = dict(changes.types)
        self._classes = frozenset(v for v in changes.types.values())
        children: dict[str, set[str]] = {}
        owners: dict[str, set[str]] = {}
        known = [c.member for c in changes.changes] + list(changes.types) + list(changes.types.values())
        for dotted in known:
            parent, _, leaf = dotted.rpartition(".")
            if parent:
                children.setdefault(parent, set()).add(leaf)
                owners.setdefault(leaf, set()).add(parent)
        self._children = {k: tuple(sorted(v)) for k, v in children.items()}
        self._owners = {k: frozenset(v) for k, v in owners.items()}

    def canonical(self, dotted: str) -> str:
        return dotted

    def returns(self, dotted: str) -> str | None:
        return self._returns.get(dotted)

    def is_class(self, dotted: str) -> bool:
        return dotted in self._classes

    def star_names(self, module: str) -> tuple[str, ...] | None:
        # Without the library's source only the names the change list mentions are known.
        return tuple(n for n in self._children.get(module, ()) if not n.startswith("_"))

    def owners(self, attr: str) -> frozenset[str]:
        return self._owners.get(attr, frozenset())
