"""Statement-level narrowing: the top-level statements of a kept file that can matter, before libcst.

The prefilter keeps whole files; in a kept script most top-level statements still have nothing to
do with a changed member. libcst builds a Python object for every node, so its parse costs
several times CPython's; here CPython's own parser (`ast`) picks the statements to keep and the
others become blank lines, so libcst reads less while every line and column stays where it was.

Which statements stay (a slice over names, computed to a fixpoint):

- seeds: a statement whose text spells a changed member's name as a word (the rule the
  prefilter applies to files, applied to statements), and every statement that holds an import
  (imports alone decide whether a module uses the library), including imports made by a call
  (`importlib.import_module`, `__import__`);
- forward: a statement that reads a name a seed or forward statement binds at module level (or
  whose attributes it stores into): an alias of a member, a function or class that holds one, an
  object carrying one, a name imported from a project module that may relay one (one the
  prefilter kept: it spells a member or imports a module that does);
- backward: a statement that binds, or stores into an attribute of, a name any kept statement
  reads, so what the kept statements see is what they saw in the whole file;
- calls: a statement that reads the name of a function or class a kept statement defines (a
  call runs the body, which may bind globals or store into shared objects at that moment).

A dropped statement spells no changed member and binds nothing a kept statement reads, so it
can hold no finding and cannot change one. "Reads" is every identifier of the statement's code
(names, attribute names, keywords, parameters) and every identifier-like word of its string
literals (string annotations and dynamic imports are read by the resolver); comments and bare
string statements (docstrings) are never evaluated and do not count.

A module's bindings are what its importers see. An importer reaches a binding only by spelling
its name (`from m import name`, `m.name`, `getattr(m, "name")`), so in a module another file of
its project names, the statements binding a name some other file spells are kept as well, with
what they depend on. Read whole: package `__init__` files, and every module of a project with
relative imports or star imports of its own modules (names reached without being spelled).
Notebooks are never imported. A file `ast` cannot read (Python 2, syntax newer than the running
Python) is left whole too, and libcst decides.
"""

from __future__ import annotations

import ast
import re
from dataclasses import replace
from typing import AbstractSet, Callable, Iterable, NamedTuple

from impactscope.corpus.sources import Source

_IDENTIFIER = re.compile(r"[^\W\d]\w*")
_LINES = re.compile(r"(\r\n|\r|\n)")
# Imports made by a call (`importlib.import_module("pkg.mod")`, `__import__`) name their module
# in a string: such a statement counts as an import of the project's own modules.
_DYNAMIC = frozenset({"import_module", "__import__"})
_SCOPES = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)
# Nodes that carry no name: contexts and operators (one hangs off nearly every expression).
_LEAVES = (ast.expr_context, ast.operator, ast.unaryop, ast.cmpop, ast.boolop)


class _Facts(NamedTuple):
    binds: frozenset[str]  # module-level names it binds or deletes, and names it stores attributes into
    reads: frozenset[str]  # identifiers in its code and in its non-statement strings, comments left out
    imports: bool
    relay_import: bool  # imports from a project module that may relay a member (or relatively)
    defines: frozenset[str]  # module-level functions and classes it defines


class _Statement:
    """One libcst top-level statement: one `ast` statement, or several sharing a line."""

    __slots__ = ("cell", "first", "last", "words", "nodes", "_facts")

    def __init__(self, cell: int, first: int, last: int, words: frozenset[str], nodes: list[ast.stmt]) -> None:
        self.cell = cell  # position in Source.cells
        self.first = first  # first line (decorators included), 1-based within the cell
        self.last = last
        self.words = words  # every identifier-like word of its text: a cheap superset of `reads`
        self.nodes = nodes
        self._facts: _Facts | None = None

    def facts(self, relays: frozenset[str]) -> _Facts:
        """Computed on first need, from the syntax tree: most statements are never asked."""
        if self._facts is None:
            parts = [_facts(node, relays) for node in self.nodes]
            self._facts = _Facts(
                frozenset().union(*(p.binds for p in parts)),
                frozenset().union(*(p.reads for p in parts)),
                any(p.imports for p in parts),
                any(p.relay_import for p in parts),
                frozenset().union(*(p.defines for p in parts)),
            )
        return self._facts

    def reads_any(self, names: AbstractSet[str], relays: frozenset[str]) -> bool:
        return bool(self.words & names) and bool(self.facts(relays).reads & names)


