"""build_surface on the types real libraries write: properties and descriptors, overloads,
generics and TypeVar selves, names served by a module `__getattr__`, stub folders.

Each case is a small fictional package written in tmp_path. The rules come from: PEP 484
(overloads, forward references as strings, stubs), PEP 673 (Self), PEP 562 (module
`__getattr__`), PEP 561 (stub packages), the typing documentation (TypeVar bound, generics) and
the Language Reference, "Implementing Descriptors" (`__get__`).
"""

from __future__ import annotations

import json

import pytest

from impactscope.surface import Surface, build_surface

from .helpers import write_tree

# -- properties and attributes ---------------------------------------------------------------


@pytest.fixture()
def frames(tmp_path):
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            from .frame import Frame, Column
            from .index import Index
            """,
        "_props.pyi": """
            from typing import overload
            from .frame import Frame
            from .index import Index
            # as pandas' stubs do for its Cython cache: a property in disguise
            cache_readonly = property
            class AxisSlot:
                def __init__(self, axis: int = ...) -> None: ...
                @overload
                def __get__(self, obj: Frame, type) -> Index: ...
                @overload
                def __get__(self, obj: None, type) -> AxisSlot: ...
            """,
        "_helpers.py": """
            class lazy_value:
                def __init__(self, func): self.func = func
                def __get__(self, obj, cls): return self.func(obj)
            class bound_call:
                def __init__(self, func): self.func = func
                def __get__(self, obj, cls): return self
                def __call__(self, *a): ...
            def doc(text):
                def wrap(f): return f
                return wrap
            """,
        "index.py": "class Index:\n    def rename(self, name) -> 'Index': ...\n",
        "frame.py": """
            from __future__ import annotations
            from functools import cached_property
            from typing import TYPE_CHECKING
            from ._props import cache_readonly, AxisSlot
            from ._helpers import lazy_value, bound_call, doc
            from outside.caching import lazy_property, memoize
            if TYPE_CHECKING:
                from .index import Index

            class Column:
                pass

            class _Locator:
                def __getitem__(self, key) -> Column: ...

            class Frame:
                columns = AxisSlot(1)
                width: int
                first: Column

                def transpose(self) -> Frame: ...
                T = property(transpose)
                U = property(fget=transpose)
                W = property(lambda self: self)

                @property
                def loc(self) -> "_Locator": ...
                @cache_readonly
                def index(self) -> Index: ...
                @cached_property
                def head_column(self) -> Column | None: ...
                @lazy_value
                def summary(self) -> Column: ...
                @lazy_property
                def tail_column(self) -> Column: ...
                @bound_call
                def apply(self, f) -> Frame: ...
                @memoize
                def fingerprint(self) -> Column: ...
                @doc("Sort the rows.")
                def sort(self, by) -> Frame: ...
            """,
    })
    return build_surface(root)


def test_property_and_attribute_types(frames: Surface) -> None:
    frame, column = "heronframe.frame.Frame", "heronframe.frame.Column"
    # `T = property(transpose)`: a property whose getter is transpose, so its value is a Frame.
    for name in ("T", "U"):
        assert frames.member(f"heronframe.Frame.{name}").kind == "property"
        assert frames.returns(f"heronframe.Frame.{name}") == frame
    assert frames.member("heronframe.Frame.W").kind == "property" and frames.returns("heronframe.Frame.W") is None
    # A string annotation (PEP 484 forward reference) naming an indexer class, and its __getitem__.
    assert frames.returns("heronframe.Frame.loc") == "heronframe.frame._Locator"
    assert frames.returns("heronframe.frame._Locator.__getitem__") == column
    # Class-level annotations (how stubs declare attributes): the annotated library class.
    assert frames.returns("heronframe.Frame.first") == column
    assert frames.returns("heronframe.Frame.width") is None  # not a library class
    assert frames.attribute_type("heronframe.Frame.first") == column


def test_descriptor_instance_reads_as_its_get_result(frames: Surface) -> None:
    # Language Reference, "Implementing Descriptors": `Frame().columns` calls AxisSlot.__get__;
    # the overload for access through the class (obj: None) returns the descriptor itself.
    assert frames.member("heronframe.Frame.columns").kind == "property"
    assert frames.returns("heronframe.Frame.columns") == "heronframe.index.Index"
    assert frames.attribute_type("heronframe.Frame.columns") == "heronframe.index.Index"


def test_which_decorators_make_a_property(frames: Surface) -> None:
    kinds = {name: frames.member(f"heronframe.Frame.{name}").kind
             for name in ("index", "head_column", "summary", "tail_column", "apply", "fingerprint", "sort", "transpose")}
    assert kinds == {
        "index": "property",        # cache_readonly = property, in the library's stub
        "head_column": "property",  # functools.cached_property
        "summary": "property",      # a library class with __get__ and no __call__
        "tail_column": "property",  # an outside decorator named like a property (common practice)
        "apply": "method",          # a descriptor that is also callable: wraps a method
        "fingerprint": "method",    # an outside decorator that says nothing: a method
        "sort": "method",           # a library decorator function: a method
        "transpose": "method",
    }
    assert frames.parameters("heronframe.Frame.index") is None  # read, not called
    assert [p.name for p in frames.parameters("heronframe.Frame.sort")] == ["by"]
    assert frames.returns("heronframe.Frame.index") == "heronframe.index.Index"
    assert frames.returns("heronframe.Frame.head_column") == "heronframe.frame.Column"  # Column | None
    assert frames.attribute_type("heronframe.Frame.summary") == "heronframe.frame.Column"
    assert frames.attribute_type("heronframe.Frame.sort") is None  # a method is not a value


# -- overloads, unions, generics, TypeVar selves ---------------------------------------------


@pytest.fixture()
def typed(tmp_path):
    root = write_tree(tmp_path / "heronframe", {
        "__init__.pyi": """
            from typing import Any, Generic, Literal, TypeVar, overload
            from typing_extensions import Self

            T = TypeVar("T")
            FrameT = TypeVar("FrameT", bound="Frame")

            class Index(Generic[T]):
                def unique(self) -> Index[T]: ...
            class Series(Generic[T]):
                def to_frame(self) -> Frame: ...
            class Frame:
                @overload
                def sort(self, *, inplace: Literal[False] = ...) -> Frame: ...
                @overload
                def sort(self, *, inplace: Literal[True]) -> None: ...
                @overload
                def __getitem__(self, key: str) -> Series[Any]: ...
                @overload
                def __getitem__(self, key: list[str]) -> Self: ...
                @overload
                def pick(self, n: int) -> Series[Any]: ...
                @overload
                def pick(self, n: str) -> int: ...
                def copy(self: FrameT) -> FrameT: ...
                @classmethod
                def empty(cls: type[FrameT]) -> FrameT: ...
                def either(self) -> Series[Any] | Index[Any]: ...
                def keys(self) -> Index[int]: ...
            class Table(Frame): ...

            def concat(objs: list[FrameT]) -> FrameT: ...
            @overload
            def read(path: str) -> Frame: ...
            @overload
            def read(path: str, *, chunked: Literal[True]) -> Frame: ...
            """,
    })
    return build_surface(root)


def test_overloads_that_agree_give_their_class(typed: Surface) -> None:
    # PEP 484: callers see the overloads; both of read's return a Frame.
    assert typed.returns("heronframe.read") == "heronframe.Frame"
    # An overload that returns None (inplace=True) adds no class: None has no attributes to follow.
    assert typed.returns("heronframe.Frame.sort") == "heronframe.Frame"
    assert typed.returns_all("heronframe.Frame.sort") == ("heronframe.Frame",)


def test_overloads_that_differ_are_all_listed(typed: Surface) -> None:
    # Series[Any] for a column name, Self (PEP 673: the receiver's class) for a list of names.
    assert typed.returns("heronframe.Frame.__getitem__") is None
    assert typed.returns_all("heronframe.Frame.__getitem__") == ("heronframe.Series", "heronframe.Frame")
    assert typed.returns_all("heronframe.Table.__getitem__") == ("heronframe.Series", "heronframe.Table")
    # One overload returns a builtin: no single class, the library's one is still listed.
    assert typed.returns("heronframe.Frame.pick") is None
    assert typed.returns_all("heronframe.Frame.pick") == ("heronframe.Series",)
    # A union lists both of its library classes.
    assert typed.returns("heronframe.Frame.either") is None
    assert typed.returns_all("heronframe.Frame.either") == ("heronframe.Series", "heronframe.Index")


def test_generics_give_their_head_class(typed: Surface) -> None:
    # typing docs, "Generics": Index[int] is an Index.
    assert typed.returns("heronframe.Frame.keys") == "heronframe.Index"
    assert typed.returns("heronframe.Index.unique") == "heronframe.Index"
    assert typed.member("heronframe.Index").bases == ("typing.Generic",)


def test_typevar_selves_and_bounds(typed: Surface) -> None:
    # `self: FrameT -> FrameT` is the receiver's class, as Self is (PEP 673 names this pattern).
    assert typed.returns("heronframe.Frame.copy") == "heronframe.Frame"
    assert typed.returns("heronframe.Table.copy") == "heronframe.Table"
    assert typed.returns("heronframe.Table.empty") == "heronframe.Table"  # cls: type[FrameT]
    # A TypeVar not tied to self: its bound (typing docs: "bound=" is an upper bound).
    assert typed.returns("heronframe.concat") == "heronframe.Frame"


def test_an_unannotated_method_that_always_returns_self(tmp_path) -> None:
    # Every way out is `return self` (the fluent `fit` of estimators): the receiver's class, as
    # `-> Self` would say (PEP 673). A path that falls off the end returns None (the Language
    # Reference, "The return statement" and "Function definitions"), and a generator returns a
    # generator: neither is the instance.
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            class Base:
                def fit(self, rows):
                    if not rows:
                        raise ValueError(rows)
                    for r in rows:
                        if r is None:
                            return self
                    self.rows_ = rows
                    return self
                def maybe(self, rows):
                    if rows:
                        return self
                def other(self, rows):
                    if rows:
                        return rows
                    return self
                def gen(self):
                    yield self
                    return self
                def nested(self):
                    def inner(x):
                        return x
                    return self
                def typed(self) -> int:
                    return self
            class Table(Base):
                pass
            """,
    })
    s = build_surface(root)
    assert s.returns("heronframe.Table.fit") == "heronframe.Table"
    assert s.returns("heronframe.Base.fit") == "heronframe.Base"
    assert s.returns("heronframe.Table.nested") == "heronframe.Table"
    for name in ("maybe", "other", "gen", "typed"):
        assert s.returns(f"heronframe.Table.{name}") is None, name


