"""Type flow and matching against a library read from its source, in the shapes real libraries
have: typed properties and indexers, one definition shared by two classes, a public module that
star-re-exports a private one, `isinstance` checks, `except ImportError:` fallbacks, and the rule
that makes `possible` an upper bound.

The library source below is invented test data in the demo's scenario (the fictional heronframe).
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.changes import parse_change_list
from impactscope.corpus.sources import read_python
from impactscope.findings import Finding
from impactscope.resolve.model import library_model
from impactscope.resolve.project import ProjectResolver
from impactscope.resolve.query import Query

from .conftest import at, found_with, library_query

LIBRARY = {
    "heronframe/__init__.py": """
        from heronframe.core.frame import Table
        from heronframe.core.column import Column
        from heronframe.io import read_table, pick, load, read_all, columns_of, pair, any_shape
        from heronframe.io import group_rows, group_cells, group_any, combine
        from heronframe import util
    """,
    "heronframe/core/__init__.py": "",
    "heronframe/core/base.py": """
        class Shaped:
            def merge_all(self, other):
                return self

            def describe(self):
                return None

            def refit(self, rows):
                self.rows_ = rows
                return self
    """,
    "heronframe/core/frame.py": """
        from heronframe.core.base import Shaped
        from heronframe.core.column import Column


        class _RowIndexer:
            def __getitem__(self, key) -> "Table":
                ...


        class _Positions:
            def __init__(self, name, owner):
                self.owner = owner

            def __getitem__(self, key):
                return self.owner


        class Table(Shaped):
            def transpose(self) -> "Table":
                return self

            T = property(transpose)

            @property
            def kinds(self) -> Column:
                return Column()

            @property
            def rows(self) -> _RowIndexer:
                return _RowIndexer()

            @property
            def at_positions(self) -> _Positions:
                return _Positions("at", self)

            def __getitem__(self, key) -> Column:
                return Column()

            def stack_rows(self, other):
                return self

            def flip(self):
                return 0
    """,
    "heronframe/core/column.py": """
        from heronframe.core.base import Shaped


        class Column(Shaped):
            def iter_pairs(self):
                return iter(())

            def __getitem__(self, key):
                if isinstance(key, int):
                    return self.values[key]
                return self
    """,
    "heronframe/core/grouping.py": """
        from typing import Generic, Optional, TypeVar
        from heronframe.core.base import Shaped
        from heronframe.core.frame import Table
        from heronframe.core.column import Column

        ShapedT = TypeVar("ShapedT", bound=Shaped)


        class Grouped(Generic[ShapedT]):
            def first(self) -> ShapedT:
                ...

            def maybe_first(self) -> Optional[ShapedT]:
                ...


        class _Middle(Grouped[ShapedT]):
            pass


        class TableGroups(_Middle[Table]):
            pass


        class ColumnGroups(Grouped["Column"]):
            pass
    """,
    "heronframe/io.py": """
        from typing import Iterable, Iterator, overload, Literal
        from heronframe.core.frame import Table
        from heronframe.core.column import Column
        from heronframe.core.base import Shaped
        from heronframe.core.grouping import Grouped, TableGroups, ColumnGroups


        def read_table(path) -> Table:
            return Table()


        @overload
        def pick(path, single: Literal[True]) -> Column: ...
        @overload
        def pick(path, single: Literal[False] = ...) -> Table: ...
        def pick(path, single=False):
            return Column() if single else Table()


        @overload
        def load(path, many: Literal[True]) -> dict: ...
        @overload
        def load(path, many: Literal[False] = ...) -> Table: ...
        def load(path, many=False):
            return {} if many else Table()


        @overload
        def combine(parts: Iterable[Table], axis: Literal[0] = ...) -> Table: ...
        @overload
        def combine(parts: Iterable[Column], axis: Literal[0] = ...) -> Column: ...
        @overload
        def combine(parts: Iterable[Shaped], axis: Literal[1]) -> Table: ...
        @overload
        def combine(parts: Iterable[Shaped], axis: int = ...) -> Shaped: ...
        def combine(parts, axis=0):
            return Table()


        def any_shape(path) -> Shaped:
            return Column()


        def group_rows(table) -> TableGroups:
            return TableGroups()


        def group_cells(column) -> ColumnGroups:
            return ColumnGroups()


        def group_any(x) -> Grouped:
            return Grouped()


        def read_all(paths) -> "list[Table]":
            return [Table() for _ in paths]


        def columns_of(table) -> Iterator[Column]:
            yield Column()


        def pair(a, b) -> tuple[Table, Column]:
            return Table(), Column()
    """,
    "heronframe/_checks.py": """
        __all__ = ["assert_same"]


        def assert_same(a, b):
            pass
    """,
    "heronframe/util/__init__.py": "",
    "heronframe/util/checks.py": """
        from heronframe._checks import *  # noqa: F401,F403
    """,
}

CHANGES = b'''
[library]
name = "heronframe"
release = "3.0"

[[change]]
id = "T-STACK"
member = "heronframe.Table.stack_rows"
kind = "removed"

[[change]]
id = "T-MERGE"
member = "heronframe.Table.merge_all"
kind = "removed"

[[change]]
id = "C-MERGE"
member = "heronframe.Column.merge_all"
kind = "removed"

[[change]]
id = "C-PAIRS"
member = "heronframe.Column.iter_pairs"
kind = "removed"

[[change]]
id = "DESC"
member = "heronframe.core.base.Shaped.describe"
kind = "behaviour-changed"

[[change]]
id = "CHECKS"
member = "heronframe.util.checks"
kind = "removed"

[[change]]
id = "C-FLIP"
member = "heronframe.Column.flip"
kind = "removed"
dynamic = true
'''


@pytest.fixture(scope="module")
def query(tmp_path_factory: pytest.TempPathFactory) -> Query:
    return library_query(tmp_path_factory.mktemp("lib"), LIBRARY, CHANGES)


found = found_with


def test_property_built_from_a_method_carries_its_return_type(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.Table().T
        t.stack_rows(1)
        hf.read_table("p").T.stack_rows(2)
    """
    hits = found(query, code)
    assert at(hits, 3, "T-STACK") == "resolved"
    assert at(hits, 4, "T-STACK") == "resolved"


