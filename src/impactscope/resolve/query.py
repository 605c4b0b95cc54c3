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


class Query:
    def __init__(self, changes: ChangeList, model: LibraryModel | None = None) -> None:
        self.changes = changes
        self.model: LibraryModel = model if model is not None else library_model(changes)
        self.tops = changes.top_modules
        self.compiled = tuple(
            CompiledChange(
                change=c,
                canonical=self.model.canonical(c.member),
                parent_is_class=self.model.is_class(self.model.canonical(c.member).rpartition(".")[0]),
                position=self._position(c),
            )
            for c in changes.changes
        )
        self._by_member: dict[str, list[CompiledChange]] = {}
        for cc in self.compiled:
            self._by_member.setdefault(cc.canonical, []).append(cc)
        self._by_name: dict[str, list[CompiledChange]] = {}
        for cc in self.compiled:
            self._by_name.setdefault(cc.change.name, []).append(cc)
        self.names = frozenset(self._by_name)
        self._common = builtin_attribute_names()

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
        """Changes whose member is `dotted` or a prefix of it (a removed class takes its members)."""
        name = self.model.canonical(dotted)
        out: list[CompiledChange] = []
        probe = name
        while probe:
            out.extend(self._by_member.get(probe, ()))
            probe = probe.rpartition(".")[0]
        return out

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
