"""What an expression in downstream code is known to be, as far as static reading can tell."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Literal, Union

import libcst as cst

if TYPE_CHECKING:
    from impactscope.resolve.scopes import Scope
    from impactscope.resolve.walk import Walk


@dataclass(frozen=True)
class Lib:
    """A library object reached by a dotted name (module, class, function, attribute).

    `bound` is true when it was reached through an instance, so a call omits `self`.
    """

    name: str
    bound: bool = False
    open: bool = False  # read off an open instance (`Inst.open`): what it gives stays open


@dataclass(frozen=True)
class Inst:
    """An instance of a library class. `open`: or something not known (one path of a branch
    gives the instance, another a value nobody can tell): the class's members are found as on
    the instance, and any other name as on an unknown receiver."""

    cls: str
    open: bool = False
    # Built around an instance of this library class (`df.loc`: an indexer over the frame), for
    # subscripts that keep every dimension; "" otherwise.
    over: str = ""


# Stands in a `OneOf` for an outcome that is not a library class: it owns no change.
NOT_LIBRARY = "?"


@dataclass(frozen=True)
class OneOf:
    """An instance of one of several library classes (a call whose overloads or union return
    differ): it is the library's, but which class's member an attribute is stays open."""

    classes: tuple[str, ...]
    member: str = ""  # set for `obj.member` read off such an instance: calling it is known
    open: bool = False  # or a value nobody can tell, as `Inst.open`


@dataclass(frozen=True)
class Foreign:
    """Known not to be the library: a literal, another package, a builtin. `name` for modules."""

    name: str | None = None


@dataclass(frozen=True)
class Display(Foreign):
    """A list, set or dict display: a builtin value whose items (a dict's values) are known one by
    one, for telling overloads apart (`concat([t1, t2])`)."""

    kind: str = "list"
    items: tuple["Value", ...] = ()
    keys: tuple[str, ...] = ()  # a dict display's string-literal keys: what `**d` surely passes


@dataclass(frozen=True)
class Items(Foreign):
    """A builtin container the library returns (`-> list[X]`), whose items are instances of the
    library class `cls`: indexing or looping gives one; its own methods are the builtin's."""

    cls: str = ""


def item_of(value: "Value") -> "Value":
    """What a loop over `value` binds its target to, when known."""
    if isinstance(value, Items):
        return Inst(value.cls)
    if isinstance(value, Display) and value.kind != "dict":
        found: Value = UNKNOWN
        for item in value.items:
            found = join(found, item)
        return found
    return UNKNOWN


@dataclass(frozen=True)
class ProjMod:
    """A module of the project being analysed."""

    name: str


BodyState = Literal["pending", "running", "done"]  # done: its references are recorded


@dataclass(eq=False)
class UserFunc:
    """A function defined in downstream code; its return value is inferred on first use.

    The walk updates the fields below `home` as it reads the body and the calls."""

    node: cst.FunctionDef
    scope: "Scope"  # the defining scope
    owner: "UserClass | None" = None
    kind: str = "function"  # function | method | classmethod | staticmethod | property
    cell: int | None = None  # the notebook cell that defines it: its body's references belong there
    top: cst.CSTNode | None = None  # the top-level statement holding its definition (for positions)
    declared: dict[str, "Value"] = field(default_factory=dict)  # parameters' annotated types
    returns_decl: "Value | None" = None  # the return annotation's type
    home: "Walk | None" = None  # the module walk that defines it: only that one records its body
    state: BodyState = "pending"
    top_runs: int = 0  # recorded runs for calls from module level, each with that moment's bindings
    returns: "Value | None" = None  # None until a first reading infers it
    # What parameters are known to receive: defaults and the arguments of calls read so far,
    # joined (a library value wins, as in `join`: the use breaks for the calls that pass one).
    passed: dict[str, "Value"] = field(default_factory=dict)
    reruns: int = 0  # recorded runs again because a later call passed a library value
    read_with: dict[str, "Value"] = field(default_factory=dict)  # `passed` when `returns` was read
    # What a call returns given the arguments it passes that differ from `read_with` (by parameter
    # name): `def tidy(df): return df.copy()` returns what each call gives it.
    by_arguments: dict[tuple[tuple[str, "Value"], ...], "Value"] = field(default_factory=dict)


@dataclass(eq=False)
class UserClass:
    """A class defined in downstream code. `lib_bases` are library classes in its ancestry."""

    name: str
    lib_bases: tuple[str, ...]
    user_bases: tuple["UserClass", ...]
    members: dict[str, "Value"] = field(default_factory=dict)
    attrs: dict[str, "Value"] = field(default_factory=dict)
    # Constructor parameters' types the class docstring documents (numpydoc puts them there).
    init_documented: dict[str, str] = field(default_factory=dict)

    def lookup(self, attr: str) -> "Value | None":
        """A member defined by this class or a user-defined ancestor; None if not user-defined."""
        if attr in self.members:
            return self.members[attr]
        if attr in self.attrs:
            return self.attrs[attr]
        for base in self.user_bases:
            found = base.lookup(attr)
            if found is not None:
                return found
        return None

    def all_lib_bases(self) -> tuple[str, ...]:
        seen: list[str] = list(self.lib_bases)
        for base in self.user_bases:
            for name in base.all_lib_bases():
                if name not in seen:
                    seen.append(name)
        return tuple(seen)


@dataclass(frozen=True, eq=False)
class UserInst:
    cls: UserClass


@dataclass(frozen=True, eq=False)
class Super:
    """The result of `super()` inside a method of a user class."""

    cls: UserClass


@dataclass(frozen=True)
class Tup:
    """A tuple whose items are known one by one (a tuple display, or a `tuple[...]` annotation):
    unpacking it gives each target its own item."""

    items: tuple["Value", ...]
    # A function that returns this tuple on some paths and something else on others
    # (`return df, pages` / `return df`): unpacking means the tuple; any other use, the rest.
    otherwise: "Value | None" = None


def plain(value: "Value") -> "Value":
    """`value` as anything but an unpacking target sees it."""
    return value.otherwise if isinstance(value, Tup) and value.otherwise is not None else value


def returned(values: "list[Value]") -> "Value":
    """What a function returns, from its return statements' values: their join, except that
    tuples of one length returned beside other values stay a tuple for unpacking (with the
    other values as its `otherwise`)."""
    tuples = [v for v in values if isinstance(v, Tup)]
    rest = [plain(v) for v in values if not isinstance(v, Tup) or v.otherwise is not None]
    if not tuples or len({len(t.items) for t in tuples}) != 1 or not rest:
        return _either_of([plain(v) for v in values])
    items = tuple(UNKNOWN for _ in tuples[0].items)
    for t in tuples:
        items = tuple(join(a, b) for a, b in zip(items, t.items))
    return Tup(items, otherwise=_either_of(rest))


def _either_of(values: "list[Value]") -> "Value":
    """What one of the paths gives (`either` over them); UNKNOWN for none."""
    if not values:
        return UNKNOWN
    result = values[0]
    for v in values[1:]:
        result = either(result, v)
    return result


class _Unknown:
    __slots__ = ()

    def __repr__(self) -> str:
        return "UNKNOWN"


UNKNOWN = _Unknown()

Value = Union[Lib, Inst, OneOf, Foreign, ProjMod, UserFunc, UserClass, UserInst, Super, Tup, _Unknown]


def is_library(value: object) -> bool:
    return isinstance(value, (Lib, Inst, OneOf)) or (
        isinstance(value, (UserClass, UserInst)) and bool(_cls(value).all_lib_bases())
    )


def _cls(value: "UserClass | UserInst") -> UserClass:
    return value if isinstance(value, UserClass) else value.cls


def join(a: Value, b: Value) -> Value:
    """Merge the values a name may hold after two branches.

    A library value wins over anything else: code that goes on to use the name as the
    library (the usual `try: import lib / except ImportError: lib = None`) only works
    on the branch where it is the library.
    """
    if a is b or a == b:
        return a
    a, b = plain(a), plain(b)
    if a is UNKNOWN or a is None:
        return b
    if b is UNKNOWN or b is None:
        return a
    if isinstance(a, (Inst, OneOf)) and isinstance(b, (Inst, OneOf)):
        # Two library instances of different classes: one of them, not the first one seen.
        classes = tuple(dict.fromkeys(_classes(a) + _classes(b)))
        if not _member(a) and not _member(b):
            if len(classes) == 1:
                return Inst(classes[0], open=a.open or b.open)
            return OneOf(classes, open=a.open or b.open)
    if is_library(a):
        return a
    if is_library(b):
        return b
    return a


def either(a: Value, b: Value) -> Value:
    """What one of two paths gives (branches, `x if c else y`, `x or y`, return statements): as
    `join`, but an instance beside a value nobody can tell stays open to it (`Inst.open`)."""
    if isinstance(a, (Inst, OneOf)) and plain(b) is UNKNOWN:
        return opened(a)
    if isinstance(b, (Inst, OneOf)) and plain(a) is UNKNOWN:
        return opened(b)
    return join(a, b)


def opened(value: "Value", really: bool = True) -> "Value":
    """`value` left open to a value nobody can tell, when `really`."""
    if not really or not isinstance(value, (Inst, OneOf)) or value.open:
        return value
    return replace(value, open=True)


def _classes(value: "Inst | OneOf") -> tuple[str, ...]:
    return (value.cls,) if isinstance(value, Inst) else value.classes


def _member(value: "Inst | OneOf") -> str:
    return value.member if isinstance(value, OneOf) else ""
