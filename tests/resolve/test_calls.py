"""Calls: a call's shape belongs to the references its callee yields, and to no other."""

from __future__ import annotations

import libcst as cst

from impactscope.resolve.calls import call_shape
from impactscope.resolve.evaluate import ModuleEvaluator
from impactscope.resolve.refs import CallShape, Ref

from .conftest import at, findings, query, resolver


def _refs(code: str) -> list[Ref]:
    evaluator = ModuleEvaluator(query(), resolver({}), "m", False, "m.py", "")
    return evaluator.run([(None, cst.parse_module(code))]).refs


def _shapes(code: str) -> dict[str, list[str | None]]:
    out: dict[str, list[str | None]] = {}
    for ref in _refs(code):
        key = ref.name or f"?.{ref.attr}"
        out.setdefault(key, []).append(ref.call.render() if ref.call is not None else None)
    return out


def test_the_shape_goes_to_the_callee_not_to_its_receiver_or_arguments() -> None:
    shapes = _shapes(
        "import heronframe as hf\n"
        "hf.read_table('a.csv').stack_rows(hf.stack, fill=1)\n"
    )
    # The outer call's shape is stack_rows's; read_table has its own; hf.stack, an argument,
    # is not called at all.
    assert shapes["heronframe.Table.stack_rows"] == ["(_, fill=_)"]
    assert shapes["heronframe.read_table"] == ["(_)"]
    assert shapes["heronframe.stack"] == [None]


def test_a_name_called_directly_and_an_unknown_receiver_carry_the_shape() -> None:
    shapes = _shapes(
        "from heronframe import stack\n"
        "import heronframe\n"
        "stack(*parts, **options)\n"
        "unknown().stack_rows()\n"
        "f = stack\n"
    )
    assert shapes["heronframe.stack"] == [None, "(*_, **_)", None]  # the import, the call, the alias
    assert shapes["?.stack_rows"] == ["()"]


def test_a_call_of_a_call_or_a_subscript_gives_its_shape_to_no_reference() -> None:
    shapes = _shapes(
        "import heronframe as hf\n"
        "hf.read_table('a')(1, 2)\n"
        "hf.stack[0](1)\n"
    )
    assert shapes["heronframe.read_table"] == ["(_)"]
    assert shapes["heronframe.stack"] == [None]


def test_call_shape_counts_positionals_before_the_first_star_and_sorts_keywords() -> None:
    call = cst.parse_expression("f(a, b, *rest, c, z=1, a=2, **kw)")
    assert isinstance(call, cst.Call)
    assert call_shape(call.args) == CallShape(positional=2, star=True, starstar=True, keywords=("a", "z"))
    assert call_shape(call.args).render() == "(_, _, *_, a=_, z=_, **_)"


def test_keywords_a_dict_display_passes_through_double_star() -> None:
    code = (
        "import heronframe as hf\n"
        "t = hf.Table()\n"
        "options = {\"inplace\": True, \"na\": 0}\n"
        "options.update(extra)\n"
        "t.sort_by(\"a\", **options)\n"
        "t.sort_by(\"a\", **{\"inplace\": False})\n"
        "t.sort_by(\"a\", **other)\n"
    )
    found = findings(code)
    # The Language Reference, "Calls": `**mapping` passes each key as a keyword argument. A dict
    # display's string keys are passed whatever `update` adds later.
    assert at(found, 5, "HF-4") == "resolved"
    assert at(found, 6, "HF-4") == "resolved"
    assert at(found, 7, "HF-4") == "possible"  # a mapping nobody can read may or may not hold it