def test_what_a_module_binds_at_top_level(tmp_path) -> None:
    # The Language Reference, 7.11: `from m import n` finds any name m binds at top level, whatever
    # it is bound to (here a compiled module's function, another package's name, a fallback).
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            from ._fast import hashed
            import numpy as np
            try:
                from ._opt import speedy
            except ImportError:
                speedy = None
            class Table: ...
            """,
        "_fast.cpython-311-x86_64-linux-gnu.so": "",
        "loose.py": "from os.path import *\n",
        "lazy.py": "def __getattr__(name):\n    return name\n",
    })
    s = build_surface(root)
    for name in ("hashed", "np", "speedy", "Table"):
        assert s.binds("heronframe", name) is True, name
    assert s.binds("heronframe", "gone") is False
    # A star import of another package, or a module __getattr__ (PEP 562), leaves the set open.
    assert s.binds("heronframe.loose", "gone") is None
    assert s.binds("heronframe.lazy", "gone") is None
    assert Surface.from_json(json.loads(s.dumps())).binds("heronframe", "gone") is False


def test_overloads_in_source_prefer_the_overloads_over_the_implementation(tmp_path) -> None:
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            from typing import overload
            class Frame: ...
            class Series: ...
            @overload
            def load(path: str) -> Frame: ...
            @overload
            def load(path: str, column: str) -> Series: ...
            def load(path, column=None, *, sep=","):
                ...
            """,
    })
    s = build_surface(root)
    assert s.returns("heronframe.load") is None
    assert s.returns_all("heronframe.load") == ("heronframe.Frame", "heronframe.Series")
    assert [p.name for p in s.parameters("heronframe.load")] == ["path", "column", "sep"]  # what runs


