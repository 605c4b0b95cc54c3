"""What the resolver needs to know about the library, behind one small protocol.

The change list's `[types]` table gives a minimal model; the surface read from the library's
own source (impactscope.surface) gives a complete one. Both answer the same questions.
"""

from __future__ import annotations

import os
from typing import TYPE_CHECKING, Protocol

from impactscope.changes import ChangeList

if TYPE_CHECKING:
    from impactscope.surface.overloads import Overload


class LibraryModel(Protocol):
    def canonical(self, dotted: str) -> str: ...

    def returns(self, dotted: str) -> str | None: ...

    def is_class(self, dotted: str) -> bool: ...

    def star_names(self, module: str) -> tuple[str, ...] | None: ...

    def binds(self, module: str, name: str) -> bool | None: ...

    def owners(self, attr: str) -> frozenset[str]: ...

    def mro(self, cls: str) -> tuple[str, ...]: ...

    def kind(self, dotted: str) -> str | None: ...

    def returns_all(self, dotted: str) -> tuple[str, ...]: ...

    def attribute_type(self, dotted: str) -> str | None: ...

    def items(self, dotted: str) -> str | None: ...

    def wraps_owner(self, dotted: str) -> bool: ...

    def overloads(self, dotted: str) -> "tuple[Overload, ...]": ...

    def only_library_bases(self, cls: str) -> bool: ...

    @property
    def knows_kinds(self) -> bool: ...


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
        self._tops = changes.top_modules

    def canonical(self, dotted: str) -> str:
        return dotted

    def returns(self, dotted: str) -> str | None:
        return self._returns.get(dotted)

    def is_class(self, dotted: str) -> bool:
        return dotted in self._classes

    def binds(self, module: str, name: str) -> bool | None:
        return None  # only the library's source can say what a module binds

    def star_names(self, module: str) -> tuple[str, ...] | None:
        # Without the library's source only the names the change list mentions are known.
        return tuple(n for n in self._children.get(module, ()) if not n.startswith("_"))

    def owners(self, attr: str) -> frozenset[str]:
        return self._owners.get(attr, frozenset())

    def mro(self, cls: str) -> tuple[str, ...]:
        return (cls,) if self.is_class(cls) else ()

    def returns_all(self, dotted: str) -> tuple[str, ...]:
        found = self.returns(dotted)
        return () if found is None else (found,)

    def attribute_type(self, dotted: str) -> str | None:
        return None  # `[types]` says what calls return, not what attributes hold

    def items(self, dotted: str) -> str | None:
        return None  # a change list's `[types]` names no container returns

    def wraps_owner(self, dotted: str) -> bool:
        return False  # only a property's body can say so

    def overloads(self, dotted: str) -> "tuple[Overload, ...]":
        return ()  # `[types]` gives one return type per name

    def only_library_bases(self, cls: str) -> bool:
        return False

    def kind(self, dotted: str) -> str | None:
        """"class" or "module" where the change list says so; None for the rest (not known)."""
        if self.is_class(dotted):
            return "class"
        if dotted in self._tops:
            return "module"
        return None

    @property
    def knows_kinds(self) -> bool:
        return False