def narrow(
    source: Source,
    members: frozenset[str],
    relays: frozenset[str],
    exported: Callable[[str], bool] | None = None,
) -> Source:
    """`source` with the top-level statements that cannot matter replaced by blank lines.

    `members`: the changed members' own names; `relays`: the leaf names of the project modules
    that may relay a member (see `Plan.relays`). For a module other files import, `exported`
    says whether some other file spells a name: statements that bind such a name (and
    `__all__`) stay, since importers see them. Each cell of the result records the first lines
    of its statements, for positions."""
    statements = _statements(source)
    if statements is None:
        return source
    wanted: set[int] = set()
    if exported is not None:
        asked: dict[str, bool] = {"__all__": True}
        for i, s in enumerate(statements):
            for name in s.facts(relays).binds:
                if name not in asked:
                    asked[name] = exported(name)
                if asked[name]:
                    wanted.add(i)
    keep = _slice(statements, members, relays, wanted)
    # One pass over the statements, grouped by cell (a notebook may have many of both).
    dropped: list[list[_Statement]] = [[] for _ in source.cells]
    kept: list[list[int]] = [[] for _ in source.cells]
    for i, s in enumerate(statements):
        if i in keep:
            kept[s.cell].append(s.first)
        else:
            dropped[s.cell].append(s)
    cells = [
        replace(cell, code=_blank(cell.code, dropped[n]) if dropped[n] else cell.code, statement_lines=tuple(kept[n]))
        for n, cell in enumerate(source.cells)
    ]
    return replace(source, cells=tuple(cells))


def _slice(
    statements: list[_Statement], members: frozenset[str], relays: frozenset[str], wanted: set[int]
) -> set[int]:
    spelled = members | _DYNAMIC
    forward = {i for i, s in enumerate(statements) if s.reads_any(spelled, relays)}
    keep = forward | wanted
    for i, s in enumerate(statements):
        if "import" in s.words and s.facts(relays).imports:
            keep.add(i)
            if s.facts(relays).relay_import:
                forward.add(i)
    carried: set[str] = set().union(*(statements[i].facts(relays).binds for i in forward))
    read: set[str] = set().union(*(statements[i].facts(relays).reads for i in keep))
    defined: set[str] = set().union(*(statements[i].facts(relays).defines for i in keep))
    # Sets grow as statements join, so a chain in source order settles in one pass; each further
    # pass is needed only when something joined that an earlier statement depends on.
    changed = True
    while changed:
        if "*" in carried:
            return set(range(len(statements)))
        changed = False
        for i, s in enumerate(statements):
            if i in forward:
                continue
            if s.reads_any(carried, relays):
                forward.add(i)
                carried |= s.facts(relays).binds
            elif i in keep or not (
                (s.words & read and s.facts(relays).binds & read) or s.reads_any(defined, relays)
            ):
                continue
            if i not in keep:
                keep.add(i)
                read |= s.facts(relays).reads
                defined |= s.facts(relays).defines
            changed = True
    return keep


def _blank(code: str, dropped: Iterable[_Statement]) -> str:
    lines = _LINES.split(code)  # text, end, text, end, ..., text: the ends Python counts lines by
    for s in dropped:
        for n in range(s.first - 1, s.last):
            lines[2 * n] = ""
    return "".join(lines)


def _statements(source: Source) -> list[_Statement] | None:
    out: list[_Statement] = []
    for position, cell in enumerate(source.cells):
        try:
            tree = ast.parse(cell.code)
        except (SyntaxError, ValueError, RecursionError, MemoryError):
            return None
        lines = _LINES.split(cell.code)[::2]
        for stmt in tree.body:
            first = min([stmt.lineno, *(d.lineno for d in getattr(stmt, "decorator_list", ()))])
            last = stmt.end_lineno or stmt.lineno
            words = frozenset(_IDENTIFIER.findall("\n".join(lines[first - 1:last])))
            previous = out[-1] if out and out[-1].cell == position else None
            if previous is not None and first <= previous.last:
                # `a = 1; b = 2` on one line is one libcst statement: kept or dropped together.
                out[-1] = _Statement(position, previous.first, max(last, previous.last), previous.words | words,
                                     [*previous.nodes, stmt])
            else:
                out.append(_Statement(position, first, last, words, [stmt]))
    return out


