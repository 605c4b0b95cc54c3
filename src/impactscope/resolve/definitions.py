"""Definitions: functions and classes of the analysed code, their annotations, and the reading of
a function's body: deferred to the end of its scope, or run early to learn what a call returns."""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence

import libcst as cst

from impactscope.resolve.docstrings import DocumentedTypes, documented_types
from impactscope.resolve.scopes import Scope
from impactscope.resolve.values import (
    UNKNOWN,
    Foreign,
    Inst,
    Lib,
    Tup,
    UserClass,
    UserFunc,
    UserInst,
    Value,
    is_library,
    join,
    returned,
)
from impactscope.resolve.walk import Walk

_PROPERTY_DECORATORS = frozenset({"builtins.property", "functools.cached_property"})
_FIRST_PARAM_METHODS = frozenset({"method", "property"})
# How many calls deep return values are inferred: deeper chains give "unknown" rather than
# recursing without bound (a call chain through hundreds of functions is not rare in real code).
_INFERENCE_DEPTH = 6


class Definitions(Walk):
    def function_def(self, node: cst.FunctionDef, scope: Scope) -> None:
        kind = "method" if scope.kind == "class" else "function"
        wrapped_by_library = False
        for deco in node.decorators:
            value = self.expr(deco.decorator, scope, context="decorator")
            name = value.name if isinstance(value, Foreign) else None
            if name in ("builtins.staticmethod",):
                kind = "staticmethod"
            elif name in ("builtins.classmethod",):
                kind = "classmethod"
            elif name in _PROPERTY_DECORATORS or (
                isinstance(deco.decorator, cst.Attribute) and deco.decorator.attr.value in ("setter", "getter", "deleter")
            ):
                kind = "property" if scope.kind == "class" else kind
            elif isinstance(value, Lib):
                wrapped_by_library = True
        params = node.params
        defaults: dict[str, Value] = {}
        for p in (*params.posonly_params, *params.params, *params.kwonly_params):
            if p.default is not None:
                defaults[p.name.value] = self.expr(p.default, scope)
        declared: dict[str, Value] = {}
        starred = {id(params.star_arg), id(params.star_kwarg)}
        for p in all_params(params):
            if p.annotation is not None:
                t = self.annotation(p.annotation.annotation, scope, record=True)
                # `*args: T` and `**kw: T` describe the elements; the names are a tuple and a dict.
                if t is not None and id(p) not in starred:
                    declared[p.name.value] = t
        if node.returns is not None:
            returns_decl = self.annotation(node.returns.annotation, scope, record=True)
        else:
            returns_decl = None
        # Types the docstring documents stand where no annotation is given.
        by_doc, returns_doc = self._docstring_types(node, scope)
        for p in all_params(params):
            if p.name.value in by_doc and p.annotation is None and id(p) not in starred:
                declared[p.name.value] = by_doc[p.name.value]
        if returns_decl is None:
            returns_decl = returns_doc
        func = UserFunc(
            node=node, scope=scope, owner=scope.owner if scope.kind == "class" else None, kind=kind, cell=self.at.cell,
            home=self, top=self.at.top, declared=declared, returns_decl=returns_decl,
            passed={k: v for k, v in defaults.items() if is_library(v)},
        )
        scope.function_home().pending.append(func)
        if scope.function_home() is self.scope:
            self.functions.append(func)
        self.bind(scope, node.name.value, UNKNOWN if wrapped_by_library else func)

    def class_def(self, node: cst.ClassDef, scope: Scope) -> None:
        for deco in node.decorators:
            self.expr(deco.decorator, scope, context="decorator")
        lib_bases: list[str] = []
        user_bases: list[UserClass] = []
        for arg in node.bases:
            value = self.expr(arg.value, scope, context="subclass")
            if isinstance(value, Lib):
                lib_bases.append(value.name)
            elif isinstance(value, UserClass):
                user_bases.append(value)
        for kw in node.keywords:
            self.expr(kw.value, scope)
        cls = UserClass(name=node.name.value, lib_bases=tuple(lib_bases), user_bases=tuple(user_bases))
        if docstring := node.get_docstring(clean=True):
            documented = documented_types(docstring)
            cls.init_documented.update(documented.params)
            for name, text in documented.attributes.items():
                # As `self.name = <value>` would: what the methods assign joins it.
                if (t := self.documented(text, scope)) is not None:
                    cls.attrs[name] = t
        body = Scope("class", scope, owner=cls)
        self.suite(node.body, body)
        cls.members.update(body.names)
        ancestry = cls.all_lib_bases()
        if ancestry:
            for stmt in _class_level_defs(node.body):
                if isinstance(stmt, cst.FunctionDef):
                    for base in ancestry:
                        self._ref(stmt.name, "override", name=f"{base}.{stmt.name.value}", receiver=base)
        # __init__ (and unittest's setUp) first, so attributes they set are known to the other methods.
        home = scope.function_home()
        mine = [f for f in home.pending if f.owner is cls]
        if mine:
            rest = [f for f in home.pending if f.owner is not cls]
            mine.sort(key=lambda f: 0 if f.node.name.value in ("__init__", "setUp", "__post_init__") else 1)
            home.pending[:] = rest + mine
        self.bind(scope, node.name.value, cls)

    def annotation(self, expr: cst.BaseExpression, scope: Scope, record: bool) -> Value | None:
        """The instance type an annotation declares, if it names a library or user class."""
        if isinstance(expr, cst.SimpleString):
            try:
                inner = cst.parse_expression(expr.evaluated_value if isinstance(expr.evaluated_value, str) else "")
            except (cst.ParserSyntaxError, Exception):  # noqa: BLE001 - any unparsable string is just text
                return None
            return self.annotation(inner, scope, record=False)
        if isinstance(expr, cst.BinaryOperation) and isinstance(expr.operator, cst.BitOr):
            left = self.annotation(expr.left, scope, record)
            right = self.annotation(expr.right, scope, record)
            return left or right
        if isinstance(expr, cst.Subscript):
            head = self.expr(expr.value, scope, record=record, context="annotation")
            head_name = head.name if isinstance(head, (Foreign, Lib)) else None
            if head_name in ("typing.Tuple", "builtins.tuple"):
                parts = [
                    self.annotation(el.slice.value, scope, record) if isinstance(el.slice, cst.Index) else None
                    for el in expr.slice
                ]
                if any(p is not None for p in parts):
                    return Tup(tuple(p if p is not None else UNKNOWN for p in parts))
                return None
            found: Value | None = None
            for el in expr.slice:
                if isinstance(el.slice, cst.Index):
                    t = self.annotation(el.slice.value, scope, record)
                    if found is None and t is not None and head_name in (
                        "typing.Optional", "typing.Union", "typing.Annotated", "typing_extensions.Annotated",
                    ):
                        found = t
                else:
                    self.generic(el.slice, scope)
            return found
        if isinstance(expr, (cst.Name, cst.Attribute)):
            value = self.expr(expr, scope, record=record, context="annotation")
            if isinstance(value, Lib):
                # One spelling per class, so that two paths' values join as one class.
                return Inst(self.q.model.canonical(value.name))
            if isinstance(value, UserClass):
                return UserInst(value)
            return None
        if record:
            self.expr(expr, scope)
        return None

    def _docstring_types(self, node: cst.FunctionDef, scope: Scope) -> tuple[dict[str, Value], Value | None]:
        """The parameter and return types a function's docstring documents; for `__init__`, also
        the parameters its class's docstring documents (numpydoc's place for them)."""
        docstring = node.get_docstring(clean=True)
        documented = documented_types(docstring) if docstring else DocumentedTypes()
        texts = dict(documented.params)
        if scope.kind == "class" and scope.owner is not None and node.name.value == "__init__":
            texts = {**scope.owner.init_documented, **texts}
        params = {name: t for name, text in texts.items() if (t := self.documented(text, scope)) is not None}
        returns = self.documented(documented.returns, scope) if documented.returns is not None else None
        return params, returns

    def documented(self, text: str, scope: Scope) -> Value | None:
        """The instance type a docstring's dotted type name declares: read as an annotation would be
        (quietly: a docstring uses nothing), else through the library's top-level modules when its
        head is bound to nothing here (`pandas.DataFrame` in a module that imports `pandas as pd`,
        or a bare `DataFrame` that exactly one top-level module defines as a class)."""
        try:
            expr = cst.parse_expression(text)
        except cst.ParserSyntaxError:
            return None  # a soft keyword or a name of another Python version: not a type here
        with self._quietly(True):
            value = self.annotation(expr, scope, record=False)
        if isinstance(value, Inst) and self.q.model.knows_kinds and not self.q.model.is_class(value.cls):
            return None  # `hf.read_table`: a function named where a type was meant
        if value is not None:
            return value
        head, _, rest = text.partition(".")
        if self.lookup(scope, head) is not UNKNOWN:
            return None  # bound to something that is not a class: a docstring of another meaning
        tops = sorted(self.q.tops)
        candidates = [text] if head in tops else [] if rest else [f"{top}.{text}" for top in tops]
        classes = [c for c in candidates if self.q.model.is_class(c)]
        return Inst(self.q.model.canonical(classes[0])) if len(classes) == 1 else None

    def returns_of(self, func: UserFunc, given: dict[str, Value] | None = None) -> Value:
        """What a call returns. A body not run yet is read quietly now, with the bindings of the
        moment of the call; its references are recorded once, when its scope ends.

        `given` holds what this call passes, by parameter. Where that differs from what the
        parameters are known to receive in general (`passed`: defaults and every call's library
        values, joined), the body is read again quietly with this call's values, once per
        distinct set: what it returns may be what it was given (`return df.copy()`), and a call
        that passes a list does not get back the Table another call passed."""
        own = _own_arguments(func, given or {})
        if func.returns is not None and not own:
            return func.returns
        if func.state == "running" or self._quiet >= _INFERENCE_DEPTH:
            return func.returns if func.returns is not None else UNKNOWN
        if not own:
            return func.returns if func.returns is not None else self._run(func, record=False)
        key = tuple(sorted(own.items(), key=lambda item: item[0]))
        if key not in func.by_arguments:
            func.by_arguments[key] = UNKNOWN  # a recursive call meanwhile learns nothing
            func.by_arguments[key] = self._run_given(func, own)
        return func.by_arguments[key]

    def call_user(self, func: UserFunc, scope: Scope, given: dict[str, Value] | None = None) -> Value:
        """A call from module level runs the body with the bindings of that moment (the Language
        Reference resolves free names when the code runs), recording what it sees; a few such
        runs cover "called before the import, and after"."""
        if (
            scope.kind == "module" and func.home is self and func.state != "running"
            and func.top_runs < 3 and not self._quiet
        ):
            func.top_runs += 1
            returned = self._run(func, record=True)
            if not _own_arguments(func, given or {}):
                return returned
        return self.returns_of(func, given)

    def flush(self, scope: Scope) -> None:
        """Run deferred bodies with the bindings their scope ends with, recording references."""
        while scope.pending:
            func = scope.pending.pop(0)
            if func.state == "pending":
                self._run(func, record=True)

    def _run(self, func: UserFunc, record: bool) -> Value:
        previous_state = func.state
        func.state = "running"
        # Another module's function is read here only to learn what it returns: its own module
        # records its references.
        quiet = not record or func.home is not self
        read_with = dict(func.passed)
        recording = not quiet and not self._quiet
        self._recording += recording
        try:
            with self._standing(replace(self.at, cell=func.cell, top=func.top)), self._quietly(quiet):
                result = self._run_body(func)
        finally:
            self._recording -= recording
        func.returns, func.read_with = result, read_with
        # A quiet reading changes nothing about the recorded run still to come.
        func.state = "done" if not quiet and not self._quiet else previous_state
        return result

    def _run_given(self, func: UserFunc, given: dict[str, Value]) -> Value:
        """Read the body quietly with one call's own arguments, leaving what the function is
        known to return in general (and its recorded run) as they were."""
        previous_state = func.state
        func.state = "running"
        try:
            with self._standing(replace(self.at, cell=func.cell, top=func.top)), self._quietly(True):
                return self._run_body(func, given)
        finally:
            func.state = previous_state

    def _run_body(self, func: UserFunc, given: dict[str, Value] | None = None) -> Value:
        fscope = Scope("function", func.scope, owner=func.owner)
        declared = func.declared
        positional = [*func.node.params.posonly_params, *func.node.params.params]
        for i, p in enumerate(all_params(func.node.params)):
            value: Value = (declared.get(p.name.value) or (given or {}).get(p.name.value)
                            or func.passed.get(p.name.value, UNKNOWN))
            if i == 0 and p in positional and func.owner is not None:
                if func.kind in _FIRST_PARAM_METHODS:
                    value = UserInst(func.owner)
                elif func.kind == "classmethod":
                    value = func.owner
            fscope.names[p.name.value] = value
        self.suite(func.node.body, fscope)
        self.flush(fscope)
        result = returned(fscope.returns)
        decl = func.returns_decl
        if result is UNKNOWN and decl is not None:
            result = decl
        elif isinstance(result, Tup) and isinstance(decl, Tup) and len(result.items) == len(decl.items):
            result = replace(result, items=tuple(d if r is UNKNOWN else r for r, d in zip(result.items, decl.items)))
        return result


