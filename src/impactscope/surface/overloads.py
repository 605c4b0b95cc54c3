"""Overloaded signatures (PEP 484 `@overload`), read so a call can pick the one it matches.

An overloaded library function can return different classes: `concat` of DataFrames gives a
DataFrame and of Series a Series; `x[key]` gives a column for a label and a frame for a list.
Joining every overload's outcome loses that, so each overload keeps its parameters and what
their annotations admit, as far as a static reading can test them against a call's arguments.

`Accepts` is one annotation, read as a union of parts. A part the reading cannot test makes
the verdict "maybe" (`unsure`); only an annotation that admits every value (`Any`, `object`)
is `anything`. A call matches the first overload whose parameters all admit its arguments,
as type checkers do (PEP 484, "Function/method overloading"; the typing specification's
overload call evaluation); an argument whose value is not known leaves every overload open.
"""

from __future__ import annotations

import ast
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping

from .syntax import dotted_name, forward_reference

# Builtin types a literal or a display can be an instance of. Names only: the values are
# never built, and a library class that derives from one of these is judged apart.
BUILTIN_TYPES = frozenset({
    "str", "bytes", "int", "float", "complex", "bool", "list", "tuple", "dict", "set", "frozenset",
    "slice", "range", "bytearray", "None",
})
# Generic containers whose parameter is the type of the items (or, for mappings, of the values).
_ITEM_CONTAINERS = frozenset({
    "Iterable", "Sequence", "Collection", "Container", "MutableSequence", "AbstractSet", "MutableSet",
    "Iterator", "Reversible", "list", "List", "set", "Set", "frozenset", "FrozenSet", "KeysView",
    "ValuesView",
})
_MAPPINGS = frozenset({"Mapping", "MutableMapping", "dict", "Dict", "DefaultDict", "defaultdict", "OrderedDict"})
_CONCRETE = {"list": "list", "List": "list", "set": "set", "Set": "set", "frozenset": "frozenset",
             "FrozenSet": "frozenset", "dict": "dict", "Dict": "dict"}
_ANY = frozenset({"Any", "object", "builtins.object", "typing.Any", "typing_extensions.Any"})
# Modules whose classes are abstract or structural: a builtin value may well be one of them.
_STRUCTURAL_MODULES = ("typing.", "typing_extensions.", "collections.abc.", "_typeshed.", "numbers.")


@dataclass(frozen=True)
class Accepts:
    """What an annotation admits: the union of the parts set here."""

    anything: bool = False  # Any, object: every value
    unsure: bool = False  # a part that cannot be tested statically (TypeVar, protocol, Callable, ...)
    literals: tuple[tuple[str, str], ...] = ()  # PEP 586 Literal values as (type name, repr)
    builtins: tuple[str, ...] = ()  # BUILTIN_TYPES the value may be an instance of
    classes: tuple[str, ...] = ()  # canonical library classes (subclasses too)
    items: tuple[str, ...] = ()  # an iterable (or a mapping's values) of these library classes
    foreign: tuple[str, ...] = ()  # other named classes (`datetime.date`): no builtin value is one

    def union(self, other: "Accepts") -> "Accepts":
        def both(a: tuple[Any, ...], b: tuple[Any, ...]) -> tuple[Any, ...]:
            return tuple(dict.fromkeys((*a, *b)))

        return Accepts(
            anything=self.anything or other.anything,
            unsure=self.unsure or other.unsure,
            literals=both(self.literals, other.literals),
            builtins=both(self.builtins, other.builtins),
            classes=both(self.classes, other.classes),
            items=both(self.items, other.items),
            foreign=both(self.foreign, other.foreign),
        )

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        if self.anything:
            out["anything"] = True
        if self.unsure:
            out["unsure"] = True
        for key in ("literals", "builtins", "classes", "items", "foreign"):
            value = getattr(self, key)
            if value:
                out[key] = [list(v) for v in value] if key == "literals" else list(value)
        return out

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> "Accepts":
        return cls(
            anything=bool(d.get("anything", False)),
            unsure=bool(d.get("unsure", False)),
            literals=tuple((str(t), str(r)) for t, r in d.get("literals", ())),
            builtins=tuple(d.get("builtins", ())),
            classes=tuple(d.get("classes", ())),
            items=tuple(d.get("items", ())),
            foreign=tuple(d.get("foreign", ())),
        )


ANYTHING = Accepts(anything=True)
UNSURE = Accepts(unsure=True)


@dataclass(frozen=True)
class OverloadParameter:
    """One parameter of one overload; `self`/`cls` left out, as in `Parameter`."""

    name: str
    kind: str  # positional-only | positional-or-keyword | keyword-only | var-positional | var-keyword
    optional: bool  # has a default (`= ...` in a stub)
    accepts: Accepts = field(default=ANYTHING)


