"""build_surface on the heronframe fixtures and on small packages written for one rule each."""

from __future__ import annotations

import pytest

from impactscope.surface import Parameter, SurfaceError, build_surface

from .helpers import NEW, OLD, write_tree


@pytest.fixture(scope="module")
def old():
    return build_surface(OLD)


# -- re-exports, inheritance, returns on the demo library ------------------------------------


def test_reexported_method_resolves_to_its_definition(old):
    assert old.canonical("heronframe.Table.stack_rows") == "heronframe.core.table.Table.stack_rows"
    assert old.canonical("heronframe.core.Table") == "heronframe.core.table.Table"
    assert old.aliases["heronframe.Table"] == "heronframe.core.table.Table"
    assert old.aliases["heronframe.read_table"] == "heronframe.io.read_table"


def test_inherited_method_resolves_through_the_mro(old):
    assert old.canonical("heronframe.GroupedTable.stack_rows") == "heronframe.core.table.Table.stack_rows"
    assert old.canonical("heronframe.GroupedTable.aggregate") == "heronframe.core.grouped.GroupedTable.aggregate"
    assert old.member("heronframe.GroupedTable").bases == ("heronframe.core.table.Table",)
    assert "heronframe.core.grouped.GroupedTable" in old.owners("stack_rows")
    assert "heronframe.core.table.Table" in old.owners("stack_rows")


def test_unknown_names_keep_their_tail_after_the_known_prefix(old):
    assert old.canonical("heronframe.Table.no_such_method") == "heronframe.core.table.Table.no_such_method"
    assert old.canonical("numpy.array") == "numpy.array"
    assert old.member("heronframe.Table.no_such_method") is None


def test_returns_string_self_optional_union_and_pipe_none(old):
    table = "heronframe.core.table.Table"
    assert old.returns("heronframe.Table") == table  # a class called returns itself
    assert old.returns("heronframe.Table.stack_rows") == table  # -> "Table"
    assert old.returns("heronframe.Table.filter_rows") == table  # -> Self
    # PEP 673: `Self` is the type of the receiver, so the inherited method returns the subclass.
    assert old.returns("heronframe.GroupedTable.filter_rows") == "heronframe.core.grouped.GroupedTable"
    assert old.returns("heronframe.Table.sort_by") == table  # -> Table | None
    assert old.returns("heronframe.Store.get") == table  # -> Optional["Table"]
    assert old.returns("heronframe.Store.find") == table  # -> Union[Table, None]
    assert old.returns("heronframe.read_table") == table
    assert old.returns("heronframe.open_store") == "heronframe.store.Store"
    assert old.returns("heronframe.Table.describe") is None  # not annotated


def test_signatures_exclude_self_and_count_positions(old):
    assert old.parameters("heronframe.Table.sort_by") == (
        Parameter("column", "positional-or-keyword", 0, None),
        Parameter("ascending", "positional-or-keyword", 1, "True"),
        Parameter("inplace", "positional-or-keyword", 2, "False"),
    )
    assert old.parameters("heronframe.read_table")[1] == Parameter("sep", "positional-or-keyword", 1, '","')
    # A class's parameters are its __init__'s, found through the MRO.
    assert [p.name for p in old.parameters("heronframe.Table")] == ["data", "columns"]
    assert [p.name for p in old.parameters("heronframe.GroupedTable")] == ["data", "columns", "key"]
    assert old.member("heronframe.Table.shape").kind == "property"


def test_star_names_come_from_all_and_else_from_public_names(old):
    assert old.star_names("heronframe") == (
        "GroupedTable", "Store", "Table", "merge_tables", "open_store", "read_table", "stack", "write_table",
    )
    assert old.star_names("heronframe.plotting") == ("scatter_grid",)
    assert "heronframe" in old.declared and "heronframe.plotting" not in old.declared


def test_private_module_reached_only_through_reexport(old):
    assert "heronframe.io.warn_deprecated" in old.private_aliases
    assert "heronframe._compat.warn_deprecated" not in old.public_names()
    assert "heronframe.Table.stack_rows" in old.public_names()
    assert "heronframe.GroupedTable.stack_rows" in old.public_names()


