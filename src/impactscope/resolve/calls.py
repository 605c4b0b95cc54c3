"""Calls: what calling a value gives (the library's declared returns, built-in results, a user
class's instance, a user function's inferred return), and the shape a call passes its arguments in."""

from __future__ import annotations

from typing import Callable, Sequence

import libcst as cst

from impactscope.resolve.arguments import fact_of, literal_of, string_keys
from impactscope.resolve.definitions import note_arguments
from impactscope.resolve.overloads import Fact, select
from impactscope.resolve.refs import CallShape
from impactscope.resolve.scopes import Scope
from impactscope.resolve.values import (
    UNKNOWN,
    Display,
    Foreign,
    Inst,
    NOT_LIBRARY,
    Items,
    Lib,
    OneOf,
    Super,
    UserClass,
    UserFunc,
    UserInst,
    Value,
    opened,
    plain,
)
from impactscope.resolve.walk import Walk

# Built-in callables whose result is a built-in object whatever the arguments (the Python Library
# Reference, "Built-in Functions" and "Built-in Types"). Not `abs`, `round`, `sum`, `min`, `max`,
# `next`, `getattr`, `iter`, `copy`: they hand back what an argument's own methods return.
_BUILTIN_RESULTS = frozenset(
    f"builtins.{name}"
    for name in (
        "list", "dict", "set", "frozenset", "tuple", "str", "bytes", "bytearray", "int", "float",
        "complex", "bool", "range", "len", "repr", "ascii", "sorted", "enumerate", "zip", "map",
        "filter", "reversed", "open", "isinstance", "issubclass", "hasattr", "callable", "id",
        "hash", "format", "chr", "ord", "hex", "oct", "bin", "input", "print", "dir", "vars",
        "object", "memoryview", "slice",
    )
)


class Calls(Walk):
    def call(self, node: cst.Call, scope: Scope) -> Value:
        # The references the callee itself yields carry the call's shape (patterns show it).
        func = self.expr(node.func, scope, call=call_shape(node.args, self._dict_keys(node.args, scope)))
        values = [plain(self.expr(arg.value, scope)) for arg in node.args]
        given = note_arguments(func, node, values) if isinstance(func, UserFunc) else None
        if isinstance(func, Foreign) and func.name in ("importlib.import_module", "builtins.__import__"):
            return self.dynamic_import(node, func.name)
        if isinstance(func, Foreign) and func.name == "builtins.type" and len(node.args) == 1 and not node.args[0].star:
            of = self.expr(node.args[0].value, scope, record=False)
            if isinstance(of, Inst):
                return Lib(of.cls)
            if isinstance(of, UserInst):
                return of.cls
            return UNKNOWN
        if (isinstance(func, Foreign) and func.name in ("copy.copy", "copy.deepcopy") and node.args
                and not node.args[0].star and node.args[0].keyword is None):
            # The Library Reference, "copy": a shallow or deep copy of x is an object of x's class.
            return values[0]
        if isinstance(func, Foreign) and func.name == "builtins.super":
            owner = scope.method_owner()
            return Super(owner) if owner is not None else UNKNOWN
        if isinstance(func, Foreign) and func.name in _BUILTIN_RESULTS:
            # `list()`, `dict(x)`, `len(x)`: the Language Reference's built-in types and functions
            # return what they are documented to, whatever they are given.
            return Foreign(f"{func.name}()")
        if isinstance(func, UserFunc):
            return self.call_user(func, scope, given)
        if isinstance(func, UserClass):
            # Instantiating runs __init__: from module level, with that moment's bindings, so the
            # attributes it sets are known to methods called on the instance afterwards.
            init = func.lookup("__init__")
            if isinstance(init, UserFunc):
                self.call_user(init, scope)
        if isinstance(func, Lib) and self.q.model.returns(func.name) is None and not any(a.star for a in node.args):
            def arguments() -> tuple[list[Fact], dict[str, Fact]]:
                positional = [fact_of(a.value, v) for a, v in zip(node.args, values) if a.keyword is None]
                keywords = {a.keyword.value: fact_of(a.value, v) for a, v in zip(node.args, values) if a.keyword is not None}
                return positional, keywords

            picked = self.pick_overload(func.name, arguments)
            if picked is not None:
                return opened(picked, func.open)
        return self.call_result(func)

    def pick_overload(self, dotted: str, arguments: Callable[[], tuple[list[Fact], dict[str, Fact]]]) -> Value | None:
        """What a call of an overloaded library callable gives, from the overloads it can match
        first (resolve/overloads.py); None when the overloads cannot tell. `arguments` gives what
        is known of the arguments (positional, by keyword), asked only for an overloaded callable:
        most calls are not, and reading literals costs."""
        overloads = self.q.model.overloads(dotted)
        if not overloads:
            return None
        positional, keywords = arguments()
        outcomes = select(overloads, positional, keywords, self.q.model)
        if outcomes is None:
            return None
        classes = tuple(c for c in outcomes if c is not None)
        if not classes:
            return UNKNOWN
        if len(classes) == 1 and None in outcomes:
            return OneOf((classes[0], NOT_LIBRARY))
        return instance_of(classes)

    def operator(self, dunders: tuple[str, str], left: Value, right: Value,
                 left_node: cst.BaseExpression, right_node: cst.BaseExpression) -> Value:
        """`left OP right` with a library instance on a side: what the library's special method is
        typed to return. The Language Reference, "Emulating numeric types": `x.__op__(y)` first;
        the reflected `y.__rop__(x)` when x is a builtin literal (whose method declines a library
        operand). A right operand of a subclass that overrides the reflected method would go
        first, so two instances of different classes are not judged."""
        method, reflected = dunders
        if isinstance(left, Inst) and not (isinstance(right, Inst) and right.cls != left.cls):
            if self.q.model.kind(f"{left.cls}.{method}") is not None:
                return self.call_dunder(left.cls, method, right_node, right)
            return UNKNOWN
        if isinstance(right, Inst) and literal_of(left_node) is not None:
            if self.q.model.kind(f"{right.cls}.{reflected}") is not None:
                return self.call_dunder(right.cls, reflected, left_node, left)
        return UNKNOWN

    def _dict_keys(self, args: Sequence[cst.Arg], scope: Scope) -> tuple[str, ...]:
        """Keywords a `**d` argument surely passes: the string keys of the dict display `d` is
        bound to (or is). Later `d.update(...)` only adds keys; a `del d[k]` would take one away,
        which is rare enough to be left out."""
        keys: list[str] = []
        for arg in args:
            if arg.star != "**":
                continue
            value = arg.value
            if isinstance(value, cst.Dict):
                keys.extend(string_keys(value))
            elif isinstance(value, cst.Name):
                bound = self.lookup(scope, value.value)  # type: ignore[attr-defined]
                if isinstance(bound, Display) and bound.kind == "dict":
                    keys.extend(bound.keys)
        return tuple(keys)

    def call_dunder(self, cls: str, method: str, other: cst.BaseExpression | None = None,
                    value: Value = UNKNOWN) -> Value:
        """`cls.method(other)` for an operator (no `other` for a unary one)."""
        dotted = f"{cls}.{method}"
        if self.q.model.returns(dotted) is None:
            picked = self.pick_overload(dotted, lambda: ([fact_of(other, value)] if other is not None else [], {}))
            if picked is not None:
                return picked
        return self.call_result(Lib(dotted, bound=True))

    def call_result(self, func: Value) -> Value:
        if isinstance(func, Lib) and func.open:
            # A method of an open instance: on the unknown alternative, the call gives anything.
            return opened(self.call_result(Lib(func.name, func.bound)))
        if isinstance(func, Lib):
            returned = self.q.model.returns(func.name)
            if returned is not None:
                return Inst(returned)
            if self.q.model.is_class(func.name):
                return Inst(self.q.model.canonical(func.name))
            items = self.q.model.items(func.name)
            if items is not None:
                return Items(name="builtins.list()", cls=items)
            outcomes = self.q.model.returns_all(func.name)
            if len(outcomes) == 1:
                # One library class among outcomes that do not agree: the others are not the
                # library's (`read_excel` gives a DataFrame, or a dict of them).
                return OneOf((outcomes[0], NOT_LIBRARY))
            return instance_of(outcomes)
        if isinstance(func, OneOf) and func.member:
            outcomes: list[str] = []
            for cls in func.classes:
                dotted = f"{cls}.{func.member}"
                if cls != NOT_LIBRARY and self.q.model.knows_kinds and self.q.model.kind(dotted) is None:
                    continue  # that class has no such member: the code runs only on the others
                # An alternative that gives no library class keeps the outcome open.
                outcomes.extend(self.q.model.returns_all(dotted) or (NOT_LIBRARY,))
            found = tuple(dict.fromkeys(outcomes))
            return UNKNOWN if found == (NOT_LIBRARY,) else opened(instance_of(found), func.open)
        if isinstance(func, UserClass):
            return UserInst(func)
        if isinstance(func, UserFunc):
            return self.returns_of(func)
        return UNKNOWN


