"""Properties of the resolver that hold for any program (hypothesis).

(a) Renaming an import alias everywhere changes no finding's line, change, confidence or
    pattern (Language Reference §7.11: `import m as name` binds `name`; which identifier is
    chosen has no effect on what it refers to).
(b) Blank lines and comment lines between statements change only line numbers (Language
    Reference §2.1.7 "Blank lines" and §2.1.3 "Comments": such lines are ignored by the
    parser and produce no tokens of the program).
(c) Projects are independent: analysing them in any order gives each the same findings
    (docs/architecture.md: a project is the unit of work).

Programs are built from a small grammar of statements over the test change list.
"""

from __future__ import annotations

import builtins
import keyword

from hypothesis import given, settings
from hypothesis import strategies as st

from .conftest import findings, resolver

# Each statement is one or more physical lines; "{A}" is the alias of heronframe.
STATEMENTS = [
    "{A}.stack()",
    't = {A}.read_table("p")',
    "t.stack_rows(1)",
    't.sort_by("a", inplace=True)',
    't.sort_by("a", True)',
    "{A}.read_table(p).filter_rows(f).stack_rows(o)",
    "{A}.read_table(p, sep=',')",
    "x.copy()",
    "u.append(1)",
    "obj.stack_rows()",
    "def g(t: {A}.Table):\n    return t.stack_rows()",
    "def h(t: 'Optional[{A}.Table]'):\n    return t.copy()",
    "class M({A}.Table):\n    def stack_rows(self):\n        return super().stack_rows()\n    def go(self):\n        self.sort_by('a', True)",
    "with {A}.open_store(p) as s:\n    s.flush_all()",
    "if c:\n    {A}.stack()\nelse:\n    {A} = other()",
    "for i in range(3):\n    {A}.plotting.scatter_grid(i)",
    "{A} = other()",
    "import heronframe as {A}",
    "del t",
    "t = {A}.Table()",
    "print([{A}.stack() for _ in range(2)])",
    "try:\n    import heronframe.plotting as pl\nexcept ImportError:\n    pl = None",
    "pl.scatter_grid()",
]
GRAMMAR_NAMES = {
    "t", "u", "x", "p", "f", "o", "obj", "g", "h", "M", "s", "c", "i", "pl", "other", "print",
    "range", "self", "heronframe", "Optional", "stack", "Table", "open_store", "scatter_grid",
    "plotting", "read_table", "filter_rows", "stack_rows", "sort_by", "copy", "append",
    "flush_all", "super", "go", "_", "ImportError",
}

statements = st.lists(st.sampled_from(STATEMENTS), min_size=1, max_size=12)


def render(stmts: list[str], alias: str) -> str:
    return "\n".join(["import heronframe as {A}", *stmts]).replace("{A}", alias) + "\n"


def fresh_identifier() -> st.SearchStrategy[str]:
    return st.from_regex(r"[A-Za-z_][A-Za-z0-9_]{0,10}", fullmatch=True).filter(
        lambda s: not keyword.iskeyword(s)
        and not keyword.issoftkeyword(s)
        and s not in dir(builtins)
        and s not in GRAMMAR_NAMES
    )


def signature(found, line_map=None, keep_column: bool = True) -> list[tuple]:
    out = []
    for f in found:
        line = line_map[f.line] if line_map else f.line
        out.append((line, f.column if keep_column else None, f.change, f.confidence, f.pattern))
    return sorted(out)


@settings(max_examples=100, deadline=None)
@given(statements, fresh_identifier())
def test_renaming_the_alias_changes_no_finding(stmts: list[str], alias: str) -> None:
    before = findings(render(stmts, "hf"))
    after = findings(render(stmts, alias))
    # §7.11: the alias is just the name bound; columns may move with its length.
    assert signature(after, keep_column=False) == signature(before, keep_column=False)


def test_renaming_property_sees_findings() -> None:
    # Guard against a vacuous property: the grammar does produce findings of each level.
    stmts = ["{A}.stack()", "x.copy()", "obj.stack_rows()", "t = {A}.Table()", "t.sort_by('a', True)"]
    levels = {f.confidence.label for f in findings(render(stmts, "zz"))}
    assert levels == {"resolved", "inferred", "possible"}


@st.composite
def with_filler(draw: st.DrawFn) -> tuple[str, str, dict[int, int]]:
    stmts = draw(statements)
    original = render(stmts, "hf")
    old_lines = original.splitlines()
    new_lines: list[str] = []
    line_map: dict[int, int] = {}
    for number, text in enumerate(old_lines, 1):
        # Every line of the grammar starts a statement (or a clause header), so any line
        # boundary is a statement boundary.
        for _ in range(draw(st.integers(0, 2))):
            indent = " " * draw(st.integers(0, 8))
            filler = draw(st.sampled_from(["", "   ", "# note", "#", "# hf.stack() t.stack_rows()"]))
            new_lines.append(indent + filler if filler.strip() else filler)
        new_lines.append(text)
        line_map[number] = len(new_lines)
    trailing = draw(st.integers(0, 2))
    new_lines.extend(["# end"] * trailing)
    return original, "\n".join(new_lines) + "\n", line_map


@settings(max_examples=100, deadline=None)
@given(with_filler())
def test_blank_and_comment_lines_only_move_lines(case: tuple[str, str, dict[int, int]]) -> None:
    original, padded, line_map = case
    # §2.1.7 / §2.1.3: the padded program has the same tokens; only line numbers change.
    assert signature(findings(padded)) == signature(findings(original), line_map)


PROJECTS = {
    "alpha": {"main.py": "import heronframe as hf\nhf.stack()\nx.copy()\n"},
    "beta": {"helpers.py": "import heronframe as hf\n", "main.py": "from helpers import hf\nhf.read_table(p).stack_rows()\n"},
    "gamma": {"main.py": "x.stack_rows()\nhf.stack()\n"},  # never imports the library
    "delta": {"main.py": "from heronframe import *\nTable().sort_by('a', inplace=True)\n"},
}


def _project_findings(name: str) -> list:
    r = resolver(PROJECTS[name], project=name)
    return sorted(f for path in sorted(PROJECTS[name]) for f in r.analyse(path).findings)


@settings(max_examples=30, deadline=None)
@given(st.permutations(sorted(PROJECTS)))
def test_order_of_projects_does_not_matter(order: list[str]) -> None:
    # docs/architecture.md: each project is analysed on its own; a shared compiled query must not carry
    # state from one project to the next.
    expected = {name: _project_findings(name) for name in sorted(PROJECTS)}
    got = {}
    for name in order:
        got[name] = _project_findings(name)
    assert got == expected
    assert expected["gamma"] == []
    assert all(expected[n] for n in ("alpha", "beta", "delta"))