class SurfaceModel:
    """The model read from the library's own source, with the change list's `[types]` on top.

    `surface` is an `impactscope.surface.model.Surface`; typed loosely here so the resolver does
    not depend on how the surface is built.
    """

    def __init__(self, surface: "object", changes: ChangeList) -> None:
        self._surface = surface
        self._types = TypesModel(changes)
        public: dict[str, str] = {}
        for alias, target in getattr(surface, "aliases", {}).items():
            best = public.get(target)
            if best is None or (alias.count("."), len(alias), alias) < (best.count("."), len(best), best):
                public[target] = alias
        self._public = public

    def canonical(self, dotted: str) -> str:
        return self._surface.canonical(dotted)  # type: ignore[attr-defined]

    def returns(self, dotted: str) -> str | None:
        declared = self._types.returns(dotted)
        if declared is not None:
            return self.canonical(declared)
        declared = self._types.returns(self.canonical(dotted))
        if declared is not None:
            return self.canonical(declared)
        # The path as reached, not its canonical form: `Self` is the receiver's class.
        return self._surface.returns(dotted)  # type: ignore[attr-defined]

    def returns_all(self, dotted: str) -> tuple[str, ...]:
        declared = self._types.returns(dotted) or self._types.returns(self.canonical(dotted))
        if declared is not None:
            return (self.canonical(declared),)
        return tuple(self._surface.returns_all(dotted))  # type: ignore[attr-defined]

    def attribute_type(self, dotted: str) -> str | None:
        return self._surface.attribute_type(dotted)  # type: ignore[attr-defined]

    def items(self, dotted: str) -> str | None:
        """The library class of the items a callable returns in a list or another sequence."""
        if self._types.returns(dotted) or self._types.returns(self.canonical(dotted)):
            return None  # the change list's `[types]` decides
        member = self._surface.member(dotted)  # type: ignore[attr-defined]
        return None if member is None or member.items is None else self.canonical(member.items)

    def wraps_owner(self, dotted: str) -> bool:
        """A property that hands out an object built around the instance (an indexer over it)."""
        member = self._surface.member(dotted)  # type: ignore[attr-defined]
        return member is not None and bool(member.wraps_owner)

    def overloads(self, dotted: str) -> "tuple[Overload, ...]":
        if self._types.returns(dotted) or self._types.returns(self.canonical(dotted)):
            return ()  # the change list's `[types]` decides
        return self._surface.overloads(dotted)  # type: ignore[attr-defined]

    def only_library_bases(self, cls: str) -> bool:
        """Every ancestor of `cls` is the library's (or `object`, `Generic`): no instance of it is
        a builtin value or an outside class's instance."""
        order = self.mro(cls)
        if not order:
            return False
        for k in order:
            member = self._surface.member(k)  # type: ignore[attr-defined]
            if member is None:
                return False
            for base in member.bases:
                if base in order or base.rpartition(".")[2] in ("object", "Generic") or base.startswith(("Generic[", "typing.Generic")):
                    continue
                return False
        return True

    @property
    def surface(self) -> object:
        """The library surface this model reads (an `impactscope.surface.model.Surface`)."""
        return self._surface

    def is_class(self, dotted: str) -> bool:
        return bool(self._surface.is_class(self.canonical(dotted))) or self._types.is_class(dotted)  # type: ignore[attr-defined]

    def star_names(self, module: str) -> tuple[str, ...] | None:
        return self._surface.star_names(self.canonical(module))  # type: ignore[attr-defined]

    def binds(self, module: str, name: str) -> bool | None:
        return self._surface.binds(module, name)  # type: ignore[attr-defined,no-any-return]

    def owners(self, attr: str) -> frozenset[str]:
        return frozenset(self._surface.owners(attr))  # type: ignore[attr-defined]

    def mro(self, cls: str) -> tuple[str, ...]:
        if self._types.is_class(cls) and not self.is_class(cls):
            return (cls,)
        return tuple(self._surface.mro(cls))  # type: ignore[attr-defined]

    def kind(self, dotted: str) -> str | None:
        """The member's kind as the source defines it (module, class, method, property, ...)."""
        member = self._surface.member(dotted)  # type: ignore[attr-defined]
        if member is None:
            return "class" if self._types.is_class(dotted) else None
        return str(member.kind)

    @property
    def knows_kinds(self) -> bool:
        return True

    def position(self, member: str, parameter: str) -> int | None:
        """The 0-based position of `parameter` (self excluded), from the member's signature."""
        params = self._surface.parameters(self.canonical(member))  # type: ignore[attr-defined]
        for p in params or ():
            if p.name == parameter:
                return p.position
        return None

    def public_name(self, dotted: str) -> str:
        """The shortest public path to a member, for reports (canonical paths may be private)."""
        canonical = self.canonical(dotted)
        if canonical in self._public:
            return self._public[canonical]
        owner, _, leaf = canonical.rpartition(".")
        if owner and owner in self._public:
            return f"{self._public[owner]}.{leaf}"
        return dotted


def library_model(changes: ChangeList, *, source: "os.PathLike[str] | str | None" = None,
                  installed: str | None = None) -> LibraryModel:
    """The model a scan resolves against: the library's own source read statically when one is
    given (`installed` names an installed distribution, `source` a path; either overrides
    `[library] source`; see `surface.locate.library_location`), else the change list's `[types]`
    alone."""
    from impactscope.surface import build_surface
    from impactscope.surface.check import check_members
    from impactscope.surface.locate import library_location

    where = library_location(source, installed, changes.source)
    if where is None:
        return TypesModel(changes)
    surface = build_surface(where, changes.import_name)
    check_members(changes, surface, where)  # a changed member the surface lacks is an input error
    return SurfaceModel(surface, changes)