# The Language Reference, "Emulating numeric types" and "Basic customization" (rich comparisons):
# the special method an operator calls on its left operand, and the reflected one on its right.
BINARY = {
    "Add": ("__add__", "__radd__"), "Subtract": ("__sub__", "__rsub__"), "Multiply": ("__mul__", "__rmul__"),
    "Divide": ("__truediv__", "__rtruediv__"), "FloorDivide": ("__floordiv__", "__rfloordiv__"),
    "Modulo": ("__mod__", "__rmod__"), "Power": ("__pow__", "__rpow__"),
    "MatrixMultiply": ("__matmul__", "__rmatmul__"), "BitAnd": ("__and__", "__rand__"),
    "BitOr": ("__or__", "__ror__"), "BitXor": ("__xor__", "__rxor__"),
    "LeftShift": ("__lshift__", "__rlshift__"), "RightShift": ("__rshift__", "__rrshift__"),
}
COMPARISON = {
    "Equal": ("__eq__", "__eq__"), "NotEqual": ("__ne__", "__ne__"), "LessThan": ("__lt__", "__gt__"),
    "GreaterThan": ("__gt__", "__lt__"), "LessThanEqual": ("__le__", "__ge__"),
    "GreaterThanEqual": ("__ge__", "__le__"),
}
UNARY = {"Minus": "__neg__", "Plus": "__pos__", "BitInvert": "__invert__"}


def call_shape(args: Sequence[cst.Arg], unpacked: Sequence[str] = ()) -> CallShape:
    """The call's shape; `unpacked`: keywords a `**` argument is known to pass."""
    positional = 0
    star = starstar = False
    keywords: list[str] = list(unpacked)
    for arg in args:
        if arg.star == "**":
            starstar = True
        elif arg.star == "*":
            star = True
        elif arg.keyword is not None:
            keywords.append(arg.keyword.value)
        elif not star:
            positional += 1
    return CallShape(positional=positional, star=star, starstar=starstar, keywords=tuple(sorted(set(keywords))))

def instance_of(classes: tuple[str, ...]) -> Value:
    if not classes:
        return UNKNOWN
    return Inst(classes[0]) if len(classes) == 1 else OneOf(classes)