def test_typed_property_and_indexers(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.read_table("p")
        t.kinds.iter_pairs()
        t["a"].iter_pairs()
        t.rows[0].stack_rows(3)
    """
    hits = found(query, code)
    assert at(hits, 3, "C-PAIRS") == "resolved"  # property -> Column
    assert at(hits, 4, "C-PAIRS") == "resolved"  # Table.__getitem__ -> Column
    assert at(hits, 5, "T-STACK") == "resolved"  # rows -> _RowIndexer, its __getitem__ -> Table


def test_one_inherited_definition_keeps_two_changes_apart(query: Query) -> None:
    code = """
        import heronframe as hf
        hf.Table().merge_all(1)
        hf.Column().merge_all(2)
    """
    hits = found(query, code)
    assert at(hits, 2, "T-MERGE") == "resolved" and at(hits, 2, "C-MERGE") is None
    assert at(hits, 3, "C-MERGE") == "resolved" and at(hits, 3, "T-MERGE") is None


def test_a_public_module_that_star_reexports_a_private_one(query: Query) -> None:
    code = """
        import heronframe.util.checks as chk
        from heronframe.util.checks import assert_same
        import heronframe as hf
        chk.assert_same(1, 2)
        hf.util.checks.assert_same(1, 2)
    """
    hits = found(query, code)
    for line in (1, 2, 4, 5):
        assert at(hits, line, "CHECKS") == "resolved", line


def test_isinstance_narrows_the_branch_and_assert(query: Query) -> None:
    code = """
        import heronframe as hf
        def f(x, y):
            if isinstance(x, hf.Table):
                x.stack_rows(1)
            assert isinstance(y, hf.Column)
            y.iter_pairs()
            x.stack_rows(2)
    """
    hits = found(query, code)
    # The Library Reference: isinstance(x, C) is true when x is an instance of C (or a subclass),
    # and `assert` raises unless its test holds, so after it y is a Column.
    assert at(hits, 4, "T-STACK") == "resolved"
    assert at(hits, 6, "C-PAIRS") == "resolved"
    assert at(hits, 7, "T-STACK") == "inferred"  # after the branch, x is not known


def test_a_fallback_import_that_cannot_run_on_the_release_is_not_proven(query: Query) -> None:
    code = """
        try:
            from heronframe import Table
        except ImportError:
            from heronframe.util.checks import assert_same
        try:
            from heronframe.util.checks import assert_same
        except ImportError:
            import heronframe.util.checks as chk
    """
    hits = found(query, code)
    # The first `try` imports only what the release keeps: its handler never runs there.
    assert at(hits, 4, "CHECKS") == "possible"
    # The second imports a module the release removes: that import fails and the code handles
    # it (possible), and the handler runs, so what it does is proven.
    assert at(hits, 6, "CHECKS") == "possible"
    assert at(hits, 8, "CHECKS") == "resolved"


def test_after_a_handled_import_the_fallback_binding_is_the_one(query: Query) -> None:
    code = """
        try:
            from heronframe.util.checks import assert_same
        except ImportError:
            from heronframe._checks import assert_same
        assert_same(1, 2)
        try:
            from heronframe import Table
        except ImportError:
            Table = None
        Table().stack_rows(1)
    """
    hits = found(query, code)
    assert at(hits, 2, "CHECKS") == "possible"
    assert at(hits, 5, "CHECKS") is None  # on the release this is heronframe._checks's
    assert at(hits, 10, "T-STACK") == "resolved"  # the `try` import holds on the release


def test_builtin_calls_prove_the_receiver(query: Query) -> None:
    code = """
        import heronframe as hf
        b = list()
        b.iter_pairs()
        d = dict(a=1).iter_pairs()
        unknown_thing.iter_pairs()
    """
    hits = found(query, code)
    # The Python Library Reference, "Built-in Functions": list() and dict() return a new list and
    # dict whatever they are given, so neither can be the library's Column.
    assert at(hits, 3, "C-PAIRS") is None
    assert at(hits, 4, "C-PAIRS") is None
    assert at(hits, 5, "C-PAIRS") == "inferred"


def test_an_untyped_attribute_of_an_instance_leaves_the_receiver_unknown(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.read_table("p")
        t.some_column.iter_pairs()
    """
    hits = found(query, code)
    assert at(hits, 3, "C-PAIRS") == "inferred"


# ---------------------------------------------------------------- the upper bound, by property
_RECEIVERS = {
    # receiver expression -> whether a chain proves it is not the library's (no finding allowed)
    "[]": True,
    "list()": True,
    "dict()": True,
    "str(x)": True,
    "'text'": True,
    "x": False,
    "x.y": False,
    "f(x)": False,
    "x[0]": False,
    "hf.read_table(p).some_column": False,
    "(x or y)": False,
    # One path gives a Table, the other a value nobody can tell: names a Table lacks stay open.
    "(hf.read_table(p) if x else y)": False,
    "(hf.Table() or y)": False,
    # Open too, after a method or a typed property of the Table alternative.
    "(hf.read_table(p) if x else y).transpose()": False,
    "(hf.read_table(p) if x else y).T": False,
    "(hf.pick(p, x) if x else y)": False,
}
_CHANGES_NAMED = {"iter_pairs": {"C-PAIRS"}, "merge_all": {"T-MERGE", "C-MERGE"}, "stack_rows": {"T-STACK"}}


@settings(max_examples=60, deadline=None)
@given(
    receivers=st.lists(st.sampled_from(sorted(_RECEIVERS)), min_size=1, max_size=6),
    name=st.sampled_from(["iter_pairs", "merge_all", "stack_rows"]),
    wrap=st.booleans(),
)
def test_every_matching_name_is_found_unless_proven_otherwise(
    query: Query, receivers: list[str], name: str, wrap: bool
) -> None:
    """docs/findings.md, confidence levels: in a file that uses the library, every reference whose name
    matches a changed member is a finding at some level unless a chain proves the receiver is
    something else. So the count at `possible` bounds the true count from above."""
    lines = ["import heronframe as hf"]
    if wrap:
        lines.append("def g(x, y, p, f):")
    indent = "    " if wrap else ""
    for receiver in receivers:
        lines.append(f"{indent}{receiver}.{name}()")
    hits = found(query, "\n".join(lines) + "\n")
    first = 3 if wrap else 2
    for i, receiver in enumerate(receivers):
        changes = {h.change for h in hits if h.line == first + i}
        if _RECEIVERS[receiver]:
            assert not changes, (receiver, name)
        else:
            # Every change of that name: an open receiver may be any class that has it.
            assert changes >= _CHANGES_NAMED[name], (receiver, name, changes)


def test_tuple_unpacking_of_an_annotated_return_and_of_a_tuple_display(query: Query) -> None:
    code = """
        from typing import Tuple
        import heronframe as hf
        def load(p) -> Tuple[hf.Table, hf.Column]:
            return unknown(p)
        def pair(p):
            return hf.read_table(p), hf.Column()
        t, c = load("p")
        t.stack_rows(1)
        c.iter_pairs()
        u, d = pair("p")
        u.stack_rows(2)
        d.iter_pairs()
        pair("q")[0].stack_rows(3)
    """
    hits = found(query, code)
    # The Language Reference, assignment statements: a target list takes the items of an iterable
    # of the same length one by one; typing's Tuple[X, Y] types each position (PEP 484).
    for line in (8, 9, 11, 12, 13):
        assert at(hits, line, "T-STACK" if line in (8, 11, 13) else "C-PAIRS") == "resolved", line


def test_attributes_of_project_classes_annotated_with_library_types(query: Query) -> None:
    code = """
        import heronframe as hf
        class Holder:
            table: hf.Table
            def __init__(self, column: hf.Column) -> None:
                self.column = column
            @property
            def view(self) -> hf.Table:
                return self._compute()
            def run(self):
                self.table.stack_rows(1)
                self.column.iter_pairs()
                self.view.stack_rows(2)
    """
    hits = found(query, code)
    assert at(hits, 10, "T-STACK") == "resolved"
    assert at(hits, 11, "C-PAIRS") == "resolved"
    assert at(hits, 12, "T-STACK") == "resolved"


def test_overloads_that_differ_leave_the_class_open(query: Query) -> None:
    code = """
        import heronframe as hf
        x = hf.pick("p", flag)
        x.merge_all(1)
        x.describe()
        x.iter_pairs()
        x.transpose().stack_rows(2)
    """
    hits = found(query, code)
    # PEP 484 overloads: with `flag` unknown, `pick` returns a Column or a Table. Each class's
    # change is one reading.
    assert at(hits, 3, "T-MERGE") == "inferred" and at(hits, 3, "C-MERGE") == "inferred"
    # Both classes inherit `describe` from Shaped: whichever it is, the change applies.
    assert at(hits, 4, "DESC") == "resolved"
    # Only a Column has `iter_pairs`: on a Table the line raises AttributeError on the release the
    # code was written for, so where it runs the object is a Column (the Language Reference,
    # "Attribute references"). Likewise only a Table has `transpose`, which returns a Table.
    assert at(hits, 5, "C-PAIRS") == "resolved"
    assert at(hits, 6, "T-STACK") == "resolved"


def test_a_call_takes_the_first_overload_its_arguments_match(query: Query) -> None:
    code = """
        import heronframe as hf
        hf.pick("p").merge_all(1)
        hf.pick("p", True).merge_all(2)
        hf.pick("p", single=False).merge_all(3)
        hf.pick("p", single=True).merge_all(4)
        hf.pick("p", 1).merge_all(5)
        hf.pick("p", *rest).merge_all(6)
    """
    hits = found(query, code)
    # PEP 484, "Function/method overloading", and the typing specification's overload call
    # evaluation: the first overload whose parameters accept the arguments decides the type.
    # `single` is required in the Literal[True] overload, so a call without it is a Table.
    assert at(hits, 2, "T-MERGE") == "resolved" and at(hits, 2, "C-MERGE") is None
    assert at(hits, 3, "C-MERGE") == "resolved" and at(hits, 3, "T-MERGE") is None
    assert at(hits, 4, "T-MERGE") == "resolved" and at(hits, 4, "C-MERGE") is None
    assert at(hits, 5, "C-MERGE") == "resolved" and at(hits, 5, "T-MERGE") is None
    # PEP 586: Literal[True] and Literal[1] are different types, so 1 matches neither overload:
    # nothing is picked and both stay open; so too when `*rest` could fill any parameter.
    for line in (6, 7):
        assert at(hits, line, "T-MERGE") == "inferred" and at(hits, line, "C-MERGE") == "inferred", line


def test_parameters_receive_defaults_and_the_arguments_of_calls(query: Query) -> None:
    code = """
        import heronframe as hf
        def collect(rows, acc=hf.Column()):
            acc.iter_pairs()
        def gather(year, table):
            return table.stack_rows(year)
        def run():
            return gather(2020, hf.read_table("p"))
        class Job:
            def step(self, t):
                t.stack_rows(1)
        Job().step(hf.Table())
        def other(x):
            x.iter_pairs()
        other([1, 2])
    """
    hits = found(query, code)
    assert at(hits, 3, "C-PAIRS") == "resolved"  # the default is a Column
    assert at(hits, 5, "T-STACK") == "resolved"  # `run` passes a Table
    assert at(hits, 10, "T-STACK") == "resolved"  # a method: `self` is bound by the call
    assert at(hits, 13, "C-PAIRS") == "inferred"  # a list is no proof of anything


def test_without_the_source_another_path_to_a_changed_name_is_a_guess() -> None:
    from impactscope.resolve.query import Query as Q

    changes = parse_change_list(CHANGES, Path("changes.toml"))
    plain = Q(changes, library_model(changes))
    code = """
        import heronframe as hf
        hf.util.more.checks.assert_same(1, 2)
        hf.core.frame.Table.stack_rows(t)
        hf.Table.stack_rows(t)
    """
    hits = found(plain, code)
    # Without the source, `heronframe.core.frame.Table` may be `heronframe.Table` re-exported.
    assert at(hits, 3, "T-STACK") == "inferred"
    assert at(hits, 4, "T-STACK") == "resolved"


def test_an_outcome_that_is_not_the_librarys_leaves_the_receiver_open(query: Query) -> None:
    code = """
        import heronframe as hf
        hf.load("p", many).stack_rows(1)
        hf.load("p").stack_rows(2)
    """
    # PEP 484 overloads: with `many` unknown, `load` gives a dict or a Table; a dict has no
    # stack_rows to break. Without `many`, only the Table overload fits.
    assert at(found(query, code), 2, "T-STACK") == "inferred"
    assert at(found(query, code), 3, "T-STACK") == "resolved"
    # Still open after a method that the Table alternative types (the dict's `transpose` is not).
    code = """
        import heronframe as hf
        hf.load("p", many).transpose().stack_rows(1)
    """
    assert at(found(query, code), 2, "T-STACK") == "inferred"


def test_a_call_from_another_module_passes_its_arguments(query: Query) -> None:
    helpers = textwrap.dedent("""
        def plot(table):
            for k, v in table.iter_pairs():
                pass
            return table.stack_rows(1)
    """).lstrip("\n")
    code = """
        import heronframe as hf
        import helpers
        helpers.plot(hf.Column())
    """
    texts = {"main.py": textwrap.dedent(code).lstrip("\n"), "helpers.py": helpers}
    sources = {p: read_python(t.encode(), p) for p, t in texts.items()}
    resolver = ProjectResolver("demo", query, sources)
    resolver.analyse("helpers.py")
    resolver.analyse("main.py")
    resolver.finish()
    hits = resolver.files["helpers.py"].findings
    # `helpers` never imports the library: the Column reaches it through main's call.
    assert at(hits, 2, "C-PAIRS") == "resolved"
    # A Column has no stack_rows, so main's call proves nothing there; the body read before that
    # call (its parameter unknown) may still count the name at `possible`, as in any project that
    # uses the library (docs/findings.md: the upper bound).
    assert at(hits, 4, "T-STACK") in (None, "possible")


def test_a_list_the_library_returns_hands_out_its_items(query: Query) -> None:
    code = """
        import heronframe as hf
        tables = hf.read_all(["a", "b"])
        tables[0].stack_rows(1)
        tables[1:][0].stack_rows(2)
        for t in tables:
            t.stack_rows(3)
        [c.iter_pairs() for c in hf.columns_of(t)]
        tables.append(hf.Table())
        hf.pair(1, 2)[0].stack_rows(4)
        for x in [hf.Table(), hf.Table()]:
            x.stack_rows(5)
    """
    hits = found(query, code)
    # PEP 484/585: `list[X]`, `Iterator[X]` type the items; the Language Reference ("Subscriptions",
    # "Slicings", "The for statement"): an index gives one item, a slice a list of them, a loop
    # binds each item in turn. A fixed `tuple[X, Y]` is not a container of one kind of item.
    for line in (3, 4, 6, 11):
        assert at(hits, line, "T-STACK") == "resolved", line
    assert at(hits, 7, "C-PAIRS") == "resolved"
    # The list's own `append` is the builtin's: the container is proven not to be a Table.
    assert at(hits, 8, "T-STACK") is None


def test_a_helper_returns_what_it_was_given(query: Query) -> None:
    code = """
        import heronframe as hf
        def tidy(table):
            table = table.transpose()
            return table
        def checked(value):
            return value
        first = tidy(unknown())
        first.stack_rows(1)
        second = tidy(hf.read_table("p"))
        second.stack_rows(2)
        checked(hf.Column()).iter_pairs()
        checked([1]).iter_pairs()
    """
    hits = found(query, code)
    # What a function returns can be what it was given: each call that passes a library value
    # reads the body with it (the Language Reference, "Calls": parameters are bound to arguments).
    assert at(hits, 8, "T-STACK") == "inferred"  # called with something unknown
    assert at(hits, 10, "T-STACK") == "resolved"
    assert at(hits, 11, "C-PAIRS") == "resolved"
    # A list in, a list out: not the Column another call passed (a builtin proves the receiver).
    assert at(hits, 12, "C-PAIRS") is None


def test_unpacking_a_function_that_returns_a_tuple_on_one_path(query: Query) -> None:
    code = """
        import heronframe as hf
        def page(n):
            table = hf.read_table(n)
            if n == 0:
                return table, 3
            return table
        t, pages = page(0)
        t.stack_rows(1)
        page(2).stack_rows(2)
        whole = page(2)
        whole.stack_rows(3)
    """
    hits = found(query, code)
    # Unpacking into two targets only works on the path that returns the pair (the Language
    # Reference, assignment statements); any other use sees the other path's value.
    for line in (8, 9, 11):
        assert at(hits, line, "T-STACK") == "resolved", line


# ------------------------------------------------------- pass-through helpers, by property
_VALUES = ("hf.read_table(p)", "hf.Table()", "hf.Column()", "hf.read_all(ps)[0]", "unknown(p)", "[1, 2]", "'text'")
_HELPERS = {
    # a helper's text -> how a call of it wraps a value
    "def keep(v):\n    return v\n": "keep({})",
    "def keep(v):\n    w = v\n    return w\n": "keep({})",
    "def keep(v, n=0):\n    if n:\n        return v, n\n    return v\n": "keep({})",
    "def keep(v):\n    return v\ndef twice(v):\n    return keep(keep(v))\n": "twice({})",
}
_CHANGES = {"stack_rows": ("T-STACK",), "merge_all": ("T-MERGE", "C-MERGE"), "iter_pairs": ("C-PAIRS",)}


@settings(max_examples=40, deadline=None)
@given(
    values=st.lists(st.sampled_from(_VALUES), min_size=1, max_size=4),
    helper=st.sampled_from(sorted(_HELPERS)),
    name=st.sampled_from(sorted(_CHANGES)),
)
def test_a_pass_through_helper_changes_no_finding(query: Query, values: list[str], helper: str, name: str) -> None:
    """A function that returns what it is given (the Language Reference, "Calls" and "The return
    statement") proves nothing more or less about the value: each call's `.member()` is
    `resolved` through the helper exactly when it is so directly, whatever the other calls of the
    helper pass (an unknown value stays unknown beside calls that pass the library). A value the
    direct use proves not to be the library's may be left a guess through the helper."""
    lines = ["import heronframe as hf", *helper.rstrip("\n").split("\n")]
    pairs = []
    for value in values:
        lines.append(f"{value}.{name}()")
        direct = len(lines)
        lines.append(_HELPERS[helper].format(value) + f".{name}()")
        pairs.append((value, direct, len(lines)))
    hits = found(query, "\n".join(lines) + "\n")
    for value, direct, through in pairs:
        for change in _CHANGES[name]:
            before, after = at(hits, direct, change), at(hits, through, change)
            assert (before == "resolved") == (after == "resolved"), (value, change, lines)
            if before is not None:
                assert after == before, (value, change, lines)


def test_a_value_typed_as_a_base_class_may_be_any_subclass(query: Query) -> None:
    code = """
        import heronframe as hf
        s = hf.any_shape("p")
        s.iter_pairs()
        s.merge_all(1)
        s.describe()
    """
    hits = found(query, code)
    # PEP 484: an annotation `-> Shaped` admits instances of its subclasses. A name only the
    # subclass Column has says the value is a Column, or a subclass nobody here knows: inferred.
    assert at(hits, 3, "C-PAIRS") == "inferred"
    # Shaped has merge_all itself: the name does not tell Table from Column, which own one change each.
    assert at(hits, 4, "T-MERGE") is None and at(hits, 4, "C-MERGE") is None
    assert at(hits, 5, "DESC") == "resolved"


def test_a_key_that_keeps_every_dimension_keeps_the_class(query: Query) -> None:
    code = """
        import heronframe as hf
        t = hf.read_table("p")
        c = hf.Column()
        c[1:3].iter_pairs()
        c[["a", "b"]].iter_pairs()
        names = ["a", "b"]
        c[names].iter_pairs()
        c[0].iter_pairs()
        t.at_positions[1:].stack_rows(1)
        t.at_positions[:, ["a"]].stack_rows(2)
        t.at_positions[0].stack_rows(3)
        t.at_positions[:, "a"].stack_rows(4)
    """
    hits = found(query, code)
    # Column.__getitem__ has no annotation. The Language Reference, "The standard type hierarchy":
    # a slice of a sequence is a sequence of the same type; a list of labels keeps the axis too
    # (NumPy's indexing guide, from memory). A single key may give anything.
    for line in (4, 5, 7):
        assert at(hits, line, "C-PAIRS") == "resolved", line
    assert at(hits, 8, "C-PAIRS") in ("inferred", "possible")  # found, by the name alone
    # `at_positions` is built around the Table (`_Positions("at", self)`): such a key gives a Table.
    assert at(hits, 9, "T-STACK") == "resolved"
    assert at(hits, 10, "T-STACK") == "resolved"
    assert at(hits, 11, "T-STACK") in ("inferred", "possible")
    assert at(hits, 12, "T-STACK") in ("inferred", "possible")


def test_a_generic_base_fixes_what_inherited_methods_return(query: Query) -> None:
    code = """
        import heronframe as hf
        hf.group_rows(t).first().stack_rows(1)
        hf.group_rows(t).maybe_first().stack_rows(2)
        hf.group_cells(c).first().iter_pairs()
        hf.group_any(x).first().iter_pairs()
        hf.group_any(x).first().stack_rows(3)
    """
    hits = found(query, code)
    # PEP 484, user-defined generic types: `class TableGroups(_Middle[Table])` fixes the TypeVar
    # of `_Middle(Grouped[ShapedT])`, so `first() -> ShapedT` gives a Table; so too through a
    # string item (`Grouped["Column"]`) and `Optional[ShapedT]`.
    assert at(hits, 2, "T-STACK") == "resolved"
    assert at(hits, 3, "T-STACK") == "resolved"
    assert at(hits, 4, "C-PAIRS") == "resolved"
    # Unfixed, the TypeVar is its bound, Shaped, which has neither name: one of its subclasses.
    assert at(hits, 5, "C-PAIRS") == "inferred"
    assert at(hits, 6, "T-STACK") == "inferred"


# Types a docstring documents (numpydoc, Sphinx info fields, Google style) stand where no
# annotation is given: most data-science code declares its parameters' types only there.


def test_a_numpydoc_parameter_type_carries_the_class(query: Query) -> None:
    code = '''
        import heronframe as hf
        def plot(ic, other, bare, ax=None):
            """Plot.

            Parameters
            ----------
            ic : hf.Table
                One column per period.
            other : heronframe.Column, optional
            bare : Table - indexed by date
            ax : matplotlib.Axes
            """
            ic.stack_rows(1)
            other.iter_pairs()
            bare.stack_rows(2)
    '''
    hits = found(query, code)
    assert at(hits, 13, "T-STACK") == "resolved"
    assert at(hits, 14, "C-PAIRS") == "resolved"  # `heronframe` is bound to nothing: the library's top module
    assert at(hits, 15, "T-STACK") == "resolved"  # a bare class name the library's top module defines


def test_a_documented_return_type_types_the_call(query: Query) -> None:
    code = '''
        import heronframe as hf
        def load(path):
            """Load.

            Returns
            -------
            frame : hf.Table
                The rows.
            """
            return helper(path)
        def pair(path):
            """Two.

            Returns
            -------
            hf.Table
            hf.Column
            """
            return helper(path)
        def sphinx(path):
            """:rtype: :class:`~heronframe.Table`"""
            return helper(path)
        load("p").stack_rows(1)
        sphinx("p").stack_rows(2)
        a = pair("p")
        a.stack_rows(3)
    '''
    hits = found(query, code)
    assert at(hits, 23, "T-STACK") == "resolved"
    assert at(hits, 24, "T-STACK") == "resolved"
    # Two return entries are a tuple's items, not a type of the whole: the call is not proven.
    assert at(hits, 26, "T-STACK") not in (None, "resolved")


def test_what_a_docstring_cannot_tell_proves_nothing(query: Query) -> None:
    code = '''
        import heronframe as hf
        class Table:
            def stack_rows(self, n):
                return n
        def f(a, b, c, d: hf.Column):
            """Check.

            Args:
                a (hf.Table or hf.Column): either.
                b (list of hf.Table): many.
                c (Table): the project's own class, bound here.
                d (hf.Table): the annotation says otherwise, and wins.
            """
            a.stack_rows(1)
            b.stack_rows(2)
            c.stack_rows(3)
            d.iter_pairs()
            d.stack_rows(4)
    '''
    hits = found(query, code)
    assert at(hits, 14, "T-STACK") not in (None, "resolved")  # still counted: the upper bound
    assert at(hits, 15, "T-STACK") not in (None, "resolved")
    assert at(hits, 16, "T-STACK") is None  # a project class that defines the name
    assert at(hits, 17, "C-PAIRS") == "resolved"
    assert at(hits, 18, "T-STACK") is None  # a Column has no stack_rows


def test_a_docstring_type_is_not_a_use(query: Query) -> None:
    code = '''
        import heronframe as hf
        def f(x):
            """:type x: hf.Table.stack_rows"""
            return x
    '''
    assert found(query, code) == []


_STYLES = {
    "numpydoc": '"""Do.\n\n    Parameters\n    ----------\n    {name} : {type}\n        What.\n    """',
    "sphinx": '""":param {name}: what.\n    :type {name}: {type}\n    """',
    "sphinx-inline": '""":param {type} {name}: what."""',
    "google": '"""Do.\n\n    Args:\n        {name} ({type}): what.\n    """',
}


@settings(max_examples=40, deadline=None)
@given(
    style=st.sampled_from(sorted(_STYLES)),
    name=st.from_regex(r"[a-z][a-z0-9_]{0,8}", fullmatch=True).filter(lambda n: n not in ("hf", "heronframe")),
    spelled=st.sampled_from(["hf.Table", "heronframe.Table", "Table", "hf.Column"]),
)
def test_a_documented_type_finds_what_the_annotation_finds(query: Query, style: str, name: str, spelled: str) -> None:
    import keyword

    if keyword.iskeyword(name):
        return
    annotated_as = spelled if spelled.startswith("hf.") else f"hf.{spelled.rpartition('.')[2]}"
    body = f"    {name}.stack_rows(1)\n    {name}.iter_pairs()\n    return {name}\n"
    documented = f"import heronframe as hf\ndef f({name}):\n    {_STYLES[style].format(name=name, type=spelled)}\n{body}"
    annotated = f"import heronframe as hf\ndef f({name}: {annotated_as}):\n    pass\n{body}"

    def shape(code: str) -> set[tuple[int, str, str]]:
        hits = found(query, code)
        last = len(code.splitlines())
        # Compare by distance from the end: the two versions' headers differ in length.
        return {(last - f.line, f.change, f.confidence.label) for f in hits}

    assert shape(documented) == shape(annotated)


def test_one_class_spelled_two_ways_joins_as_one(query: Query) -> None:
    code = '''
        import heronframe as hf
        from heronframe.core import frame
        def f(a: hf.Table, b: frame.Table, c):
            x = a if c else b
            x = x if c else hf.read_table("p")
            x.at_positions[:3].stack_rows(1)
            x.stack_rows(2)
    '''
    hits = found(query, code)
    # `hf.Table` re-exports `heronframe.core.frame.Table`: one class, whichever path names it.
    assert at(hits, 6, "T-STACK") == "resolved"
    assert at(hits, 7, "T-STACK") == "resolved"


def test_a_class_docstring_types_attributes_and_constructor_parameters(query: Query) -> None:
    code = '''
        import heronframe as hf
        class Model:
            """A model.

            Parameters
            ----------
            data : hf.Table
                The rows.

            Attributes
            ----------
            estimate_ : Table
                Set by fit.
            """
            def __init__(self, data):
                data.stack_rows(1)
            def fit(self):
                self.estimate_ = compute()
                return self
        Model(1).fit().estimate_.stack_rows(2)
    '''
    hits = found(query, code)
    # numpydoc's guide (from memory): a class's docstring documents its constructor's parameters
    # and, under Attributes, its attributes.
    assert at(hits, 16, "T-STACK") == "resolved"
    assert at(hits, 20, "T-STACK") == "resolved"


@settings(max_examples=60, deadline=None)
@given(type_text=st.text(alphabet=st.sampled_from("abcdeflmsT._ ,|()`:~-"), max_size=24)
       | st.sampled_from(["class", "lambda", "None", "match", "hf.class", "async.Table"]))
def test_any_documented_type_text_reads_without_error(query: Query, type_text: str) -> None:
    code = f'''
        import heronframe as hf
        def f(x):
            """Do.

            Parameters
            ----------
            x : {type_text}
            """
            x.stack_rows(1)
    '''
    hits = found(query, code)
    assert at(hits, 9, "T-STACK") is not None  # the upper bound holds whatever the docstring says


def test_comprehensions_tell_overloads_apart(query: Query) -> None:
    code = '''
        import heronframe as hf
        def f(paths, xs):
            a = hf.combine([load(x) for x in xs], axis=1)
            a.stack_rows(1)
            b = hf.combine([hf.read_table(p) for p in paths])
            b.stack_rows(2)
            c = hf.combine([x.kinds for x in xs if isinstance(x, hf.Table)])
            c.iter_pairs()
            d = hf.combine(g(x) for x in xs)
            d.stack_rows(3)
    '''
    hits = found(query, code)
    # PEP 484: the first overload that accepts the call decides. With `axis=1` only the third can
    # match first: the fourth accepts no `parts` the third refuses (the same annotation).
    assert at(hits, 4, "T-STACK") == "resolved"
    # A comprehension's items are what its element gives (the Language Reference, "Displays
    # for lists, sets and dictionaries"), and an `if` clause filters the items the element sees.
    assert at(hits, 6, "T-STACK") == "resolved"
    assert at(hits, 8, "C-PAIRS") == "resolved"
    # Items nobody can type: any of the four, so no proof; the name still counts.
    assert at(hits, 10, "T-STACK") not in (None, "resolved")


def test_a_method_that_returns_self_gives_the_receivers_class(query: Query) -> None:
    code = """
        import heronframe as hf
        hf.read_table("p").refit([1]).stack_rows(1)
        c = hf.Column().refit([1])
        c.iter_pairs()
        c.stack_rows(2)
    """
    hits = found(query, code)
    # `Shaped.refit` is unannotated and every way out is `return self`: the instance it is called
    # on, a Table or a Column (as `-> Self`, PEP 673, would say), not the Shaped that defines it.
    assert at(hits, 2, "T-STACK") == "resolved"
    assert at(hits, 4, "C-PAIRS") == "resolved"
    assert at(hits, 5, "T-STACK") is None


def test_a_class_that_lacks_the_name_is_left_out_unless_the_change_list_names_it(query: Query) -> None:
    code = """
        import heronframe as hf
        x = hf.pick("p", flag)
        x.iter_pairs()
        x.flip()
    """
    hits = found(query, code)
    assert at(hits, 3, "C-PAIRS") == "resolved"
    # `Column.flip` is served at run time (`dynamic = true`): the source lists only `Table.flip`,
    # but the change list says a Column has it, so the Column stays a candidate and the use is found.
    assert at(hits, 4, "C-FLIP") is not None


def test_a_file_that_never_imports_the_library_in_a_project_that_does(query: Query) -> None:
    files = {
        "helpers.py": textwrap.dedent("""
            def names(step):
                return step.iter_pairs()
            def grow(rows):
                rows.append(1)
                return rows.merge_all(2)
        """).lstrip("\n"),
        "main.py": "import heronframe as hf\n",
    }
    sources = {p: read_python(t.encode(), p) for p, t in files.items()}
    resolver = ProjectResolver("demo", query, sources)
    for path in sorted(files):
        resolver.analyse(path)
    resolver.finish()
    hits = resolver.files["helpers.py"].findings
    # A library object can be handed to any function of a project that uses the library: a
    # class's member whose name no builtin has counts at `possible` (the upper bound).
    assert at(hits, 2, "C-PAIRS") == "possible"
    assert at(hits, 5, "T-MERGE") == "possible"
    assert {f.line for f in hits} == {2, 5}
    # The same file in a project that never uses the library has no finding.
    alone = ProjectResolver("demo", query, {"helpers.py": sources["helpers.py"]})
    assert alone.analyse("helpers.py").findings == []


def test_a_module_that_fails_to_import_on_the_old_release_is_said_so(query: Query) -> None:
    files = {
        "gen.py": textwrap.dedent("""
            from heronframe.io import read_table, read_gone
            read_table("p").stack_rows(1)
        """).lstrip("\n"),
        "uses_gen.py": textwrap.dedent("""
            from gen import *
            import heronframe as hf
            hf.read_table("p").stack_rows(2)
        """).lstrip("\n"),
        "guarded.py": textwrap.dedent("""
            try:
                from heronframe.io import read_gone
            except ImportError:
                read_gone = None
            import heronframe as hf
            hf.read_table("p").stack_rows(3)
            def later():
                from heronframe.io import read_gone
        """).lstrip("\n"),
    }
    sources = {p: read_python(t.encode(), p) for p, t in files.items()}
    resolver = ProjectResolver("demo", query, sources)
    for path in sorted(files):
        resolver.analyse(path)
    resolver.finish()

    def level(path: str, line: int) -> str | None:
        return at(resolver.files[path].findings, line, "T-STACK")

    # The Language Reference, 7.11 ("The import statement"): `from m import n` raises ImportError
    # when m has no n, and an uncaught error at a module's top level fails the module's import, and
    # so the import of every module that imports it at its top level. The library's source shows
    # heronframe.io has no read_gone: the file's detail says the module is broken already; its
    # lines still use the changed member, so they are found as usual.
    assert level("gen.py", 2) == "resolved"
    assert level("uses_gen.py", 3) == "resolved"
    for path in ("gen.py", "uses_gen.py"):
        assert "heronframe.io.read_gone is not there" in resolver.files[path].detail
    # Caught, or inside a function: the module imports fine.
    assert level("guarded.py", 6) == "resolved"
    assert "is not there" not in resolver.files["guarded.py"].detail


def test_a_name_a_library_module_imports_from_elsewhere_can_be_imported_from_it(query: Query) -> None:
    code = """
        from heronframe.io import Iterable, overload
        import heronframe as hf
        hf.read_table("p").stack_rows(1)
    """
    # heronframe.io binds Iterable and overload by importing them from typing: there they are.
    assert at(found(query, code), 3, "T-STACK") == "resolved"


def test_a_copy_is_of_the_class_copied(query: Query) -> None:
    code = """
        import copy
        from copy import deepcopy
        import heronframe as hf
        def top(vect, n):
            vect = copy.deepcopy(vect)
            return vect.stack_rows(n)
        top(hf.read_table("p"), 1)
        copy.copy(hf.Column()).iter_pairs()
        deepcopy(hf.read_table("p")).stack_rows(2)
    """
    hits = found(query, code)
    # The Library Reference, "copy": `copy.copy(x)` and `copy.deepcopy(x)` return a copy of x.
    assert at(hits, 6, "T-STACK") == "resolved"  # the Table main passes, copied
    assert at(hits, 8, "C-PAIRS") == "resolved"
    assert at(hits, 9, "T-STACK") == "resolved"