def test_returns_all_survives_json(typed: Surface) -> None:
    again = Surface.from_json(json.loads(typed.dumps()))
    assert again == typed
    assert again.returns_all("heronframe.Table.__getitem__") == ("heronframe.Series", "heronframe.Table")
    assert again.returns("heronframe.Table.copy") == "heronframe.Table"


# -- names a module __getattr__ serves (PEP 562) ---------------------------------------------


def test_module_getattr_names_are_members(tmp_path) -> None:
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            from .core import Table
            _old_index_names = ["IntIndex", "FloatIndex"]

            def __getattr__(name):
                import warnings
                if name in _old_index_names:
                    warnings.warn("deprecated", FutureWarning)
                    from .core import IntIndex, FloatIndex
                    return {"IntIndex": IntIndex, "FloatIndex": FloatIndex}[name]
                elif name == "datetime":
                    from datetime import datetime as dt
                    return dt
                elif name in {"Panel", "Panel4D"}:
                    return type(name, (), {})
                elif "Grid" == name:
                    from .core import Table as _Table
                    return _Table
                elif name == "Table":
                    return None  # never reached: the module binds Table itself
                elif name == "stack":
                    raise AttributeError("heronframe.stack was removed; use Table.append_rows")
                raise AttributeError(name)
            """,
        "core.py": "class Table: ...\nclass IntIndex: ...\nclass FloatIndex: ...\n",
        "util.py": """
            def __getattr__(attr):
                match attr:
                    case "testing" | "checks":
                        from . import core
                        return core
                    case _:
                        raise AttributeError(attr)
            """,
        "io.py": """
            _LAZY = {"read_grid": ".core", "write_grid": ".core"}
            def __getattr__(name):
                return _LAZY[name]
            """,
    })
    s = build_surface(root)
    # A served name that the function imports from the library is that member.
    assert s.canonical("heronframe.IntIndex") == "heronframe.core.IntIndex"
    assert s.canonical("heronframe.FloatIndex") == "heronframe.core.FloatIndex"
    assert s.canonical("heronframe.Grid") == "heronframe.core.Table"
    assert s.canonical("heronframe.util.testing") == s.canonical("heronframe.util.checks") == "heronframe.core"
    # Served from outside, or built on the fly: members of the new kind "dynamic".
    served = ("heronframe.datetime", "heronframe.Panel", "heronframe.Panel4D", "heronframe.io.read_grid", "heronframe.io.write_grid")
    assert {n: s.member(n).kind for n in served} == dict.fromkeys(served, "dynamic")
    assert s.canonical("heronframe.Table") == "heronframe.core.Table"  # PEP 562: a bound name never reaches __getattr__
    assert s.member("heronframe.stack") is None  # a branch that raises serves nothing
    assert s.dynamic >= {"heronframe.util", "heronframe.io"}
    # Every name heronframe's __getattr__ can return is tested in its branch and it ends by raising
    # (PEP 562's pattern for a fixed set): the surface has them all, so the module is not dynamic.
    assert "heronframe" not in s.dynamic
    assert "datetime" in s.names_in("heronframe") and "heronframe" in s.owners("datetime")


def test_lazy_attach_tables_are_served(tmp_path) -> None:
    # The lazy-loading helper of scientific Python (SPEC 1): attach(__name__, submodules, submod_attrs).
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            import lazy_loader as lazy
            __getattr__, __dir__, __all__ = lazy.attach(
                __name__, submodules=["plotting"], submod_attrs={"core": ["Table", "merge"]},
            )
            """,
        "core.py": "class Table: ...\ndef merge(a, b) -> Table: ...\n",
        "plotting.py": "def scatter(t): ...\n",
    })
    s = build_surface(root)
    assert s.canonical("heronframe.Table") == "heronframe.core.Table"
    assert s.returns("heronframe.merge") == "heronframe.core.Table"
    assert s.canonical("heronframe.plotting.scatter") == "heronframe.plotting.scatter"
    assert "heronframe" in s.dynamic


