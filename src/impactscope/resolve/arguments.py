"""What is known of an argument (or an operand, or a subscript's key) for telling overloads
apart: the literal as written, or the value the walk found for it (resolve/overloads.py)."""

from __future__ import annotations

import ast

import libcst as cst

from impactscope.resolve.overloads import UNKNOWN_FACT, Fact
from impactscope.resolve.values import Display, Foreign, Inst, Tup, Value
from impactscope.surface.overloads import literal_key

# Expressions whose builtin type the syntax alone tells (the Language Reference, "Displays for
# lists, sets and dictionaries", "Formatted string literals", "Numeric literals").
_BY_SYNTAX = {"Float": "float", "Imaginary": "complex", "FormattedString": "str", "ConcatenatedString": "str",
              "ListComp": "list", "SetComp": "set", "DictComp": "dict"}
# `list()`, `str(x)`, ...: a builtin type called gives an instance of that type.
_CONSTRUCTORS = frozenset({"list", "dict", "set", "frozenset", "tuple", "str", "bytes", "int", "float", "bool",
                           "complex", "slice"})


def literal_of(node: cst.BaseExpression) -> tuple[str, str] | None:
    """(type name, repr) of a literal constant of the kinds PEP 586 allows, else None."""
    if isinstance(node, cst.Name) and node.value in ("True", "False", "None"):
        return literal_key({"True": True, "False": False, "None": None}[node.value])
    if isinstance(node, (cst.Integer, cst.SimpleString)) or (
            isinstance(node, cst.UnaryOperation) and isinstance(node.operator, cst.Minus)
            and isinstance(node.expression, cst.Integer)):
        try:
            return literal_key(ast.literal_eval(cst.Module([]).code_for_node(node)))
        except (ValueError, SyntaxError):
            return None
    return None


def fact_of(node: cst.BaseExpression, value: Value) -> Fact:
    """What is known of the expression `node`, whose value the walk found to be `value`."""
    literal = literal_of(node)
    if literal is not None:
        return Fact(literal=literal, builtin=literal[0])
    if isinstance(value, Inst):
        return Fact(cls=value.cls)
    if isinstance(value, Display):
        return Fact(builtin=value.kind, items=tuple(v.cls if isinstance(v, Inst) else None for v in value.items))
    if isinstance(value, Tup):
        return Fact(builtin="tuple", items=tuple(v.cls if isinstance(v, Inst) else None for v in value.items))
    named = _BY_SYNTAX.get(type(node).__name__)
    if named is not None:
        return Fact(builtin=named)
    if isinstance(value, Foreign) and value.name and value.name.startswith("builtins.") and value.name.endswith("()"):
        kind = value.name[len("builtins."):-2]
        if kind in _CONSTRUCTORS:
            return Fact(builtin=kind)
    return UNKNOWN_FACT


def string_keys(node: cst.Dict) -> tuple[str, ...]:
    """The keys of a dict display that are string literals (`{"alpha": a, **rest}`: "alpha")."""
    out = []
    for el in node.elements:
        key = getattr(el, "key", None)
        if isinstance(key, cst.SimpleString) and isinstance(key.evaluated_value, str):
            out.append(key.evaluated_value)
    return tuple(out)


__all__ = ["fact_of", "literal_of", "string_keys"]
