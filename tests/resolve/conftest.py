"""Helpers for resolver tests: run the project resolver on in-memory files.

The change list below is invented test data in the demo's scenario (the fictional library
heronframe); it is not a description of any real library.
"""

from __future__ import annotations

from pathlib import Path
from typing import Iterable, Mapping

import pytest

from impactscope.changes import parse_change_list
from impactscope.corpus.sources import read_python
from impactscope.findings import Finding
from impactscope.resolve.project import ProjectResolver
from impactscope.resolve.query import Query

CHANGES_TOML = b'''
[library]
name = "heronframe"
release = "3.0"

[types]
"heronframe.read_table" = "heronframe.Table"
"heronframe.Table" = "heronframe.Table"
"heronframe.Table.filter_rows" = "heronframe.Table"
"heronframe.open_store" = "heronframe.Store"
"heronframe.Store" = "heronframe.Store"

[[change]]
id = "HF-1"
member = "heronframe.Table.stack_rows"
kind = "renamed"
replacement = "heronframe.Table.append_rows"

[[change]]
id = "HF-2"
member = "heronframe.stack"
kind = "removed"

[[change]]
id = "HF-3"
member = "heronframe.plotting.scatter_grid"
kind = "moved"
replacement = "heronframe.viz.scatter_grid"

[[change]]
id = "HF-4"
member = "heronframe.Table.sort_by"
kind = "parameter-removed"
parameter = "inplace"
position = 1

[[change]]
id = "HF-5"
member = "heronframe.read_table"
kind = "default-changed"
parameter = "sep"

[[change]]
id = "HF-6"
member = "heronframe.Table.copy"
kind = "behaviour-changed"

[[change]]
id = "HF-7"
member = "heronframe.Store.flush_all"
kind = "removed"

[[change]]
id = "HF-8"
member = "heronframe.Table.rename_cols"
kind = "parameter-renamed"
parameter = "mapping"
new_parameter = "columns"
position = 0

[[change]]
id = "HF-9"
member = "heronframe.Table.append"
kind = "behaviour-changed"

[[change]]
id = "HF-10"
member = "heronframe._legacy_merge"
kind = "removed"
'''

_QUERY: Query | None = None


def query() -> Query:
    global _QUERY
    if _QUERY is None:
        _QUERY = Query(parse_change_list(CHANGES_TOML, Path("changes.toml")))
    return _QUERY


def resolver(files: Mapping[str, str], project: str = "demo") -> ProjectResolver:
    sources = {path: read_python(text.encode("utf-8"), path) for path, text in files.items()}
    return ProjectResolver(project, query(), sources)


def findings(files: Mapping[str, str] | str, target: str = "main.py", project: str = "demo") -> list[Finding]:
    """Findings in `target`; a bare string is the text of a one-file project `main.py`."""
    if isinstance(files, str):
        files = {target: files}
    return resolver(files, project).analyse(target).findings


def all_findings(files: Mapping[str, str], project: str = "demo") -> list[Finding]:
    r = resolver(files, project)
    out: list[Finding] = []
    for path in sorted(files):
        out.extend(r.analyse(path).findings)
    return sorted(out)


def sites(found: Iterable[Finding]) -> set[tuple[int, str, str]]:
    """(line, change id, confidence label) of each finding."""
    return {(f.line, f.change, f.confidence.label) for f in found}


def at(found: Iterable[Finding], line: int, change: str) -> str | None:
    """The strongest confidence label of `change` on `line`, or None when there is no finding."""
    best = None
    for f in found:
        if f.line == line and f.change == change and (best is None or f.confidence > best.confidence):
            best = f
    return best.confidence.label if best else None


def line_of(text: str, marker: str) -> int:
    """1-based line of the only line of `text` that contains `marker`."""
    lines = [i for i, ln in enumerate(text.splitlines(), 1) if marker in ln]
    assert len(lines) == 1, (marker, lines)
    return lines[0]


@pytest.fixture
def q() -> Query:
    return query()


def library_query(folder: Path, library: Mapping[str, str], changes: bytes) -> Query:
    """A query whose library is read from `library` (path -> text, dedented) written in `folder`."""
    import textwrap

    from impactscope.resolve.model import library_model

    for path, text in library.items():
        target = folder / path
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(textwrap.dedent(text).lstrip("\n"))
    parsed = parse_change_list(changes, Path("changes.toml"))
    return Query(parsed, library_model(parsed, source=folder / "heronframe"))


def found_with(query: Query, code: str, files: Mapping[str, str] | None = None) -> list[Finding]:
    """The findings of `main.py` (`code`, dedented), beside `files`, under `query`."""
    import textwrap

    texts = {"main.py": textwrap.dedent(code).lstrip("\n"), **(files or {})}
    sources = {p: read_python(t.encode(), p) for p, t in texts.items()}
    return ProjectResolver("demo", query, sources).analyse("main.py").findings