def test_type_checking_import_served_lazily(tmp_path) -> None:
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            from typing import TYPE_CHECKING
            if TYPE_CHECKING:
                from .core import Table
            def __getattr__(name):
                if name == "Table":
                    import importlib
                    return importlib.import_module(".core", __name__).Table
                raise AttributeError(name)
            """,
        "core.py": "class Table: ...\n",
    })
    assert build_surface(root).canonical("heronframe.Table") == "heronframe.core.Table"


# -- what is read: stub folders, tests subpackages -------------------------------------------


def test_stubs_folder_is_the_library(tmp_path) -> None:
    # PEP 561: a stub-only distribution installs `heronframe-stubs/`, which stands for `heronframe`.
    write_tree(tmp_path / "site", {
        "heronframe-stubs/__init__.pyi": "from .core import Table as Table\n",
        "heronframe-stubs/core.pyi": "class Table:\n    def head(self, n: int = ...) -> Table: ...\n",
        "heronframe/__init__.py": "from .core import Table\nfrom .core import only_in_source\n",
        "heronframe/core.py": "class Table: ...\ndef only_in_source(): ...\n",
    })
    stubs = build_surface(tmp_path / "site" / "heronframe-stubs")
    assert stubs.library == "heronframe"
    assert stubs.returns("heronframe.Table.head") == "heronframe.core.Table"
    # A folder holding both: the stub package first (PEP 561, "Type Checker Module Resolution Order").
    both = build_surface(tmp_path / "site", "heronframe")
    assert both.member("heronframe.only_in_source") is None and both.member("heronframe.Table.head") is not None
    assert build_surface(tmp_path / "site" / "heronframe-stubs", "heronframe") == stubs


def test_tests_subpackages_are_left_out_unless_asked(tmp_path) -> None:
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": "",
        "testing.py": "def assert_equal(a, b): ...\n",
        "tests/__init__.py": "",
        "tests/test_core.py": "def test_x(): ...\n",
        "core/__init__.py": "",
        "core/tests/__init__.py": "",
    })
    assert build_surface(root).member("heronframe.tests") is None
    assert build_surface(root).member("heronframe.core.tests") is None
    assert build_surface(root).member("heronframe.testing.assert_equal").kind == "function"
    assert build_surface(root, include_tests=True).member("heronframe.tests.test_core.test_x").kind == "function"