def test_pep702_deprecated_from_typing_extensions(old):
    # PEP 702: @deprecated("msg") from typing_extensions or warnings marks the member deprecated.
    assert old.member("heronframe.Table.to_records").deprecated.startswith("Table.to_records is deprecated")
    assert old.member("heronframe.Table.copy").deprecated is None


def test_pep702_through_the_librarys_own_compat_module(tmp_path):
    # PEP 702 names warnings.deprecated (3.13+) and typing_extensions.deprecated; libraries often
    # pick one in a private compat module and import it from there.
    root = write_tree(tmp_path / "lib", {
        "_compat.py": """
            import sys
            if sys.version_info >= (3, 13):
                from warnings import deprecated
            else:
                from typing_extensions import deprecated
            """,
        "__init__.py": """
            from ._compat import deprecated
            from . import _compat

            @deprecated("use new()")
            def old(): ...

            @_compat.deprecated("use New")
            class Old: ...
            """,
    })
    s = build_surface(root)
    assert s.member("lib.old").deprecated == "use new()"
    assert s.member("lib.Old").deprecated == "use New"


def test_module_getattr_marks_the_module_dynamic(tmp_path):
    # PEP 562: a module-level __getattr__ can answer any name, so the module is recorded as dynamic;
    # one that only raises (heronframe 3.0: "stack was removed") answers none, so it is not.
    new = build_surface(NEW)
    assert new.dynamic == frozenset()
    assert new.member("heronframe.stack") is None
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "def __getattr__(name):\n    import importlib\n    return importlib.import_module('lib.' + name)\n",
    })
    assert build_surface(root).dynamic == frozenset({"lib"})


def test_json_round_trip_and_table(old):
    again = type(old).from_json(old.to_json())
    assert again == old
    assert again.canonical("heronframe.GroupedTable.stack_rows") == "heronframe.core.table.Table.stack_rows"
    text = old.render_table()
    assert "heronframe.core.table.Table.sort_by" in text and "(column, ascending=True, inplace=False)" in text


def test_from_json_rejects_bad_input():
    with pytest.raises(SurfaceError, match="format"):
        type(build_surface(OLD)).from_json({"format": 99})
    with pytest.raises(SurfaceError, match="missing the key 'members'"):
        type(build_surface(OLD)).from_json({"format": 1, "library": "x"})


# -- one rule per package ---------------------------------------------------------------------


def test_stub_takes_precedence_over_source(tmp_path):
    # PEP 484 / PEP 561: a .pyi beside a .py is what type checkers read; so do we.
    root = write_tree(tmp_path / "pkg", {
        "__init__.py": "def f(a, b): ...\n",
        "__init__.pyi": "def f(a: int) -> None: ...\n",
        "mod.py": "def g(x): ...\n",
    })
    s = build_surface(root)
    assert [p.name for p in s.parameters("pkg.f")] == ["a"]
    assert [p.name for p in s.parameters("pkg.mod.g")] == ["x"]


def test_stub_reexport_rules(tmp_path):
    # PEP 484: in a stub, only `import X as X`, `from M import X as X` and star imports re-export.
    root = write_tree(tmp_path / "lib", {
        "__init__.pyi": """
            from typing import TYPE_CHECKING
            from ._impl import A as A
            from ._impl import B
            if TYPE_CHECKING:
                from ._impl import C as C
            """,
        "_impl.pyi": "class A: ...\nclass B: ...\nclass C: ...\n",
    })
    s = build_surface(root)
    assert s.aliases == {"lib.A": "lib._impl.A", "lib.C": "lib._impl.C"}
    assert s.private_aliases["lib.B"] == "lib._impl.B"  # still resolvable, not public


def test_type_checking_imports_are_not_reexports_in_source(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            from typing import TYPE_CHECKING
            if TYPE_CHECKING:
                from .core import Table
            def load() -> "Table": ...
            """,
        "core.py": "class Table: ...\n",
    })
    s = build_surface(root)
    assert "lib.Table" not in s.aliases and s.member("lib.Table") is None
    assert s.returns("lib.load") == "lib.core.Table"  # still used to read the annotation


def test_all_forms_and_dynamic_all(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            from . import a
            from .a import *
            __all__ = ["x"]
            __all__ += ["y"]
            __all__.extend(("z",))
            __all__.append("w")
            __all__ += a.__all__
            x = y = z = w = 1
            """,
        "a.py": "__all__ = ('f',)\ndef f(): ...\ndef g(): ...\n",
        "b.py": "__all__ = [n for n in dir() if n[0] != '_']\n",
        "c.py": "from os.path import *\ndef h(): ...\n",
    })
    s = build_surface(root)
    assert s.star_names("lib") == ("x", "y", "z", "w", "f")
    assert s.canonical("lib.f") == "lib.a.f" and s.member("lib.g") is None  # star import binds __all__ only
    assert s.star_names("lib.b") is None  # not a static list
    assert s.star_names("lib.c") is None  # a star import from outside: unknowable


