"""Properties over generated programs of the demo library (hypothesis): a rewrite is idempotent,
and the user's alias for the library does not change which sites are rewritten."""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from impactscope.changes import load_change_list
from impactscope.corpus import discover
from impactscope.resolve.query import Query
from impactscope.rewrite.project import ProjectRewrite, rewrite_project
from impactscope.scan.library import prepare_library
from tests.rewrite.helpers import rewrite_changes, write_project

STATEMENTS = (
    "t{i} = {A}.Table({{'a': [1, 2], 'b': [3, 4]}})",
    "u{i} = t{j}.stack_rows(t{j})",
    "{A}.plotting.scatter_grid(t{j}, 'a', 'b')",
    "p{i} = t{j}.pivot('a', 'b', 'b', fill=0)",
    "p{i} = t{j}.pivot('a', 'b', 'b', 0)",
    "r{i} = {A}.read_table('x.csv')",
    "r{i} = {A}.read_table('x.csv', sep=';')",
    "s{i} = t{j}.sort_by('a', inplace=False)",
    "s{i} = t{j}.sort_by('a', inplace=True)",
    "d{i} = t{j}.describe()",
    "def f{i}(x):\n    return x.stack_rows(x)",
    "v{i} = {A}.Table.stack_rows(t{j}, t{j})",
)


@pytest.fixture(scope="module")
def query(tmp_path_factory: pytest.TempPathFactory) -> Query:
    base = tmp_path_factory.mktemp("props")
    changes = load_change_list(rewrite_changes(base))
    return prepare_library(changes, base / "lib").query


def _program(picks: list[int], alias: str) -> str:
    lines = [f"import heronframe as {alias}", f"t0 = {alias}.Table({{'a': [1], 'b': [2]}})"]
    for i, pick in enumerate(picks, start=1):
        lines.append(STATEMENTS[pick].format(A=alias, i=i, j=0))
    return "\n".join(lines) + "\n"


def _rewrite(query: Query, text: str) -> ProjectRewrite:
    with tempfile.TemporaryDirectory() as folder:
        root = write_project(Path(folder) / "p", {"main.py": text})
        (project,) = discover([root], single=True, library="heronframe")
        return rewrite_project(project, query)


programs = st.lists(st.integers(0, len(STATEMENTS) - 1), min_size=1, max_size=8)
aliases = st.sampled_from(["hf", "H", "frames", "whatever", "heron_lib"])


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(picks=programs, alias=aliases)
def test_a_second_rewrite_changes_nothing(query: Query, picks: list[int], alias: str) -> None:
    first = _rewrite(query, _program(picks, alias))
    if not first.files:
        return
    (changed,) = first.files
    second = _rewrite(query, changed.new.decode("utf-8"))
    assert second.files == ()


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(picks=programs, one=aliases, other=aliases)
def test_the_alias_does_not_change_which_sites_are_rewritten(query: Query, picks: list[int], one: str, other: str) -> None:
    a, b = _rewrite(query, _program(picks, one)), _rewrite(query, _program(picks, other))
    assert sorted((f.line, f.change) for f in a.rewritten) == sorted((f.line, f.change) for f in b.rewritten)
    assert sorted((r.finding.line, r.finding.change, r.why) for r in a.review) == sorted(
        (r.finding.line, r.finding.change, r.why) for r in b.review
    )
    if a.files:
        # The same text, up to the alias itself.
        assert a.files[0].new.decode().replace(one, "ALIAS") == b.files[0].new.decode().replace(other, "ALIAS")
