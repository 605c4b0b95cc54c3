"""Small questions asked of `ast` nodes while modules are read and linked: dotted names, literal
strings, guards, digests, and the outside names that make properties, type variables, `Self`."""

from __future__ import annotations

import ast
import hashlib

from impactscope import dunder_all


PROPERTY = frozenset({"property", "cached_property", "abstractproperty"})
# Outside names whose call makes a property (the standard library's documentation of each).
PROPERTY_FACTORIES = frozenset({
    "property", "builtins.property", "functools.cached_property", "abc.abstractproperty",
    "types.DynamicClassAttribute", "enum.property",
})
# Common practice: libraries name their caching property decorators after these (pandas and
# statsmodels `cache_readonly`, Pyramid `reify`) or with "property" in the name.
PROPERTY_WORDS = frozenset({"cache_readonly", "reify"})
TYPEVAR = frozenset({"typing.TypeVar", "typing_extensions.TypeVar"})
ACCESSOR = frozenset({"setter", "getter", "deleter"})
PEP702 = frozenset({"warnings.deprecated", "typing_extensions.deprecated"})
SELF_NAMES = frozenset({"typing.Self", "typing_extensions.Self"})
TRIVIAL = frozenset({b"", b"...", b"pass", b"raise NotImplementedError", b"raise NotImplementedError()"})
CALLABLE_KINDS = frozenset({"function", "method", "classmethod", "staticmethod", "property"})
TRY_NODES = tuple(t for t in (ast.Try, getattr(ast, "TryStar", None)) if t is not None)
TYPE_ALIAS_NODE = getattr(ast, "TypeAlias", None)  # Python 3.12 `type X = ...`


def dotted_name(node: ast.expr | None) -> str | None:
    """`a.b.c` for a Name/Attribute chain, else None."""
    parts: list[str] = []
    while isinstance(node, ast.Attribute):
        parts.append(node.attr)
        node = node.value
    if not isinstance(node, ast.Name):
        return None
    parts.append(node.id)
    return ".".join(reversed(parts))


def last_part(text: str | None) -> str:
    return (text or "").rpartition(".")[2]


def is_type_checking(test: ast.expr) -> bool:
    return last_part(dotted_name(test)) == "TYPE_CHECKING"


def is_main_guard(test: ast.expr) -> bool:
    return (
        isinstance(test, ast.Compare)
        and isinstance(test.left, ast.Name)
        and test.left.id == "__name__"
        and any(isinstance(c, ast.Constant) and c.value == "__main__" for c in test.comparators)
    )


def is_namespace_call(node: ast.expr) -> bool:
    return (
        isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id in ("globals", "vars")
        and not node.args
    )


def forward_reference(text: str) -> ast.expr | None:
    """The expression a string annotation holds (a PEP 484 forward reference); None if it does
    not parse."""
    try:
        return ast.parse(text.strip(), mode="eval").body
    except SyntaxError:
        return None


def string_value(node: ast.expr | None) -> str | None:
    return node.value if isinstance(node, ast.Constant) and isinstance(node.value, str) else None


def string_values(node: ast.expr | None) -> tuple[str, ...] | None:
    """The strings of a literal collection (a dict: its keys), e.g. `("a", "b")`, `frozenset({"a"})`."""
    if isinstance(node, ast.Call) and last_part(dotted_name(node.func)) in ("frozenset", "set", "tuple", "list") \
            and len(node.args) == 1 and not node.keywords:
        node = node.args[0]
    if isinstance(node, (ast.List, ast.Tuple, ast.Set)):
        items: list[ast.expr | None] = list(node.elts)
    elif isinstance(node, ast.Dict):
        items = list(node.keys)
    else:
        return None
    found = [string_value(e) for e in items]
    return None if None in found else tuple(s for s in found if s is not None)


def doc_digest(node: ast.FunctionDef | ast.AsyncFunctionDef | ast.ClassDef | ast.Module) -> str:
    """A digest of a definition's docstring with whitespace folded (re-indenting is not a change)."""
    doc = ast.get_docstring(node, clean=False)
    if not doc or not doc.strip():
        return ""
    return hashlib.blake2b(" ".join(doc.split()).encode(), digest_size=8).hexdigest()


