"""Names a module serves at run time from a fixed set: a PEP 562 `__getattr__`, and the lazy
`attach` helper of the scientific Python ecosystem (SPEC 1)."""

from __future__ import annotations

import ast
from typing import TYPE_CHECKING

from .syntax import TRY_NODES, dotted_name, ends_in_raise, is_none, string_value, string_values

if TYPE_CHECKING:  # the reader asks for served names: a run-time import would be a cycle
    from .reader import ModuleReader


class ServedNames:
    """The names a module-level `__getattr__` (PEP 562) serves from a fixed set, and the dotted
    path of what it returns for each (None when that is built some other way).

    Read: `name == "x"` and `name in ("x", "y")` or `name in TABLE` (TABLE a module-level literal)
    in `if`/`elif` tests and `match` cases; look-ups `{"x": X}[name]`, `TABLE[name]`,
    `TABLE.get(name)`. A branch that ends in `raise` serves nothing: the name is gone, with a
    message. A returned name is followed through the function's own imports, else the module's.
    """

    def __init__(self, reader: ModuleReader, node: ast.FunctionDef | ast.AsyncFunctionDef) -> None:
        args = [*node.args.posonlyargs, *node.args.args]
        self.param = args[0].arg if args else ""
        self.reader = reader
        self.imports: dict[str, str] = {}
        for sub in ast.walk(node):
            if isinstance(sub, ast.Import):
                for alias in sub.names:
                    self.imports[alias.asname or alias.name.partition(".")[0]] = alias.name if alias.asname else alias.name.partition(".")[0]
            elif isinstance(sub, ast.ImportFrom):
                base = reader.absolute(sub.module, sub.level)
                for alias in sub.names:
                    if base is not None and alias.name != "*":
                        self.imports[alias.asname or alias.name] = f"{base}.{alias.name}"
        self.names: dict[str, str | None] = {}
        self.gone: set[str] = set()
        # A value returned outside any branch that tests the name: it may serve names not listed.
        self.open = False
        if self.param:
            self.block(node.body)

    def block(self, stmts: list[ast.stmt]) -> None:
        for st in stmts:
            if isinstance(st, ast.If):
                tested = self.tested(st.test)
                if tested:
                    self.branch(tested, st.body)
                else:
                    self.block(st.body)
                self.block(st.orelse)
            elif isinstance(st, ast.Match) and isinstance(st.subject, ast.Name) and st.subject.id == self.param:
                for case in st.cases:
                    self.branch(self.pattern(case.pattern), case.body)
            elif isinstance(st, TRY_NODES + (ast.With, ast.For, ast.While)):
                self.block(st.body)
            elif isinstance(st, (ast.Return, ast.Expr, ast.Assign)) and st.value is not None:
                served = len(self.names)
                self.lookups(st.value)
                if isinstance(st, ast.Return) and len(self.names) == served and not is_none(st.value):
                    self.open = True

    def branch(self, tested: tuple[str, ...], body: list[ast.stmt]) -> None:
        if ends_in_raise(body):
            self.gone.update(tested)
            return
        for name in tested:
            if name not in self.names and name not in self.gone:
                self.names[name] = self.value(body, name)

    def tested(self, test: ast.expr) -> tuple[str, ...]:
        if isinstance(test, ast.BoolOp):
            return tuple(n for v in test.values for n in self.tested(v))
        if not (isinstance(test, ast.Compare) and len(test.ops) == 1):
            return ()
        left, op, right = test.left, test.ops[0], test.comparators[0]
        if isinstance(op, ast.Eq):
            if isinstance(right, ast.Name) and right.id == self.param:
                left, right = right, left
            text = string_value(right)
            return (text,) if isinstance(left, ast.Name) and left.id == self.param and text is not None else ()
        if isinstance(op, ast.In) and isinstance(left, ast.Name) and left.id == self.param:
            if isinstance(right, ast.Name):
                return self.reader._literals.get(right.id, ())
            return string_values(right) or ()
        return ()

    def pattern(self, node: ast.pattern) -> tuple[str, ...]:
        if isinstance(node, ast.MatchValue):
            text = string_value(node.value)
            return (text,) if text is not None else ()
        if isinstance(node, ast.MatchOr):
            return tuple(n for p in node.patterns for n in self.pattern(p))
        return ()

    def lookups(self, expr: ast.expr) -> None:
        """`TABLE[name]` and `TABLE.get(name)` outside any test: TABLE's keys are served."""
        for sub in ast.walk(expr):
            table = self.table_of(sub)
            if table is None:
                continue
            if isinstance(table, ast.Dict):
                for key, value in zip(table.keys, table.values):
                    text = string_value(key)
                    if text is not None and text not in self.names and text not in self.gone:
                        self.names[text] = self.target(value)
            else:
                for text in self.reader._literals.get(table, ()):
                    if text not in self.names and text not in self.gone:
                        self.names[text] = None

    def table_of(self, node: ast.AST) -> ast.Dict | str | None:
        if isinstance(node, ast.Subscript) and isinstance(node.slice, ast.Name) and node.slice.id == self.param:
            table = node.value
        elif (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "get"
              and node.args and isinstance(node.args[0], ast.Name) and node.args[0].id == self.param):
            table = node.func.value
        else:
            return None
        if isinstance(table, ast.Dict):
            return table
        return table.id if isinstance(table, ast.Name) and table.id in self.reader._literals else None

    def value(self, body: list[ast.stmt], name: str) -> str | None:
        """What the branch for `name` returns: its first `return`, through a literal table."""
        for st in body:
            for sub in ast.walk(st):
                if isinstance(sub, ast.Return) and sub.value is not None:
                    for inner in ast.walk(sub.value):
                        table = self.table_of(inner)
                        if isinstance(table, ast.Dict):
                            for key, value in zip(table.keys, table.values):
                                if string_value(key) == name:
                                    return self.target(value)
                    return self.target(sub.value)
        return None

    def target(self, node: ast.expr | None) -> str | None:
        text = dotted_name(node)
        if text is None:
            return None
        first, _, rest = text.partition(".")
        if first in self.imports:
            return ".".join(filter(None, (self.imports[first], rest)))
        return f"{self.reader.module}.{text}"


def lazy_attach(call: ast.Call, module: str) -> dict[str, str | None]:
    """`attach(__name__, submodules=[...], submod_attrs={"mod": ["f"]})`, the lazy-loading helper of
    the scientific Python ecosystem (SPEC 1): each submodule and each listed attribute is served."""
    given = dict(zip(("package_name", "submodules", "submod_attrs"), call.args))
    given.update({k.arg: k.value for k in call.keywords if k.arg})
    out: dict[str, str | None] = {}
    for sub in string_values(given.get("submodules")) or ():
        out[sub] = f"{module}.{sub}"
    table = given.get("submod_attrs")
    if isinstance(table, ast.Dict):
        for key, value in zip(table.keys, table.values):
            sub = string_value(key)
            for attr in (string_values(value) or ()) if sub is not None else ():
                out.setdefault(attr, f"{module}.{sub}.{attr}")
    return out