def _facts(stmt: ast.stmt, relays: frozenset[str]) -> _Facts:
    """What one statement binds at module level (the Python Language Reference, 4.2.1 "Binding
    of names"), stores into, reads and imports.

    One walk over the tree, carrying whether a node sits in a function or class body (a scope of
    its own) and the parameters of the innermost function around it. The commonest nodes (names,
    attributes, constants, calls) are handled first, by exact type: this runs on most statements
    of every narrowed file."""
    binds: set[str] = set()
    reads: set[str] = set()
    defines: set[str] = set()
    imports = relay_import = False
    stack: list[tuple[ast.AST, bool, frozenset[str]]] = [(stmt, False, frozenset())]
    push = stack.append
    while stack:
        node, in_function, params = stack.pop()
        kind = type(node)
        if kind is ast.Name:
            reads.add(node.id)  # type: ignore[attr-defined]
            if type(node.ctx) is not ast.Load and not in_function:  # type: ignore[attr-defined]
                binds.add(node.id)  # type: ignore[attr-defined]
            continue
        if kind is ast.Attribute or kind is ast.Subscript:
            if kind is ast.Attribute:
                reads.add(node.attr)  # type: ignore[attr-defined]
            if type(node.ctx) is not ast.Load:  # type: ignore[attr-defined]
                root = _root(node)  # type: ignore[arg-type]
                if root is not None and root not in params:
                    binds.add(root)
            push((node.value, in_function, params))  # type: ignore[attr-defined]
            if kind is ast.Subscript:
                push((node.slice, in_function, params))  # type: ignore[attr-defined]
            continue
        if kind is ast.Constant:
            if type(node.value) is str:  # type: ignore[attr-defined]
                reads.update(_IDENTIFIER.findall(node.value))  # type: ignore[attr-defined]  # string annotations, dynamic imports
            continue
        if kind is ast.Call:
            push((node.func, in_function, params))  # type: ignore[attr-defined]
            for arg in node.args:  # type: ignore[attr-defined]
                push((arg, in_function, params))
            for kw in node.keywords:  # type: ignore[attr-defined]
                if kw.arg:
                    reads.add(kw.arg)
                push((kw.value, in_function, params))
            continue
        if kind is ast.Expr and type(node.value) is ast.Constant and type(node.value.value) is str:  # type: ignore[attr-defined]
            continue  # a docstring or a bare string: never evaluated, never read
        if isinstance(node, _SCOPES):
            if not isinstance(node, ast.Lambda):
                reads.add(node.name)
                if not in_function:
                    binds.add(node.name)
                    defines.add(node.name)
            inner = frozenset(a.arg for a in _arguments(node.args))
            # Decorators, defaults and annotations are evaluated where the definition is.
            outside = [*getattr(node, "decorator_list", ()), *node.args.defaults,
                       *(d for d in node.args.kw_defaults if d is not None)]
            if not isinstance(node, ast.Lambda):
                outside += [a.annotation for a in _arguments(node.args) if a.annotation is not None]
                if node.returns is not None:
                    outside.append(node.returns)
            body = node.body if isinstance(node.body, list) else [node.body]
            stack.extend((child, in_function, params) for child in outside)
            stack.extend((child, True, inner) for child in body)
            continue
        if kind is ast.ClassDef:
            reads.add(node.name)  # type: ignore[attr-defined]
            if not in_function:
                binds.add(node.name)  # type: ignore[attr-defined]
                defines.add(node.name)  # type: ignore[attr-defined]
            stack.extend((child, in_function, params) for child in [*node.decorator_list, *node.bases, *node.keywords])  # type: ignore[attr-defined]
            stack.extend((child, True, params) for child in node.body)  # type: ignore[attr-defined]
            continue
        if isinstance(node, ast.keyword):
            if node.arg:
                reads.add(node.arg)
        elif isinstance(node, ast.arg):
            reads.add(node.arg)
        elif isinstance(node, (ast.Import, ast.ImportFrom)):
            imports = True
            # Any part of the module path or a name imported from it may be a relaying module.
            named = {part for a in node.names for part in a.name.split(".")}
            if isinstance(node, ast.ImportFrom):
                named.update((node.module or "").split("."))
            reads.update(named)
            reads.update(a.asname for a in node.names if a.asname)
            local = (isinstance(node, ast.ImportFrom) and node.level > 0) or bool(named & relays)
            relay_import = relay_import or local
            if local and any(a.name == "*" for a in node.names):
                binds.add("*")  # binds names no statement spells: the file is read whole
            if not in_function:
                for alias in node.names:
                    binds.add(alias.asname or alias.name.split(".")[0])
        elif isinstance(node, (ast.Global, ast.Nonlocal)):
            binds.update(node.names)
            reads.update(node.names)
        elif isinstance(node, (ast.ExceptHandler, ast.MatchAs, ast.MatchStar)):
            if node.name:
                reads.add(node.name)
                if not in_function:
                    binds.add(node.name)
        elif isinstance(node, ast.MatchMapping):
            if node.rest:
                reads.add(node.rest)
                if not in_function:
                    binds.add(node.rest)
        elif isinstance(node, ast.MatchClass):
            reads.update(node.kwd_attrs)
        for child in ast.iter_child_nodes(node):
            if not isinstance(child, _LEAVES):
                push((child, in_function, params))
    return _Facts(frozenset(binds), frozenset(reads), imports, relay_import, frozenset(defines))


def _root(node: ast.expr) -> str | None:
    while isinstance(node, (ast.Attribute, ast.Subscript)):
        node = node.value
    return node.id if isinstance(node, ast.Name) else None


def _arguments(args: ast.arguments) -> list[ast.arg]:
    out = [*args.posonlyargs, *args.args, *args.kwonlyargs]
    out += [a for a in (args.vararg, args.kwarg) if a is not None]
    return out
