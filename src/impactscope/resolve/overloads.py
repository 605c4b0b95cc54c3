"""Picking the overload a call matches (PEP 484 `@overload`), from what is known of its arguments.

A type checker takes the first overload whose parameters accept the call's arguments. Here an
argument is often only partly known, so each overload is judged YES (every argument is
admitted), NO (an argument is refused, or the call's shape does not fit) or MAYBE. The call's
outcome is that of the first YES, joined with those of every MAYBE before it: any of them could
be the first match. When every overload says NO (the reading of the annotations is too rough,
or the code is wrong), nothing is picked and the caller keeps the join of all overloads.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass
from typing import TYPE_CHECKING, Iterable

if TYPE_CHECKING:
    from impactscope.surface.overloads import Accepts, Overload

    from .model import LibraryModel


class Verdict(enum.IntEnum):
    NO = 0
    MAYBE = 1
    YES = 2


@dataclass(frozen=True)
class Fact:
    """What is known of one argument's value.

    `literal`: (type name, repr) of a literal constant; `builtin`: the builtin type of a literal
    or display (`list`, `slice`, ...); `cls`: the library class of an instance; `items`: for a
    display, the library class of each item (None: not known). All None: nothing is known.
    """

    literal: tuple[str, str] | None = None
    builtin: str | None = None
    cls: str | None = None
    items: tuple[str | None, ...] | None = None

    @property
    def known(self) -> bool:
        return self.builtin is not None or self.cls is not None


UNKNOWN_FACT = Fact()

# PEP 484, "The numeric tower": an int is acceptable where a float is expected, and either where
# a complex is; bool is a subclass of int (the Language Reference, "The standard type hierarchy").
_PROMOTES = {"bool": ("bool", "int", "float", "complex"), "int": ("int", "float", "complex"),
             "float": ("float", "complex")}


def admits(accepts: "Accepts", fact: Fact, model: "LibraryModel") -> Verdict:
    """Whether a value with `fact` is admitted by an annotation read as `accepts`."""
    if accepts.anything:
        return Verdict.YES
    if not fact.known:
        return Verdict.MAYBE
    best = Verdict.MAYBE if accepts.unsure else Verdict.NO
    if fact.cls is not None:
        ancestors = model.mro(fact.cls) or (fact.cls,)
        if any(c in ancestors for c in accepts.classes):
            return Verdict.YES
        # Library classes are tested by inheritance alone. An instance of a class with an outside
        # ancestor could be anything that ancestor is (a str, a date); and any library instance
        # may well be iterable.
        if (accepts.builtins or accepts.foreign) and not model.only_library_bases(fact.cls):
            best = max(best, Verdict.MAYBE)
        if accepts.items:
            best = max(best, Verdict.MAYBE)
        return best
    # A builtin value: a literal or a display.
    if fact.literal is not None and fact.literal in accepts.literals:
        return Verdict.YES
    kinds = _PROMOTES.get(fact.builtin or "", (fact.builtin,))
    if any(k in accepts.builtins for k in kinds):
        return Verdict.YES
    if accepts.items and fact.items is not None:
        verdict = _items_admitted(accepts.items, fact.items, model)
        best = max(best, verdict)
    elif accepts.items and fact.builtin in _CONTAINERS:
        best = max(best, Verdict.MAYBE)  # a comprehension or `list(x)`: its items are not known
    return best


# Builtin containers an `Iterable[X]` (or, for a dict, a `Mapping[K, X]`) may admit, by their items.
_CONTAINERS = frozenset({"list", "tuple", "set", "frozenset", "dict"})


def _items_admitted(wanted: tuple[str, ...], items: tuple[str | None, ...], model: "LibraryModel") -> Verdict:
    if not items:
        return Verdict.MAYBE  # an empty display fits any item type
    out = Verdict.YES
    for cls in items:
        if cls is None:
            out = min(out, Verdict.MAYBE)
            continue
        ancestors = model.mro(cls) or (cls,)
        if not any(c in ancestors for c in wanted):
            return Verdict.NO if model.only_library_bases(cls) else Verdict.MAYBE
    return out


def judge(overload: "Overload", positional: list[Fact], keywords: dict[str, Fact], model: "LibraryModel") -> Verdict:
    """How a call with these arguments (no `*`/`**` unpacking) fits one overload."""
    return _fit(overload, positional, keywords, model)[0]


def _fit(overload: "Overload", positional: list[Fact], keywords: dict[str, Fact],
         model: "LibraryModel") -> tuple[Verdict, dict[tuple[str, object], "Accepts"]]:
    """`judge`, with the annotation each argument judged MAYBE met (by argument: `("pos", i)`
    or `("kw", name)`)."""
    params = overload.parameters
    slots = [p for p in params if p.kind in ("positional-only", "positional-or-keyword")]
    var_pos = next((p for p in params if p.kind == "var-positional"), None)
    var_kw = next((p for p in params if p.kind == "var-keyword"), None)
    verdict = Verdict.YES
    unsure: dict[tuple[str, object], "Accepts"] = {}
    given: set[str] = set()
    for i, fact in enumerate(positional):
        if i < len(slots):
            param = slots[i]
            given.add(param.name)
        elif var_pos is not None:
            param = var_pos
        else:
            return Verdict.NO, {}
        admitted = admits(param.accepts, fact, model)
        if admitted is Verdict.MAYBE:
            unsure[("pos", i)] = param.accepts
        verdict = min(verdict, admitted)
    by_name = {p.name: p for p in params if p.kind in ("positional-or-keyword", "keyword-only")}
    for name, fact in keywords.items():
        param = by_name.get(name)
        if param is None:
            if var_kw is None:
                return Verdict.NO, {}
            param = var_kw
        elif name in given:
            return Verdict.NO, {}
        given.add(name)
        admitted = admits(param.accepts, fact, model)
        if admitted is Verdict.MAYBE:
            unsure[("kw", name)] = param.accepts
        verdict = min(verdict, admitted)
    for p in params:
        if p.kind in ("var-positional", "var-keyword") or p.optional or p.name in given:
            continue
        return Verdict.NO, {}  # a required parameter that the call does not pass
    return verdict, unsure


def select(overloads: Iterable["Overload"], positional: list[Fact], keywords: dict[str, Fact],
           model: "LibraryModel") -> tuple[str | None, ...] | None:
    """The outcomes of the overloads the call can match first; None when none fits.

    An overload is left out when an earlier one that may match is sure to match whenever it
    does: every argument the earlier one is unsure of meets the very same annotation in this one
    (pandas' `concat(objs: Iterable[NDFrame], axis: Literal[1])` before `concat(objs:
    Iterable[NDFrame], axis: Axis)`, called with `axis=1` and a list nobody can type).
    """
    outcomes: list[str | None] = []
    fitted = False
    earlier: list[dict[tuple[str, object], "Accepts"]] = []
    for overload in overloads:
        verdict, unsure = _fit(overload, positional, keywords, model)
        if verdict is Verdict.NO:
            continue
        fitted = True
        if any(all(unsure.get(arg) == accepts for arg, accepts in before.items()) for before in earlier):
            continue
        outcomes.extend(overload.outcomes)
        if verdict is Verdict.YES:
            break
        earlier.append(unsure)
    return tuple(dict.fromkeys(outcomes)) if fitted else None


__all__ = ["Fact", "UNKNOWN_FACT", "Verdict", "admits", "judge", "select"]