def _own_arguments(func: UserFunc, given: dict[str, Value]) -> dict[str, Value]:
    """The values a call passes that differ from what its parameters received when the body was
    read in general: a library value, or, where others pass one, a value known not to be the
    library's or not known at all."""
    own: dict[str, Value] = {}
    known = func.read_with if func.returns is not None else func.passed
    for name, value in given.items():
        general = known.get(name, UNKNOWN)
        if value == general or name in func.declared:
            continue
        if is_library(value) or is_library(general):
            own[name] = value
    return own


def note_arguments(func: UserFunc, node: cst.Call, values: Sequence[Value]) -> dict[str, Value]:
    """Remember the library values a call passes to a project function's parameters, so its body
    sees them (a call through an instance or class attribute binds the first parameter itself).
    Returns what this call passes, by parameter."""
    params = func.node.params
    positional = [p.name.value for p in (*params.posonly_params, *params.params)]
    if func.owner is not None and func.kind in ("method", "classmethod") and isinstance(node.func, cst.Attribute):
        positional = positional[1:]
    named = {p.name.value for p in (*params.params, *params.kwonly_params)}
    given: dict[str, Value] = {}
    index = 0
    for arg, value in zip(node.args, values):
        if arg.star:
            if arg.star == "*":
                index = len(positional)  # what follows a `*args` cannot be placed
            continue
        if arg.keyword is not None:
            name: str | None = arg.keyword.value if arg.keyword.value in named else None
        else:
            name = positional[index] if index < len(positional) else None
            index += 1
        if name is not None:
            given[name] = value
        if name is not None and is_library(value) and func.passed.get(name) != value:
            func.passed[name] = join(func.passed.get(name, UNKNOWN), value)
            if func.state == "done" and func.reruns < 1:
                # Its body was read before this call: read it once more, at the end of its scope.
                func.reruns += 1
                func.state = "pending"
                func.scope.function_home().pending.append(func)
    return given


def all_params(params: cst.Parameters) -> list[cst.Param]:
    out = [*params.posonly_params, *params.params]
    if isinstance(params.star_arg, cst.Param):
        out.append(params.star_arg)
    out.extend(params.kwonly_params)
    if params.star_kwarg is not None:
        out.append(params.star_kwarg)
    return out

def _class_level_defs(body: cst.BaseSuite) -> list[cst.FunctionDef]:
    """Methods a class body defines, also under `if`/`try`/`with` at class level (not nested defs)."""
    out: list[cst.FunctionDef] = []
    stack: list[cst.CSTNode] = list(body.body)
    while stack:
        node = stack.pop(0)
        if isinstance(node, cst.FunctionDef):
            out.append(node)
        elif isinstance(node, (cst.If, cst.Try, cst.TryStar, cst.With, cst.For, cst.While, cst.Else, cst.Finally,
                               cst.ExceptHandler, cst.ExceptStarHandler)):
            for child in node.children:
                if isinstance(child, cst.BaseSuite):
                    stack.extend(child.body)
                elif isinstance(child, (cst.If, cst.Else, cst.Finally, cst.ExceptHandler, cst.ExceptStarHandler)):
                    stack.append(child)
    return out