@dataclass(frozen=True)
class Overload:
    """One `@overload` signature: its parameters and what a call that matches it returns.

    `outcomes` are canonical library classes, `SELF` (the receiver's class), or None for a value
    that is not the library's; an empty tuple is an explicit `-> None`.
    """

    parameters: tuple[OverloadParameter, ...]
    outcomes: tuple[str | None, ...]

    def to_json(self) -> dict[str, Any]:
        return {
            "parameters": [[p.name, p.kind, p.optional, p.accepts.to_json()] for p in self.parameters],
            "outcomes": list(self.outcomes),
        }

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> "Overload":
        return cls(
            parameters=tuple(OverloadParameter(str(n), str(k), bool(o), Accepts.from_json(a))
                             for n, k, o, a in d["parameters"]),
            outcomes=tuple(d["outcomes"]),
        )


def literal_key(value: object) -> tuple[str, str] | None:
    """(type name, repr) for a value Literal[...] may hold (PEP 586: ints, strs, bytes, bools,
    None); `Literal[0]` and `Literal[False]` stay apart because the type is part of the key."""
    if value is None:
        return ("None", "None")
    if isinstance(value, (bool, int, str, bytes)):
        return (type(value).__name__, repr(value))
    return None


@dataclass
class AnnotationReader:
    """Reads annotations of one library into `Accepts`, given how the linker resolves names.

    `resolve(module, dotted)` gives (canonical library member or None, outside dotted name or
    None); `library_class(path)` says whether a member is a class that is tested nominally (a
    protocol is not); `alias(path)` gives (module, annotation) for a module-level type alias.
    """

    resolve: Callable[[str, str], tuple[str | None, str | None]]
    library_class: Callable[[str], bool]
    alias: Callable[[str], tuple[str, ast.expr] | None]
    _depth: int = 0

    def read(self, module: str, node: ast.expr | None) -> Accepts:
        if node is None:
            return ANYTHING  # unannotated: the call decides nothing
        if self._depth > 20:
            return UNSURE
        self._depth += 1
        try:
            return self._read(module, node)
        finally:
            self._depth -= 1

    def _read(self, module: str, node: ast.expr) -> Accepts:
        if isinstance(node, ast.Constant):
            if node.value is None:
                return Accepts(builtins=("None",))
            if isinstance(node.value, str):  # a forward reference (PEP 484)
                inner = forward_reference(node.value)
                return UNSURE if inner is None else self.read(module, inner)
            return UNSURE
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitOr):
            return self.read(module, node.left).union(self.read(module, node.right))
        if isinstance(node, ast.Subscript):
            return self._subscript(module, node)
        text = dotted_name(node)
        if text is None:
            return UNSURE
        return self._named(module, text, None)

    def _subscript(self, module: str, node: ast.Subscript) -> Accepts:
        head_text = dotted_name(node.value)
        head = (head_text or "").rpartition(".")[2]
        items = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
        if head in ("Optional", "Union"):
            out = Accepts(builtins=("None",)) if head == "Optional" else Accepts()
            for item in items:
                out = out.union(self.read(module, item))
            return out
        if head == "Literal":
            keys = []
            for item in items:
                if isinstance(item, ast.Subscript) and dotted_name(item.value) in ("Literal", "typing.Literal"):
                    keys.extend(self._subscript(module, item).literals)
                    continue
                key = literal_key(item.value) if isinstance(item, ast.Constant) else None
                if key is None:
                    return UNSURE  # an enum member: not told apart here
                keys.append(key)
            return Accepts(literals=tuple(keys))
        if head == "Annotated" and items:
            return self.read(module, items[0])
        if head in _ITEM_CONTAINERS or head in _MAPPINGS:
            of = self.read(module, items[-1]) if items else UNSURE
            concrete = _CONCRETE.get(head)
            if of.classes and not (of.anything or of.unsure or of.literals or of.builtins or of.items or of.foreign):
                return Accepts(items=of.classes)
            return Accepts(builtins=(concrete,)) if concrete else UNSURE
        if head in ("tuple", "Tuple"):
            return Accepts(builtins=("tuple",)) if len(items) == 2 and _is_ellipsis(items[1]) else UNSURE
        if head_text is None:
            return UNSURE
        return self._named(module, head_text, node)

    def _named(self, module: str, text: str, generic: ast.Subscript | None) -> Accepts:
        if text in _ANY:
            return ANYTHING
        if text in BUILTIN_TYPES or text.startswith("builtins."):
            name = text.rpartition(".")[2]
            if name == "object":
                return ANYTHING
            return Accepts(builtins=(name,)) if name in BUILTIN_TYPES else UNSURE
        target, outside = self.resolve(module, text)
        if target is not None:
            if self.library_class(target):
                return Accepts(classes=(target,))
            aliased = self.alias(target)
            if aliased is not None and generic is None:
                return self.read(*aliased)
            return UNSURE
        if outside is None:
            return UNSURE
        if outside in _ANY:
            return ANYTHING
        if outside.startswith("builtins."):
            return self._named(module, outside, generic)
        if outside.startswith(_STRUCTURAL_MODULES) or "." not in outside:
            return UNSURE
        return Accepts(foreign=(outside,))


def _is_ellipsis(node: ast.expr) -> bool:
    return isinstance(node, ast.Constant) and node.value is Ellipsis


__all__ = ["ANYTHING", "UNSURE", "Accepts", "AnnotationReader", "BUILTIN_TYPES", "Overload",
           "OverloadParameter", "literal_key"]
