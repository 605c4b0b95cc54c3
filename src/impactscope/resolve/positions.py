"""Line and column of referenced nodes, at a fraction of the cost of libcst's PositionProvider.

The provider generates code for a whole module to learn where each node starts; on a file with
one finding, nearly all of that work is for statements that hold none. Here:

- the first line of each top-level statement comes from CPython's own parser (`ast`, in C), so
  nothing before the statement is generated;
- inside the statement, libcst's position-tracking code generation runs only until the last
  node asked for has been generated, then stops.

The answers are the provider's own (the tests compare them on every reference of a generated
corpus). When `ast` cannot read a cell that libcst could (syntax newer than the running Python),
the statement offsets fall back to code generation of the statements before it.
"""

from __future__ import annotations

import ast
from contextlib import contextmanager
from typing import Iterable, Iterator, Mapping

import libcst as cst
from libcst.metadata.position_provider import NEWLINE_RE, PositionProvider, PositionProvidingCodegenState


class _Enough(Exception):
    """Raised inside code generation once every node asked for has its position."""


class _StoppingState(PositionProvidingCodegenState):
    """libcst's position-tracking code generation, stopped once the nodes asked for are done.

    The bookkeeping is the provider's (`libcst.metadata.position_provider`), kept as plain
    tuples and without the generated text, which nothing here reads."""

    __slots__ = ("targets", "left", "spans")

    def add_indent_tokens(self) -> None:
        for token in self.indent_tokens:
            self._update_position(token)

    def add_token(self, value: str) -> None:
        self._update_position(value)

    def _update_position(self, value: str) -> None:
        if "\n" not in value and "\r" not in value:
            self.column += len(value)
            return
        segments = NEWLINE_RE.split(value)
        self.line += len(segments) - 1
        self.column = len(segments[-1])

    def before_codegen(self, node: cst.CSTNode) -> None:
        self._stack.append((self.line, self.column))  # type: ignore[arg-type]

    def after_codegen(self, node: cst.CSTNode) -> None:
        start = self._stack.pop()
        if node not in self.spans:  # a syntactic position recorded inside wins, as in the provider
            self.spans[node] = (start, (self.line, self.column))
        if node in self.targets:
            self.left -= 1
            if self.left == 0:
                raise _Enough

    @contextmanager
    def record_syntactic_position(
        self, node: cst.CSTNode, *, start_node: cst.CSTNode | None = None, end_node: cst.CSTNode | None = None
    ) -> Iterator[None]:
        # The provider's version, without its `finally`: once stopped, the enclosing nodes are
        # left unrecorded (their end nodes were never generated).
        start = (self.line, self.column)
        yield
        if start_node is not None:
            start = self.spans[start_node][0]
        end = self.spans[end_node][1] if end_node is not None else (self.line, self.column)
        self.spans[node] = (start, end)


class Positions:
    """Positions of nodes in parsed cells. `cells` maps a cell index to (first line, module, code,
    first lines of its top-level statements or None when not known yet)."""

    def __init__(self, cells: Mapping[int | None, tuple[int, cst.Module, str, tuple[int, ...] | None]]) -> None:
        self._cells = cells
        self._starts: dict[int | None, dict[int, int]] = {}
        self._found: dict[cst.CSTNode, tuple[int, int]] = {}

    def locate(self, items: Iterable[tuple[int | None, cst.CSTNode | None, cst.CSTNode]]) -> list[tuple[int, int]]:
        """(line, column) for each (cell, top-level statement or None, node), lines counted in the file."""
        items = list(items)
        wanted: dict[tuple[int | None, int], tuple[cst.CSTNode | None, set[cst.CSTNode]]] = {}
        for cell, top, node in items:
            if node in self._found:
                continue
            key = (cell, id(top))
            wanted.setdefault(key, (top, set()))[1].add(node)
        for (cell, _), (top, nodes) in wanted.items():
            self._generate(cell, top, nodes)
        return [self._found[node] for _, _, node in items]

    def _generate(self, cell: int | None, top: cst.CSTNode | None, nodes: set[cst.CSTNode]) -> None:
        first_line, module, _, _ = self._cells[cell]
        if top is None:
            sub, base = module, 0
        else:
            sub = module.with_changes(header=(), body=(top,), footer=())
            base = self._start(cell, top) - len(getattr(top, "leading_lines", ())) - 1
        state = _StoppingState(
            default_indent=sub.default_indent, default_newline=sub.default_newline, provider=PositionProvider()
        )
        state.targets = nodes
        state.left = len(nodes)
        state.spans = {}
        try:
            sub._codegen(state)
        except _Enough:
            pass
        for node in nodes:
            (line, column), _ = state.spans[node]
            self._found[node] = (line + base + first_line - 1, column)

    def _start(self, cell: int | None, top: cst.CSTNode) -> int:
        """The line (1-based, within the cell) where a top-level statement's own code starts."""
        if cell not in self._starts:
            self._starts[cell] = self._statement_starts(cell)
        return self._starts[cell][id(top)]

    def _statement_starts(self, cell: int | None) -> dict[int, int]:
        _, module, code, known = self._cells[cell]
        lines = list(known) if known is not None else _ast_starts(code)
        if lines is not None and len(lines) == len(module.body):
            return {id(stmt): line for stmt, line in zip(module.body, lines)}
        # Fallback: count the lines that code generation gives everything before each statement.
        starts: dict[int, int] = {}
        line = 1 + sum(module.code_for_node(h).count("\n") for h in module.header)
        for stmt in module.body:
            starts[id(stmt)] = line + len(getattr(stmt, "leading_lines", ()))
            line += module.code_for_node(stmt).count("\n")
        return starts


def _ast_starts(code: str) -> list[int] | None:
    """First lines of libcst's top-level statements, from `ast`: a decorated definition starts at
    its first decorator, and `a; b` on one line is one libcst statement but two for `ast`."""
    try:
        tree = ast.parse(code)
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return None
    starts: list[int] = []
    for stmt in tree.body:
        decorators = getattr(stmt, "decorator_list", ())
        line = min([stmt.lineno, *(d.lineno for d in decorators)])
        if not starts or line != starts[-1]:
            starts.append(line)
    return starts
