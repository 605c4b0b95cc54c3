"""Statement-level positions equal libcst's own PositionProvider over the whole module."""

from __future__ import annotations

from pathlib import Path

import pytest

import libcst as cst
from libcst.metadata import MetadataWrapper, PositionProvider

from impactscope.changes import load_change_list
from impactscope.demo import generate_corpus
from impactscope.demo.run import demo_changes_path
from impactscope.resolve.evaluate import ModuleEvaluator
from impactscope.resolve.positions import Positions
from impactscope.resolve.project import ProjectResolver
from impactscope.resolve.query import Query
from impactscope.corpus.roots import discover
from impactscope.corpus.sources import read_notebook, read_python


def _check(source_cells: list[tuple[int | None, int, cst.Module, str]], query: Query, resolver: ProjectResolver) -> int:
    evaluator = ModuleEvaluator(query, resolver, "m", False, "m.py", "")
    result = evaluator.run((i, m) for i, _, m, _ in source_cells)
    cells = {i: (first, m, code, None) for i, first, m, code in source_cells}
    fast = Positions(cells).locate((ref.cell, ref.top, ref.node) for ref in result.refs)
    full = {i: MetadataWrapper(m, unsafe_skip_copy=True).resolve(PositionProvider) for i, _, m, _ in source_cells}
    for ref, got in zip(result.refs, fast):
        where = full[ref.cell][ref.node]
        first = cells[ref.cell][0]
        # Reference: libcst's PositionProvider on the whole module (libcst.metadata).
        assert got == (where.start.line + first - 1, where.start.column)
    return len(result.refs)


def test_statement_positions_match_the_whole_module_provider(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    generate_corpus(root, projects=80, seed=5)
    query = Query(load_change_list(demo_changes_path()))
    checked = 0
    for project in discover([root], library="heronframe"):
        for entry in project.entries():
            if entry.skip or entry.error or not entry.path.endswith((".py", ".ipynb")):
                continue
            try:
                data = entry.read()
                source = read_notebook(data, entry.path) if entry.path.endswith(".ipynb") else read_python(data, entry.path)
            except ValueError:
                continue
            cells = []
            for cell in source.cells:
                try:
                    cells.append((cell.index, cell.first_line, cst.parse_module(cell.code), cell.code))
                except cst.ParserSyntaxError:
                    pass
            if cells:
                checked += _check(cells, query, ProjectResolver(project.name, query, {entry.path: source}))
    assert checked > 1000


TRICKY = [
    # Decorators, comments and blank lines before statements, `a; b` on one line, continuation
    # lines, strings over several lines, non-ASCII text before a reference on the same line.
    "# header comment\n\nimport heronframe as hf\n\n\n# about f\n@hf.register\n@other(\n  1)\ndef f(t):\n    return t.pivot(1, 2, 3)\n",
    "import heronframe as hf; t = hf.read_table('x'); t.pivot(1, 2, 3)\nx = 1\n",
    "import heronframe as hf\ns = '''\nhf.merge_tables\n'''\nv = \\\n    hf.merge_tables(s)\n",
    "import heronframe as hf\nnom = 'café'; hf.merge_tables(nom)\nclass C:\n    x = hf.Table.pivot\n",
    "import heronframe as hf\nif True:\n    pass\nelse:\n    hf.merge_tables()\n\n\n\nhf.merge_tables()",
]


def _refs(code: str):
    query = Query(load_change_list(demo_changes_path()))
    module = cst.parse_module(code)
    result = ModuleEvaluator(query, ProjectResolver("p", query, {}), "m", False, "m.py", "").run([(None, module)])
    return module, result.refs


@pytest.mark.parametrize("code", TRICKY)
def test_positions_on_tricky_layouts(code: str) -> None:
    module, refs = _refs(code)
    assert refs
    fast = Positions({None: (1, module, code, None)}).locate((r.cell, r.top, r.node) for r in refs)
    # Reference: libcst's PositionProvider on the whole module (libcst.metadata).
    full = MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)
    assert fast == [(full[r.node].start.line, full[r.node].start.column) for r in refs]


@pytest.mark.parametrize("code", TRICKY)
def test_cells_ast_cannot_read_fall_back_to_code_generation(code: str) -> None:
    # Handing `ast` text it rejects (as it rejects syntax newer than the running Python) takes
    # the fallback path; the positions must not change.
    module, refs = _refs(code)
    fast = Positions({None: (1, module, "this is not python (\n", None)}).locate((r.cell, r.top, r.node) for r in refs)
    full = MetadataWrapper(module, unsafe_skip_copy=True).resolve(PositionProvider)
    assert fast == [(full[r.node].start.line, full[r.node].start.column) for r in refs]
