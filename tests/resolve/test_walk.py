"""Where the walk stands (`refs.Cursor`): the cell, top-level statement and handled path each
reference carries, and that reading elsewhere (a function body, a handled path) comes back."""

from __future__ import annotations

import libcst as cst

from impactscope.resolve.evaluate import ModuleEvaluator
from impactscope.resolve.refs import Cursor, Ref

from .conftest import query, resolver


def _run(cells: list[tuple[int | None, str]]) -> tuple[ModuleEvaluator, list[cst.Module], list[Ref]]:
    evaluator = ModuleEvaluator(query(), resolver({}), "m", False, "m.ipynb", "")
    modules = [cst.parse_module(code) for _, code in cells]
    refs = evaluator.run([(index, module) for (index, _), module in zip(cells, modules)]).refs
    return evaluator, modules, refs


def _named(refs: list[Ref], name: str) -> list[Ref]:
    return [r for r in refs if r.name == name or r.attr == name.rpartition(".")[2] and r.name is None]


def test_a_body_run_from_a_later_cell_records_its_references_where_it_is_defined() -> None:
    evaluator, modules, refs = _run([
        (0, "import heronframe as hf\n"),
        (1, "def load():\n    return hf.read_table('a')\n"),
        (2, "t = load()\nt.stack_rows(t)\n"),
    ])
    (read,) = _named(refs, "heronframe.read_table")
    # Run from cell 2's first statement, recorded in cell 1 at the `def`.
    assert (read.cell, read.top) == (1, modules[1].body[0])
    (stack,) = _named(refs, "heronframe.Table.stack_rows")
    assert (stack.cell, stack.top) == (2, modules[2].body[1])
    # After the run the walk stands at the last statement it read, unhandled.
    assert evaluator.at == Cursor(cell=2, top=modules[2].body[1], handled=False)


def test_the_handled_path_ends_with_its_try_statement() -> None:
    code = (
        "try:\n"
        "    from heronframe import stack\n"  # removed on the release: this path fails there
        "    stack(1)\n"
        "except ImportError:\n"
        "    stack = None\n"
        "import heronframe\n"
        "heronframe.stack(2)\n"
    )
    _, modules, refs = _run([(None, code)])
    handled = {(r.top is modules[0].body[0], r.handled) for r in _named(refs, "heronframe.stack")}
    # Inside the `try` (the path the release does not take) every reference is handled; the
    # one after the statement is not.
    assert handled == {(True, True), (False, False)}


def test_a_function_body_read_quietly_records_nothing_and_keeps_the_cursor() -> None:
    code = (
        "import heronframe as hf\n"
        "def make():\n"
        "    return hf.read_table('a')\n"
        "def use():\n"
        "    return make().stack_rows(1)\n"  # reads make() quietly, to learn its return
        "use()\n"
    )
    evaluator, modules, refs = _run([(None, code)])
    # Each body's references are recorded once, at its own definition.
    assert [r.top for r in _named(refs, "heronframe.read_table")] == [modules[0].body[1]]
    assert [r.top for r in _named(refs, "heronframe.Table.stack_rows")] == [modules[0].body[2]]
    assert evaluator.at.top is modules[0].body[3] and evaluator._quiet == 0