def test_alias_import_as_and_module_alias(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import lib.core.table as tables
            from .core.table import Table
            Frame = Table
            make = tables.make
            """,
        "core/__init__.py": "",
        "core/table.py": "class Table:\n    def go(self): ...\ndef make() -> Table: ...\n",
    })
    s = build_surface(root)
    assert s.canonical("lib.tables") == "lib.core.table"
    assert s.canonical("lib.Frame.go") == "lib.core.table.Table.go"
    assert s.canonical("lib.make") == "lib.core.table.make"
    assert s.returns("lib.make") == "lib.core.table.Table"


def test_try_except_import_error_takes_the_try_body(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            try:
                from ._fast import speed
            except ImportError:
                from ._slow import speed
                fallback_only = True
            """,
        "_fast.py": "def speed(x): ...\n",
        "_slow.py": "def speed(x, y): ...\n",
    })
    s = build_surface(root)
    assert s.canonical("lib.speed") == "lib._fast.speed"
    assert s.member("lib.fallback_only").kind == "constant"  # a name only the fallback binds still exists


def test_methods_kinds_overload_and_parameter_kinds(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            from typing import overload

            @overload
            def conv(x: int) -> int: ...
            @overload
            def conv(x: str) -> str: ...
            def conv(x, base=10): ...

            @overload
            def only(a: int) -> int: ...
            @overload
            def only(a: int, b: int) -> int: ...

            def shapes(a, b=2, /, c=3, *args, d, e=5, **kw): ...

            class K:
                @classmethod
                def make(cls, n): ...
                @staticmethod
                def util(x, y=1): ...
                @property
                def size(self) -> int: ...
                @size.setter
                def size(self, value): ...
                def __new__(cls, seed): ...
            """,
    })
    s = build_surface(root)
    assert [p.name for p in s.parameters("lib.conv")] == ["x", "base"]  # the implementation
    assert [p.name for p in s.parameters("lib.only")] == ["a"]  # no implementation: the first overload
    assert s.parameters("lib.shapes") == (
        Parameter("a", "positional-only", 0, None),
        Parameter("b", "positional-only", 1, "2"),
        Parameter("c", "positional-or-keyword", 2, "3"),
        Parameter("args", "var-positional", None, None),
        Parameter("d", "keyword-only", None, None),
        Parameter("e", "keyword-only", None, "5"),
        Parameter("kw", "var-keyword", None, None),
    )
    assert s.member("lib.shapes").signature() == "(a, b=2, /, c=3, *args, d, e=5, **kw)"
    assert s.member("lib.K.make").kind == "classmethod" and [p.name for p in s.parameters("lib.K.make")] == ["n"]
    assert s.member("lib.K.util").kind == "staticmethod" and [p.name for p in s.parameters("lib.K.util")] == ["x", "y"]
    assert s.member("lib.K.size").kind == "property"
    assert [p.name for p in s.parameters("lib.K")] == ["seed"]  # __new__ when there is no __init__


def test_dataclass_fields_make_the_init(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            from dataclasses import dataclass, field, KW_ONLY
            from typing import ClassVar

            @dataclass
            class Point:
                x: int
                y: int = 0
                registry: ClassVar[dict] = {}
                _: KW_ONLY
                tags: list = field(default_factory=list)
            """,
    })
    s = build_surface(root)
    assert [(p.name, p.kind, p.default) for p in s.parameters("lib.Point")] == [
        ("x", "positional-or-keyword", None), ("y", "positional-or-keyword", "0"), ("tags", "keyword-only", "<factory>"),
    ]


