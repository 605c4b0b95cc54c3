"""Picking the overload a call matches (resolve/overloads.py).

Sources: PEP 484, "Function/method overloading" and the typing specification's overload call
evaluation (the first overload whose parameters accept the arguments decides); PEP 484, "The
numeric tower" (an int is acceptable where a float is expected; bool is a subclass of int, the
Language Reference, "The standard type hierarchy"); PEP 586 (Literal[0] and Literal[False] are
different types). The library classes are fictional.
"""

from __future__ import annotations

from impactscope.resolve.overloads import UNKNOWN_FACT, Fact, Verdict, admits, judge, select
from impactscope.surface.overloads import Accepts, Overload, OverloadParameter

TABLE, COLUMN, SUB, MIXED = "hf.Table", "hf.Column", "hf.SubTable", "hf.Mixed"


class Model:
    """The two questions `admits` asks of the library: ancestors, and outside ancestors."""

    def mro(self, cls: str) -> tuple[str, ...]:
        return {SUB: (SUB, TABLE), TABLE: (TABLE,), COLUMN: (COLUMN,), MIXED: (MIXED,)}.get(cls, ())

    def only_library_bases(self, cls: str) -> bool:
        return cls != MIXED  # Mixed derives from an outside class (say, str)


M = Model()
STR = Fact(literal=("str", "'a'"), builtin="str")


def p(name: str, accepts: Accepts, kind: str = "positional-or-keyword", optional: bool = False) -> OverloadParameter:
    return OverloadParameter(name, kind, optional, accepts)


def test_what_an_annotation_admits() -> None:
    assert admits(Accepts(classes=(TABLE,)), Fact(cls=SUB), M) is Verdict.YES  # a subclass
    assert admits(Accepts(classes=(TABLE,)), Fact(cls=COLUMN), M) is Verdict.NO
    assert admits(Accepts(classes=(TABLE,)), Fact(cls=MIXED), M) is Verdict.NO  # classes are nominal
    assert admits(Accepts(builtins=("str",)), Fact(cls=MIXED), M) is Verdict.MAYBE  # it may be a str
    assert admits(Accepts(builtins=("str",)), Fact(cls=TABLE), M) is Verdict.NO
    assert admits(Accepts(classes=(TABLE,)), UNKNOWN_FACT, M) is Verdict.MAYBE
    assert admits(Accepts(anything=True), UNKNOWN_FACT, M) is Verdict.YES
    assert admits(Accepts(unsure=True), STR, M) is Verdict.MAYBE
    # The numeric tower and bool as an int; but Literal[0] is not Literal[False].
    assert admits(Accepts(builtins=("float",)), Fact(literal=("int", "1"), builtin="int"), M) is Verdict.YES
    assert admits(Accepts(builtins=("int",)), Fact(literal=("bool", "True"), builtin="bool"), M) is Verdict.YES
    assert admits(Accepts(builtins=("int",)), Fact(literal=("float", "1.0"), builtin="float"), M) is Verdict.NO
    assert admits(Accepts(literals=(("int", "0"),)), Fact(literal=("bool", "False"), builtin="bool"), M) is Verdict.NO
    assert admits(Accepts(literals=(("str", "'a'"),)), STR, M) is Verdict.YES
    # An outside class: no builtin literal is one.
    assert admits(Accepts(foreign=("datetime.date",)), STR, M) is Verdict.NO
    # Items of a display.
    tables = Fact(builtin="list", items=(TABLE, SUB))
    assert admits(Accepts(items=(TABLE,)), tables, M) is Verdict.YES
    assert admits(Accepts(items=(COLUMN,)), tables, M) is Verdict.NO
    assert admits(Accepts(items=(TABLE,)), Fact(builtin="list", items=(TABLE, None)), M) is Verdict.MAYBE
    assert admits(Accepts(items=(TABLE,)), Fact(builtin="list", items=()), M) is Verdict.MAYBE
    assert admits(Accepts(items=(TABLE,)), STR, M) is Verdict.NO


