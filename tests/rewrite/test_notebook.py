"""Notebooks: only the edited `source` strings change in the JSON text; the notebook stays valid
for nbformat (its v4 JSON schema is the outside reference)."""

from __future__ import annotations

import json
from pathlib import Path

import nbformat
import pytest

from impactscope.rewrite.notebook import NotebookShapeError, cell_sources, splice
from tests.rewrite.helpers import rewrite_files


def _notebook(cells: list[dict], **dump: object) -> str:
    data = {
        "cells": cells,
        "metadata": {"kernelspec": {"display_name": "Python 3", "language": "python", "name": "python3"}},
        "nbformat": 4,
        "nbformat_minor": 5,
    }
    return json.dumps(data, **dump) + "\n"  # type: ignore[arg-type]


def _code(source: list[str] | str, index: int, outputs: list | None = None) -> dict:
    return {"cell_type": "code", "execution_count": None, "id": f"c{index}", "metadata": {},
            "outputs": outputs or [], "source": source}


CELLS = [
    {"cell_type": "markdown", "id": "m0", "metadata": {}, "source": ["# R\u00e9sum\u00e9 of `t.stack_rows`"]},
    _code(["%matplotlib inline\n", "import heronframe as hf\n", "!ls data\n", "t = hf.Table()\n",
           "u = t.stack_rows(t)  # caf\u00e9"], 1,
          [{"name": "stdout", "output_type": "stream", "text": ["t.stack_rows\n"]}]),
    _code("%%time\nv = t.stack_rows(u)\nw = t.pivot('a', 'b', 'c', fill=0)", 2),
]


@pytest.mark.parametrize("dump", [{"indent": 1, "ensure_ascii": False}, {"indent": 2, "ensure_ascii": True}, {}])
def test_only_edited_source_strings_change(tmp_path: Path, dump: dict) -> None:
    before = _notebook(CELLS, **dump)
    result = rewrite_files(tmp_path, {"nb.ipynb": before})
    (changed,) = result.files
    after = changed.new.decode("utf-8")
    # Each edited line is its own JSON string token, re-encoded as the file encodes strings.
    expected = before
    for old, new in [
        ("u = t.stack_rows(t)  # caf\u00e9", "u = t.append_rows(t)  # caf\u00e9"),
        ("%%time\nv = t.stack_rows(u)\nw = t.pivot('a', 'b', 'c', fill=0)",
         "%%time\nv = t.append_rows(u)\nw = t.pivot('a', 'b', 'c', fill_value=0)"),
    ]:
        ascii_only = bool(dump.get("ensure_ascii", True))
        expected = expected.replace(json.dumps(old, ensure_ascii=ascii_only), json.dumps(new, ensure_ascii=ascii_only))
    assert after == expected
    # nbformat reads it and its v4 schema accepts it; magics and the shell escape are as written.
    notebook = nbformat.reads(after, as_version=4)
    nbformat.validate(notebook)
    assert notebook.cells[1].source.startswith("%matplotlib inline\nimport heronframe as hf\n!ls data\n")
    assert notebook.cells[1].outputs[0]["text"] == "t.stack_rows\n"  # outputs untouched


def test_a_line_count_change_in_a_list_source_keeps_the_separators() -> None:
    text = _notebook([_code(["a = 1\n", "b = 2\n", "c = 3"], 0)], indent=1)
    out = splice(text, {0: "a = 1\nb = 2\nb2 = 2.5\nc = 3"})
    assert json.loads(out)["cells"][0]["source"] == ["a = 1\n", "b = 2\n", "b2 = 2.5\n", "c = 3"]
    assert out.replace('"b2 = 2.5\\n",\n    ', "") == text
    fewer = splice(text, {0: "a = 1\nc = 3"})
    assert json.loads(fewer)["cells"][0]["source"] == ["a = 1\n", "c = 3"]


def test_a_v3_notebook_is_not_spliced() -> None:
    with pytest.raises(NotebookShapeError):
        cell_sources(json.dumps({"nbformat": 3, "worksheets": []}))


def test_a_moved_chain_takes_the_import_in_another_cell_along(tmp_path: Path) -> None:
    """The notebook's code cells are one module: `import heronframe.plotting` in the first cell
    follows the chain rewritten in the third (docs/rewrite.md)."""
    cells = [
        _code(["import heronframe.plotting\n", "import heronframe as hf"], 0),
        {"cell_type": "markdown", "id": "m1", "metadata": {}, "source": ["heronframe.plotting"]},
        _code(["t = hf.Table()\n", "heronframe.plotting.scatter_grid(t, 'a', 'b')"], 2),
    ]
    before = _notebook(cells, indent=1)
    (changed,) = rewrite_files(tmp_path, {"nb.ipynb": before}).files
    expected = before.replace('"import heronframe.plotting\\n"', '"import heronframe.viz\\n"')
    expected = expected.replace('"heronframe.plotting.scatter_grid', '"heronframe.viz.scatter_grid')
    assert changed.new.decode("utf-8") == expected
    nbformat.validate(nbformat.reads(expected, as_version=4))
    again = tmp_path / "again"
    again.mkdir()
    assert rewrite_files(again, {"nb.ipynb": expected}).files == ()
