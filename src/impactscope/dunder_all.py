"""What a module's `__all__` holds: one set of rules for the library surface (read with `ast`)
and the resolver (read with libcst).

Each reader describes a module-level statement that binds, changes or deletes `__all__` as a
`Change` over `Term`s, which name no syntax tree; `apply` folds the changes, in the order the
module runs them, into a `DunderAll`. What counts is the value `__all__` holds once the module has
run: the Python Language Reference, 7.11 "The import statement": "The public names defined by a
module are determined by checking the module's namespace for a variable named __all__; if
defined, it must be a sequence of strings which are names defined or imported by that module. [...]
If __all__ is not defined, the set of public names includes all names found in the module's
namespace which do not begin with an underscore character".
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, NamedTuple, Union

# The list methods that change which names a list holds (the library reference, "Mutable
# Sequence Types"). A call of any other method on `__all__` leaves it unknowable.
METHODS = ("append", "extend", "insert", "remove")


@dataclass(frozen=True)
class Names:
    """A list or tuple display of string literals: `["a", "b"]`, `("a",)`."""

    names: tuple[str, ...]


@dataclass(frozen=True)
class Text:
    """One string literal (what `append`, `insert` and `remove` take)."""

    value: str


@dataclass(frozen=True)
class Number:
    """An integer literal (the index `insert` takes)."""

    value: int


@dataclass(frozen=True)
class Own:
    """`__all__` itself, read: the value it holds so far."""


@dataclass(frozen=True)
class Other:
    """`<dotted>.__all__`: another module's list, known once the modules are linked."""

    module: str  # the dotted text before `.__all__`


@dataclass(frozen=True)
class Sum:
    """`left + right`."""

    left: Term
    right: Term


@dataclass(frozen=True)
class Call:
    """`func(arg)`: one positional argument, no keyword, no star."""

    func: str  # the callee's dotted text
    arg: Term


@dataclass(frozen=True)
class Opaque:
    """Anything else: a comprehension, a name, another call, a set display, an f-string."""


Term = Union[Names, Text, Number, Own, Other, Sum, Call, Opaque]
OWN = Own()
OPAQUE = Opaque()


@dataclass(frozen=True)
class Change:
    """One module-level statement that binds, changes or deletes `__all__`."""

    # "=" (plain or annotated with a value), "+=", "del", a method name (`__all__.extend(x)`),
    # or "other": another augmented operator, a call with keywords or a starred argument.
    op: str
    args: tuple[Term, ...] = ()


class Part(NamedTuple):
    """A piece of `__all__`, in order: ("lit", names), ("ref", dotted text of a module whose
    `__all__` is added), or ("remove", name)."""

    kind: str
    value: tuple[str, ...] | str


@dataclass(frozen=True)
class DunderAll:
    """`__all__` after the statements read so far."""

    defined: bool = False
    parts: tuple[Part, ...] | None = ()  # None: bound to a value no reading of the text can know


ABSENT = DunderAll()
UNKNOWABLE = DunderAll(True, None)


def apply(state: DunderAll, change: Change) -> DunderAll:
    """`state` after `change`."""
    op, args = change.op, change.args
    if op == "del":
        return ABSENT  # §7.11: with no `__all__`, `import *` takes the public names
    if op == "=":
        return DunderAll(True, _parts(args[0], state))
    parts = state.parts if state.defined else None
    if parts is None:
        return UNKNOWABLE  # changing an unknown (or missing: NameError) list: still unknown
    added: tuple[Part, ...] | None = None
    if op in ("+=", "extend") and len(args) == 1:
        added = _parts(args[0], state)
    elif op == "append" and len(args) == 1 and isinstance(args[0], Text):
        added = (Part("lit", (args[0].value,)),)
    elif op == "remove" and len(args) == 1 and isinstance(args[0], Text):
        added = (Part("remove", args[0].value),)
    elif op == "insert" and len(args) == 2 and isinstance(args[1], Text):
        so_far = names(parts)
        if so_far is not None and isinstance(args[0], Number):
            listed = list(so_far)
            listed.insert(args[0].value, args[1].value)  # list.insert's own rules for the index
            return DunderAll(True, (Part("lit", tuple(listed)),))
        # Where it goes is not known here, but that it is listed is: `import *` binds the same
        # names in any order (§7.11 binds each listed name), so it goes last.
        added = (Part("lit", (args[1].value,)),)
    return UNKNOWABLE if added is None else DunderAll(True, parts + added)


def names(
    parts: tuple[Part, ...], other: Callable[[str], tuple[str, ...] | None] = lambda _: None
) -> tuple[str, ...] | None:
    """The names `parts` spell, in order; `other` gives the names of a "ref" part's module
    (None, the default for every module: not known, and then neither are these)."""
    out: list[str] = []
    for part in parts:
        if part.kind == "lit":
            out.extend(part.value)
        elif part.kind == "remove":
            # list.remove takes the first; a missing name raises ValueError and the import fails,
            # so no `import *` ever reads that list.
            if part.value in out:
                out.remove(part.value)  # type: ignore[arg-type]
        else:
            found = other(part.value)  # type: ignore[arg-type]
            if found is None:
                return None
            out.extend(found)
    return tuple(out)


def _parts(term: Term, state: DunderAll) -> tuple[Part, ...] | None:
    """The parts a value holds, or None where the text cannot tell.

    Not a sequence of strings: a set display (CPython's `import *` indexes `__all__`, and a set
    raises TypeError: tried on CPython 3.11), one string (a sequence of one-letter names, never
    meant), anything computed."""
    if isinstance(term, Names):
        return (Part("lit", term.names),)
    if isinstance(term, Own):
        return state.parts if state.defined else None
    if isinstance(term, Other):
        return (Part("ref", term.module),)
    if isinstance(term, Sum):
        left, right = _parts(term.left, state), _parts(term.right, state)
        return None if left is None or right is None else left + right
    if isinstance(term, Call) and term.func.rpartition(".")[2] in ("list", "tuple", "sorted"):
        inner = _parts(term.arg, state)
        if inner is None or term.func.rpartition(".")[2] != "sorted":
            return inner
        listed = names(inner)
        # With another module's list in it the order waits for linking; the names do not.
        return inner if listed is None else (Part("lit", tuple(sorted(listed))),)
    return None