def test_the_shape_of_a_call() -> None:
    two = Overload((p("a", Accepts(anything=True)), p("b", Accepts(anything=True), optional=True),
                    p("c", Accepts(anything=True), kind="keyword-only", optional=True)), (TABLE,))
    assert judge(two, [UNKNOWN_FACT], {}, M) is Verdict.YES
    assert judge(two, [], {}, M) is Verdict.NO  # `a` is required
    assert judge(two, [STR, STR, STR], {}, M) is Verdict.NO  # `c` is keyword-only
    assert judge(two, [STR], {"a": STR}, M) is Verdict.NO  # `a` given twice
    assert judge(two, [STR], {"d": STR}, M) is Verdict.NO  # no such keyword
    rest = Overload((p("a", Accepts(anything=True)), p("more", Accepts(anything=True), kind="var-positional"),
                     p("kw", Accepts(anything=True), kind="var-keyword")), (TABLE,))
    assert judge(rest, [STR, STR, STR], {"d": STR}, M) is Verdict.YES


def test_the_first_overload_that_fits_decides_and_open_ones_before_it_join() -> None:
    first = Overload((p("x", Accepts(classes=(TABLE,))),), (TABLE,))
    second = Overload((p("x", Accepts(classes=(COLUMN,))),), (COLUMN,))
    catch_all = Overload((p("x", Accepts(anything=True)),), (TABLE, COLUMN, None))
    order = (first, second, catch_all)
    assert select(order, [Fact(cls=SUB)], {}, M) == (TABLE,)
    assert select(order, [Fact(cls=COLUMN)], {}, M) == (COLUMN,)
    assert select(order, [UNKNOWN_FACT], {}, M) == (TABLE, COLUMN, None)
    assert select(order, [STR], {}, M) == (TABLE, COLUMN, None)  # only the catch-all fits
    # Nothing fits: nothing is picked, and the caller keeps the join of every overload.
    assert select((first, second), [STR], {}, M) is None
    # A comprehension or `list(x)`: a list, items unknown; for `Iterable[Table]` it may fit.
    assert admits(Accepts(items=(TABLE,)), Fact(builtin="list"), M) is Verdict.MAYBE
    assert admits(Accepts(items=(TABLE,)), Fact(builtin="dict"), M) is Verdict.MAYBE


def test_an_overload_an_earlier_one_covers_is_never_the_first_match() -> None:
    # The shape of pandas 1.5.3's `concat` (read from its source): a Literal axis picks the
    # class; a wider axis annotation after it gives either. Called with `axis=1` and items nobody
    # can type, the first overload fits whenever the second does (same `objs` annotation), so by
    # PEP 484's first-match rule only the first's outcome is possible.
    items = Accepts(items=(TABLE, COLUMN))
    rows = Overload((p("objs", items), p("axis", Accepts(literals=(("int", "0"),)), optional=True)), (TABLE,))
    cols = Overload((p("objs", items), p("axis", Accepts(literals=(("int", "1"),)))), (TABLE,))
    wide = Overload((p("objs", items), p("axis", Accepts(builtins=("int", "str")), optional=True)), (TABLE, COLUMN))
    one = Fact(literal=("int", "1"), builtin="int")
    assert select((rows, cols, wide), [Fact(builtin="list")], {"axis": one}, M) == (TABLE,)
    # With `axis` unknown, the Literal overloads are unsure of it too: any of them may match.
    assert select((rows, cols, wide), [Fact(builtin="list")], {"axis": UNKNOWN_FACT}, M) == (TABLE, COLUMN)
    # A different annotation on the unsure argument covers nothing.
    other = Overload((p("objs", Accepts(items=(COLUMN,))), p("axis", Accepts(builtins=("int",)))), (COLUMN,))
    assert select((cols, other), [Fact(builtin="list")], {"axis": one}, M) == (TABLE, COLUMN)
