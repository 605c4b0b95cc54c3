"""The change list compiled for matching: canonical members, names to look for, common names."""

from __future__ import annotations

import builtins
from dataclasses import dataclass

from impactscope.changes import Change, ChangeList
from impactscope.resolve.model import LibraryModel, library_model


def builtin_attribute_names() -> frozenset[str]:
    """Names a Python programmer meets on builtin objects: if a changed member shares one, an
    unknown receiver could just as well be a list or a dict (read from the running interpreter)."""
    names: set[str] = set(dir(builtins))
    for kind in (object, type, int, float, complex, bool, str, bytes, bytearray, memoryview,
                 list, tuple, dict, set, frozenset, range, slice, BaseException):
        names.update(dir(kind))
    import io

    names.update(dir(io.TextIOWrapper))
    names.update(dir(io.BytesIO))
    return frozenset(names)


@dataclass(frozen=True)
class CompiledChange:
    change: Change
    canonical: str
    parent_is_class: bool
    position: int | None  # from the change, else from the library's signature when known
    owner: str | None = None  # the canonical class whose member this is (None: a module's member)


class Query:
    def __init__(self, changes: ChangeList, model: LibraryModel | None = None) -> None:
        self.changes = changes
        self.model: LibraryModel = model if model is not None else library_model(changes)
        self.tops = changes.top_modules
        self.compiled = tuple(self._compile(c) for c in changes.changes)
        # A change is found three ways: by the path it is spelled with (a public path that
        # re-exports a private module still names the change), by its defining place when it is a
        # module's member, and by (class, attribute) when it is a class's member, so that two
        # classes sharing one inherited definition keep their changes apart.
        self._by_spelled: dict[str, list[CompiledChange]] = {}
        self._by_member: dict[str, list[CompiledChange]] = {}
        self._by_owner: dict[tuple[str, str], list[CompiledChange]] = {}
        for cc in self.compiled:
            self._by_spelled.setdefault(cc.change.member, []).append(cc)
            if cc.owner is not None:
                self._by_owner.setdefault((cc.owner, cc.change.name), []).append(cc)
            else:
                self._by_member.setdefault(cc.canonical, []).append(cc)
        self._by_name: dict[str, list[CompiledChange]] = {}
        for cc in self.compiled:
            self._by_name.setdefault(cc.change.name, []).append(cc)
        self.names = frozenset(self._by_name)
        self._common = builtin_attribute_names()
        # Class members whose name no builtin has: in a project that uses the library, even a file
        # that never imports it counts them at possible (it may be handed the library's objects).
        self.loose_names = frozenset(cc.change.name for cc in self.compiled
                                     if cc.parent_is_class and cc.change.name not in self._common)

    def _compile(self, c: Change) -> CompiledChange:
        model = self.model
        canonical = model.canonical(c.member)
        parent = c.member.rpartition(".")[0]
        owner = model.canonical(parent) if parent and model.is_class(parent) else None
        parent_is_class = owner is not None or model.is_class(canonical.rpartition(".")[0])
        if not parent_is_class and not model.knows_kinds and parent.rpartition(".")[2][:1].isupper():
            # Without the library's source, a CapWords owner is taken for a class (PEP 8 naming,
            # common practice): it decides only how unknown receivers are judged, never a proof.
            parent_is_class = True
        return CompiledChange(change=c, canonical=canonical, parent_is_class=parent_is_class,
                              position=self._position(c), owner=owner)

    def _position(self, change: Change) -> int | None:
        if change.position is not None or change.parameter is None:
            return change.position
        lookup = getattr(self.model, "position", None)
        return lookup(change.member, change.parameter) if lookup is not None else None

    def display(self, dotted: str) -> str:
        """How reports name a library object: its public path when the model knows one."""
        public = getattr(self.model, "public_name", None)
        return public(dotted) if public is not None else dotted

    def is_library_module(self, dotted: str) -> bool:
        return dotted.split(".", 1)[0] in self.tops

    def match(self, dotted: str) -> list[CompiledChange]:
        """Changes whose member is `dotted` or a prefix of it (a removed class takes its members).

        Each prefix matches by its spelling, then by what it resolves to: a module's member by its
        defining place, a class's member by the class and the classes it inherits from.
        """
        out: list[CompiledChange] = []
        probe = dotted
        while probe:
            out.extend(self._by_spelled.get(probe, ()))
            parent, _, leaf = probe.rpartition(".")
            owner = self.model.canonical(parent) if parent else ""
            if parent and self.model.is_class(owner):
                for cls in self.model.mro(owner) or (owner,):
                    out.extend(self._by_owner.get((cls, leaf), ()))
            else:
                out.extend(self._by_member.get(self.model.canonical(probe), ()))
            probe = parent
        unique: dict[int, CompiledChange] = {}
        for cc in out:
            unique.setdefault(id(cc), cc)
        return list(unique.values())

    def owns(self, cls: str, cc: CompiledChange) -> bool:
        """Whether `cls.<member's name>` is the change's member: the class or an ancestor owns it."""
        return any(cc in self._by_owner.get((c, cc.change.name), ()) for c in self.model.mro(cls) or (cls,))

    def by_name(self, attr: str) -> list[CompiledChange]:
        return self._by_name.get(attr, [])

    def is_specific(self, cc: CompiledChange) -> bool:
        """True when no builtin object and no other class of the library has the member's name."""
        name = cc.change.name
        if name in self._common:
            return False
        # Another owner counts only if its attribute is a different member (not inherited from ours).
        others = {o for o in self.model.owners(name) if self.model.canonical(f"{o}.{name}") != cc.canonical}
        return not others
