"""Type flow through what real stubs type: overloaded functions and indexers, operators and
comparisons (special methods), and `__getattr__` (a column read as an attribute).

Sources: PEP 484 ("Function/method overloading"; the first overload that accepts the arguments
decides), PEP 586 (Literal), the Language Reference, "Emulating numeric types" (`x + y` calls
`x.__add__(y)`, then the reflected `y.__radd__(x)`), "Basic customization" (rich comparisons and
their reflections), "Customizing attribute access" (`__getattr__` answers a name lookup fails
on). The library stubs below are invented test data in the demo's scenario (heronframe).
"""

from __future__ import annotations


import pytest

from impactscope.findings import Finding
from impactscope.resolve.query import Query

from .conftest import at, found_with, library_query

STUBS = {
    "heronframe/__init__.pyi": """
        from heronframe.frame import Table, Column, glue
    """,
    "heronframe/frame.pyi": """
        from typing import Iterable, Literal, Mapping, overload

        Label = str | int

        class Column:
            def __gt__(self, other: object) -> Column: ...
            def __neg__(self) -> Column: ...
            def __radd__(self, other: int | float) -> Column: ...
            def iter_pairs(self) -> Iterable[tuple[Label, object]]: ...
            def stack_rows(self, other: Column) -> Column: ...

        class Table:
            def __getattr__(self, name: str) -> Column: ...
            @overload
            def __getitem__(self, key: Label) -> Column: ...
            @overload
            def __getitem__(self, key: slice | Column | list[Label]) -> Table: ...
            def __add__(self, other: Table | int) -> Table: ...
            def stack_rows(self, other: Table) -> Table: ...
            def head(self) -> Table: ...

        @overload
        def glue(parts: Iterable[Table] | Mapping[str, Table], axis: Literal[0] = ...) -> Table: ...
        @overload
        def glue(parts: Iterable[Column] | Mapping[str, Column], axis: Literal[0] = ...) -> Column: ...
        @overload
        def glue(parts: Iterable[Table | Column], axis: Literal[0, 1] = ...) -> Table | Column: ...
    """,
}

CHANGES = b'''
[library]
name = "heronframe"

[[change]]
id = "T-STACK"
member = "heronframe.Table.stack_rows"
kind = "removed"

[[change]]
id = "C-STACK"
member = "heronframe.Column.stack_rows"
kind = "removed"
'''


@pytest.fixture(scope="module")
def query(tmp_path_factory: pytest.TempPathFactory) -> Query:
    return library_query(tmp_path_factory.mktemp("stubs"), STUBS, CHANGES)


found = found_with


def only(hits: list[Finding], line: int) -> str:
    """Which of the two classes' changes a line proves: 'T', 'C', or 'both' when neither is proven."""
    table, column = at(hits, line, "T-STACK"), at(hits, line, "C-STACK")
    if table == "resolved" and column is None:
        return "T"
    if column == "resolved" and table is None:
        return "C"
    return "both" if table and column else f"{table}/{column}"


def test_indexers_pick_their_overload_by_the_key(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.Table()
        t["a"].stack_rows(1)
        t[0].stack_rows(2)
        t[["a", "b"]].stack_rows(3)
        t[1:3].stack_rows(4)
        t[t.a > 0].stack_rows(5)
        t[key].stack_rows(6)
    """
    hits = found(query, code)
    assert only(hits, 3) == "C" and only(hits, 4) == "C"  # a label: Literal str / int
    assert only(hits, 5) == "T" and only(hits, 6) == "T"  # a list of labels, a slice
    # `t.a` is a Column (__getattr__), `> 0` is Column.__gt__: a Column key gives a Table.
    assert only(hits, 7) == "T"
    assert only(hits, 8) == "both"  # a key of unknown type: either overload


def test_operators_follow_special_methods(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.Table()
        (t + 1).stack_rows(1)
        (1 + t.a).stack_rows(2)
        (-t.a).stack_rows(3)
        (t.a == t).stack_rows(4)
        (x + t).stack_rows(5)
    """
    hits = found(query, code)
    assert only(hits, 3) == "T"  # Table.__add__
    assert only(hits, 4) == "C"  # int + Column: the reflected Column.__radd__
    assert only(hits, 5) == "C"  # Column.__neg__
    # Column has no __eq__ of its own, and `x` is unknown: neither side is proven.
    assert at(hits, 6, "T-STACK") != "resolved" and at(hits, 6, "C-STACK") != "resolved"
    assert at(hits, 7, "T-STACK") != "resolved" and at(hits, 7, "C-STACK") != "resolved"


def test_a_display_argument_picks_the_overload_its_items_fit(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.Table()
        hf.glue([t, t.head()]).stack_rows(1)
        hf.glue({"x": t.a, "y": t.b}).stack_rows(2)
        hf.glue((t, t)).stack_rows(3)
        hf.glue([t, t.a]).stack_rows(4)
        hf.glue([t, other]).stack_rows(5)
        hf.glue(parts).stack_rows(6)
    """
    hits = found(query, code)
    assert only(hits, 3) == "T" and only(hits, 5) == "T"  # a list or a tuple of Tables
    assert only(hits, 4) == "C"  # a mapping whose values are Columns
    for line in (6, 7, 8):  # mixed, partly unknown, or unknown items: any overload may be first
        assert only(hits, line) == "both", line


def test_getattr_does_not_hide_a_changed_member(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.Table()
        t.stack_rows(1)
        t.totals.stack_rows(2)
    """
    hits = found(query, code)
    # `stack_rows` is a changed member: always the member itself, never a column of that name.
    assert only(hits, 3) == "T"
    assert only(hits, 4) == "C"  # an unknown attribute: the column __getattr__ serves
