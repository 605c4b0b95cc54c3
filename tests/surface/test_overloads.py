"""Overloads read with their parameters: what each annotation admits (surface/overloads.py).

Sources: PEP 484 ("Function/method overloading", "Union types", "The numeric tower", forward
references as strings, stubs), PEP 586 (Literal types), PEP 604 (`X | Y`), PEP 544 (protocols
are structural, so `isinstance`-style reasoning does not apply to them), PEP 613 (type aliases).
Each case is a small fictional package written in tmp_path.
"""

from __future__ import annotations

import json

from impactscope.surface import Surface, build_surface
from impactscope.surface.overloads import Accepts, Overload, OverloadParameter

from .helpers import write_tree


def _surface(tmp_path) -> Surface:
    root = write_tree(tmp_path / "heronframe", {
        "__init__.py": """
            from .frame import Table, Column, pick, glue, plain
            """,
        "_typing.pyi": """
            import datetime
            from typing import Union
            from typing_extensions import TypeAlias
            Label: TypeAlias = Union[str, int, datetime.date]
            """,
        "frame.pyi": """
            from typing import Any, Iterable, Literal, Mapping, Optional, Protocol, overload
            from ._typing import Label
            class SupportsLen(Protocol):
                def __len__(self) -> int: ...
            class Table:
                @overload
                def __getitem__(self, key: Label) -> Column: ...
                @overload
                def __getitem__(self, key: slice | list[str]) -> Table: ...
                @overload
                def drop(self, *, inplace: Literal[True]) -> None: ...
                @overload
                def drop(self, *, inplace: Literal[False] = ...) -> Table: ...
            class Column: ...
            @overload
            def pick(path: str, single: Literal[True]) -> Column: ...
            @overload
            def pick(path: str, single: Literal[False, 0] = ...) -> Table: ...
            @overload
            def glue(parts: Iterable[Table] | Mapping[str, Table], how: Optional["Label"] = ...) -> Table: ...
            @overload
            def glue(parts: Iterable[Column], how: SupportsLen = ...) -> Column: ...
            @overload
            def glue(parts: Any, how: object = ...) -> Table | Column: ...
            @overload
            def plain(x: int) -> Table: ...
            @overload
            def plain(x: int, y: int) -> Table: ...
            """,
    })
    return build_surface(root, "heronframe")


def test_each_overload_keeps_its_parameters_and_what_they_admit(tmp_path) -> None:
    surface = _surface(tmp_path)
    table, column = "heronframe.frame.Table", "heronframe.frame.Column"
    getitem = surface.overloads("heronframe.Table.__getitem__")
    # PEP 613 alias through an import; `datetime.date` is an outside class; `self` is left out.
    assert getitem[0].parameters == (
        OverloadParameter("key", "positional-or-keyword", False,
                          Accepts(builtins=("str", "int"), foreign=("datetime.date",))),
    )
    assert getitem[0].outcomes == (column,)
    # PEP 604 `|`; a list of a builtin is a list whatever its items.
    assert getitem[1].parameters[0].accepts == Accepts(builtins=("slice", "list"))
    assert getitem[1].outcomes == (table,)
    pick = surface.overloads("heronframe.pick")
    # PEP 586: Literal values keep their type (False and 0 are different literals).
    assert pick[0].parameters[1] == OverloadParameter("single", "positional-or-keyword", False,
                                                      Accepts(literals=(("bool", "True"),)))
    assert pick[1].parameters[1].accepts == Accepts(literals=(("bool", "False"), ("int", "0")))
    assert pick[1].parameters[1].optional
    glue = surface.overloads("heronframe.glue")
    # Items of an iterable or a mapping's values; Optional adds None; a forward reference as a string.
    assert glue[0].parameters[0].accepts == Accepts(items=(table,))
    assert glue[0].parameters[1].accepts == Accepts(builtins=("None", "str", "int"), foreign=("datetime.date",))
    # PEP 544: a protocol cannot be tested by class, so it is unsure; Any and object admit anything.
    assert glue[1].parameters[1].accepts == Accepts(unsure=True)
    assert glue[2].parameters[0].accepts == Accepts(anything=True)
    assert glue[2].parameters[1].accepts == Accepts(anything=True)
    assert glue[2].outcomes == (table, column)


def test_overloads_that_agree_or_a_return_every_overload_shares_are_not_kept(tmp_path) -> None:
    surface = _surface(tmp_path)
    # Both `plain` overloads return a Table: `returns` says it all.
    assert surface.overloads("heronframe.plain") == ()
    assert surface.returns("heronframe.plain") == "heronframe.frame.Table"
    # `drop` gives None or a Table: None has no attributes, so `returns` is the Table already.
    assert surface.overloads("heronframe.Table.drop") == ()
    assert surface.returns("heronframe.Table.drop") == "heronframe.frame.Table"


def test_overloads_survive_the_surface_json(tmp_path) -> None:
    surface = _surface(tmp_path)
    again = Surface.from_json(json.loads(json.dumps(surface.to_json())))
    for name in ("heronframe.Table.__getitem__", "heronframe.pick", "heronframe.glue"):
        assert again.overloads(name) == surface.overloads(name), name
        assert all(isinstance(o, Overload) for o in again.overloads(name))