def changes_all(node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
    """Whether a function adds to or rewrites the module's `__all__` when called."""
    for sub in ast.walk(node):
        if (isinstance(sub, ast.Call) and isinstance(sub.func, ast.Attribute) and isinstance(sub.func.value, ast.Name)
                and sub.func.value.id == "__all__" and sub.func.attr in dunder_all.METHODS):
            return True
        if isinstance(sub, ast.Global) and "__all__" in sub.names:
            return True
    return False


def all_change(st: ast.stmt) -> dunder_all.Change | None:
    """What a statement does to `__all__`, for `impactscope.dunder_all` (None: nothing)."""
    if isinstance(st, ast.Assign) and any(dotted_name(t) == "__all__" for t in st.targets):
        return dunder_all.Change("=", (_all_term(st.value),))
    if isinstance(st, ast.AnnAssign) and dotted_name(st.target) == "__all__" and st.value is not None:
        return dunder_all.Change("=", (_all_term(st.value),))
    if isinstance(st, ast.AugAssign) and dotted_name(st.target) == "__all__":
        return dunder_all.Change("+=" if isinstance(st.op, ast.Add) else "other", (_all_term(st.value),))
    if isinstance(st, ast.Delete) and any(dotted_name(t) == "__all__" for t in _listed(st.targets)):
        return dunder_all.Change("del")
    if (isinstance(st, ast.Expr) and isinstance(call := st.value, ast.Call) and isinstance(call.func, ast.Attribute)
            and dotted_name(call.func.value) == "__all__"):
        plain = not call.keywords and not any(isinstance(a, ast.Starred) for a in call.args)
        return dunder_all.Change(call.func.attr if plain else "other", tuple(_all_term(a) for a in call.args))
    return None


def _listed(targets: list[ast.expr]) -> list[ast.expr]:
    """`del (a, b)` names two targets, as `del a, b` does."""
    return [t for target in targets for t in (target.elts if isinstance(target, (ast.Tuple, ast.List)) else [target])]


def _all_term(node: ast.expr) -> dunder_all.Term:
    if isinstance(node, (ast.List, ast.Tuple)):
        found = [string_value(e) for e in node.elts]
        return dunder_all.OPAQUE if None in found else dunder_all.Names(tuple(t for t in found if t is not None))
    if (text := string_value(node)) is not None:
        return dunder_all.Text(text)
    if isinstance(node, ast.Constant) and type(node.value) is int:
        return dunder_all.Number(node.value)
    if isinstance(node, ast.Name) and node.id == "__all__":
        return dunder_all.OWN
    if isinstance(node, ast.Attribute) and node.attr == "__all__" and (module := dotted_name(node.value)) is not None:
        return dunder_all.Other(module)
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):
        return dunder_all.Sum(_all_term(node.left), _all_term(node.right))
    if (isinstance(node, ast.Call) and len(node.args) == 1 and not isinstance(node.args[0], ast.Starred)
            and not node.keywords and (func := dotted_name(node.func)) is not None):
        return dunder_all.Call(func, _all_term(node.args[0]))
    return dunder_all.OPAQUE


def returns_value(node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
    """Whether a function returns a value somewhere (nested definitions aside)."""
    todo: list[ast.AST] = list(node.body)
    while todo:
        sub = todo.pop()
        if isinstance(sub, ast.Return) and sub.value is not None and not is_none(sub.value):
            return True
        if not isinstance(sub, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)):
            todo.extend(ast.iter_child_nodes(sub))
    return False


def built_on_first(node: ast.FunctionDef | ast.AsyncFunctionDef) -> str | None:
    """The callee, when every value the function returns is a call of it given the function's first
    parameter (`return _Indexer("loc", self)`: an object built around the instance); else None.
    Nested definitions aside."""
    positional = [*node.args.posonlyargs, *node.args.args]
    if not positional:
        return None
    first = positional[0].arg
    callees: set[str | None] = set()
    todo: list[ast.AST] = list(node.body)
    while todo:
        sub = todo.pop()
        if isinstance(sub, ast.Return):
            call = sub.value
            given = isinstance(call, ast.Call) and any(
                isinstance(a, ast.Name) and a.id == first for a in (*call.args, *(k.value for k in call.keywords)))
            callees.add(dotted_name(call.func) if given else None)  # type: ignore[union-attr]
        elif not isinstance(sub, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)):
            todo.extend(ast.iter_child_nodes(sub))
    return callees.pop() if len(callees) == 1 else None


def returns_first(node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
    """Whether every way out of the function returns its first parameter (`return self`, the
    fluent `fit` of estimators): each `return` gives it and the body ends in one, so no path falls
    off the end with None; a generator or coroutine returns something else. Nested definitions aside."""
    positional = [*node.args.posonlyargs, *node.args.args]
    if not positional or isinstance(node, ast.AsyncFunctionDef) or not node.body:
        return False
    if not isinstance(node.body[-1], (ast.Return, ast.Raise)):
        return False
    first = positional[0].arg
    todo: list[ast.AST] = list(node.body)
    returns = 0
    while todo:
        sub = todo.pop()
        if isinstance(sub, (ast.Yield, ast.YieldFrom, ast.Await)):
            return False
        if isinstance(sub, ast.Return):
            if not (isinstance(sub.value, ast.Name) and sub.value.id == first):
                return False
            returns += 1
        elif not isinstance(sub, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)):
            todo.extend(ast.iter_child_nodes(sub))
    return returns > 0


def ends_in_raise(body: list[ast.stmt]) -> bool:
    return bool(body) and isinstance(body[-1], ast.Raise)


def is_none(node: ast.expr) -> bool:
    return (isinstance(node, ast.Constant) and node.value is None) or dotted_name(node) == "None"
