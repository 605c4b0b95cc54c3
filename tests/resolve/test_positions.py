"""Statement-level positions equal libcst's own PositionProvider over the whole module."""

from __future__ import annotations

from pathlib import Path

import libcst as cst
from libcst.metadata import MetadataWrapper, PositionProvider

from impactscope.changes import load_change_list
from impactscope.demo import generate_corpus
from impactscope.demo.run import demo_changes_path
from impactscope.resolve.evaluate import ModuleEvaluator
from impactscope.resolve.project import ProjectResolver, _Positions
from impactscope.resolve.query import Query
from impactscope.corpus.roots import discover
from impactscope.corpus.sources import read_notebook, read_python


def _check(source_cells: list[tuple[int | None, int, cst.Module]], query: Query, resolver: ProjectResolver) -> int:
    evaluator = ModuleEvaluator(query, resolver, "m", False, "m.py", "")
    result = evaluator.run((i, m) for i, _, m in source_cells)
    cells = {i: (first, m) for i, first, m in source_cells}
    fast = _Positions(cells)
    full = {i: MetadataWrapper(m, unsafe_skip_copy=True).resolve(PositionProvider) for i, _, m in source_cells}
    for ref in result.refs:
        where = full[ref.cell][ref.node]
        first = cells[ref.cell][0]
        # Reference: libcst's PositionProvider on the whole module (libcst.metadata).
        assert fast(ref) == (where.start.line + first - 1, where.start.column)
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
                    cells.append((cell.index, cell.first_line, cst.parse_module(cell.code)))
                except cst.ParserSyntaxError:
                    pass
            if cells:
                checked += _check(cells, query, ProjectResolver(project.name, query, {entry.path: source}))
    assert checked > 1000