def test_c3_mro_diamond(tmp_path):
    # The C3 order Python itself uses for __mro__ (Python Language Reference, "The Python 2.3 MRO").
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            class A:
                def who(self): ...
            class B(A):
                pass
            class C(A):
                def who(self): ...
            class D(B, C):
                pass
            """,
    })
    s = build_surface(root)
    assert s.mro("lib.D") == ("lib.D", "lib.B", "lib.C", "lib.A")
    assert s.canonical("lib.D.who") == "lib.C.who"


def test_runtime_names_and_getattr_are_dynamic(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "",
        "g.py": "for _n in _names():\n    globals()[_n] = _n\n",
        "fixed.py": "for _n in ('a', 'b'):\n    globals()[_n] = _n\n",  # a fixed set: served names, not dynamic
        "s.py": "import sys\nsetattr(sys.modules[__name__], 'x', 1)\n",
        "lazy.py": "def __getattr__(name):\n    return name\n",
        "gone.py": "def __getattr__(name):\n    raise AttributeError(name)\n",  # serves nothing
        "plain.py": "def f(): return globals()\n",
    })
    s = build_surface(root)
    assert s.dynamic == frozenset({"lib.g", "lib.s", "lib.lazy"})
    assert s.star_names("lib.g") is None
    assert s.member("lib.fixed.a") is not None and s.member("lib.fixed.b") is not None


def test_unparseable_module_is_a_problem_not_a_failure(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "from .good import ok\n",
        "good.py": "def ok(): ...\n",
        "bad.py": "def broken(:\n",
        "py2.py": "print 'hello'\n",
    })
    s = build_surface(root)
    assert {p.module for p in s.problems} == {"lib.bad", "lib.py2"}
    assert all("syntax error at line 1" in p.message for p in s.problems)
    assert s.canonical("lib.ok") == "lib.good.ok"
    assert s.member("lib.bad").kind == "module" and s.star_names("lib.bad") is None


def test_source_forms_and_errors(tmp_path):
    write_tree(tmp_path / "site", {"one.py": "def f(x): ...\n", "pkg/__init__.py": "X = 1\n"})
    assert build_surface(tmp_path / "site" / "one.py").library == "one"
    assert build_surface(tmp_path / "site", "pkg").library == "pkg"
    assert build_surface(tmp_path / "site").library == "pkg"  # the only package inside
    with pytest.raises(SurfaceError, match="no package or module named 'nope'"):
        build_surface(tmp_path / "site", "nope")
    with pytest.raises(SurfaceError, match="no such file or directory"):
        build_surface(tmp_path / "missing")


def test_module_level_instance_attributes_follow_its_class(tmp_path):
    # The calendar pattern: `c = TextCalendar(); prmonth = c.prmonth`.
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            class Cal:
                def show(self, year, month=1): ...
            c = Cal()
            show = c.show
            """,
    })
    s = build_surface(root)
    assert s.canonical("lib.show") == "lib.Cal.show"
    assert s.member("lib.c").returns == "lib.Cal"
    assert [p.name for p in s.parameters("lib.show")] == ["year", "month"]


def test_an_all_grown_at_run_time_falls_back_to_public_names(tmp_path):
    # numpy 1.x: `extend_all(module)` appends another module's __all__ when imported; the static
    # list is then only part of what `from m import *` binds (Language Reference, the import statement).
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "from .core import *\n",
        "core.py": (
            "from .more import *\n__all__ = ['a']\n"
            "def extend_all(module):\n    for n in module.__all__:\n        __all__.append(n)\n"
            "def a(): ...\nfrom . import more\nextend_all(more)\n"
        ),
        "more.py": "__all__ = ['b']\ndef b(): ...\n",
    })
    s = build_surface(root)
    assert s.member("lib.a") is not None and s.member("lib.b") is not None


def test_build_for_drafts_reads_stubs_and_sources(tmp_path):
    from impactscope.surface.build import build_for_drafts

    root = write_tree(tmp_path / "lib", {"__init__.py": "def f(x):\n    return x\ndef old(): ...\n",
                                         "__init__.pyi": "def f(x: int) -> int: ...\n"})
    drafted, scanned = build_for_drafts(root)
    assert scanned.member("lib.old") is None and drafted.member("lib.old") is not None
    assert drafted.member("lib.f").parameters == scanned.member("lib.f").parameters
