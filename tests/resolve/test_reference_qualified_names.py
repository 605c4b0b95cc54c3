"""Alias-only code: our `resolved` findings agree with libcst's own QualifiedNameProvider.

Reference: libcst.metadata.QualifiedNameProvider (via MetadataWrapper), which names each
Name/Attribute node by the import it reaches. On code that only imports and spells attribute
chains -- no assignments, no calls in the middle of a chain, every import at the top and each
alias bound once -- qualified names are exactly what our resolver's `resolved` level claims, so
the two must agree site for site (compared on (line, change id): our findings report the
position of an attribute's `attr` Name, libcst the start of the whole node; every generated
statement is on one line).

Import statements themselves get no qualified name from libcst, so import lines are left out of
the comparison. Parameter changes match only some calls (docs/change-list.md), which the reference knows
nothing about, so they are left out too.
"""

from __future__ import annotations

import keyword
from dataclasses import dataclass

import libcst as cst
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from libcst.metadata import MetadataWrapper, PositionProvider, QualifiedNameProvider

from .conftest import findings, query

# (statement template, bound name template, what the name is bound to)
IMPORTS = [
    ("import heronframe as {a}", "{a}", "heronframe"),
    ("from heronframe import stack as {a}", "{a}", "heronframe.stack"),
    ("from heronframe import Table as {a}", "{a}", "heronframe.Table"),
    ("from heronframe import Store", "Store", "heronframe.Store"),
    ("from heronframe.plotting import scatter_grid", "scatter_grid", "heronframe.plotting.scatter_grid"),
    ("import heronframe.plotting", "heronframe", "heronframe"),
    ("import heronframe", "heronframe", "heronframe"),
    ("from heronframe import plotting as {a}", "{a}", "heronframe.plotting"),
    ("import heronframe.plotting as {a}", "{a}", "heronframe.plotting"),
    ("import os.path as {a}", "{a}", "os.path"),  # another package: never a finding
]
ALIASES = ["hf", "H", "frame", "tbl_mod", "Tb", "st_fn", "pl", "viz", "hx", "q0"]
ATTRS = [
    "stack", "Table", "stack_rows", "copy", "append", "plotting", "scatter_grid", "Store",
    "flush_all", "__doc__", "_legacy_merge", "read_table", "join", "sort_by",
]
UNBOUND = ["plotting", "obj", "frame_x", "Table_"]  # never bound: at most a guess


@dataclass(frozen=True)
class Program:
    code: str
    import_lines: frozenset[int]


@st.composite
def programs(draw: st.DrawFn) -> Program:
    chosen = draw(st.lists(st.sampled_from(range(len(IMPORTS))), min_size=1, max_size=5, unique=True))
    aliases = iter(draw(st.permutations(ALIASES)))
    lines: list[str] = []
    bound: list[str] = []
    targets: dict[str, str] = {}
    for index in chosen:
        template, name_t, target = IMPORTS[index]
        alias = next(aliases)
        lines.append(template.format(a=alias))
        bound.append(name_t.format(a=alias))
        targets[name_t.format(a=alias)] = target
    import_lines = frozenset(range(1, len(lines) + 1))
    n_uses = draw(st.integers(1, 8))
    for i in range(n_uses):
        base = draw(st.sampled_from(bound + UNBOUND))
        toward = _suffixes(targets.get(base, ""))
        if toward and draw(st.booleans()):
            # Mostly spell a path that reaches a changed member, maybe with more after it.
            chain = [p for p in draw(st.sampled_from(toward)).split(".") if p]
            chain += draw(st.lists(st.sampled_from(ATTRS), max_size=1))
        else:
            chain = draw(st.lists(st.sampled_from(ATTRS), max_size=3))
        expr = ".".join([base, *chain])
        if draw(st.booleans()):
            expr += draw(st.sampled_from(["()", "(1)", "(x=2)"]))
        wrap = draw(st.sampled_from(["plain", "print", "def", "class", "comp", "if"]))
        if wrap == "plain":
            lines.append(expr)
        elif wrap == "print":
            lines.append(f"print({expr})")
        elif wrap == "def":
            lines.append(f"def fn_{i}():")
            lines.append(f"    return {expr}")
        elif wrap == "class":
            lines.append(f"class K_{i}:")
            lines.append(f"    attr_{i} = {expr}")
        elif wrap == "comp":
            lines.append(f"print([{expr} for _ in range(2)])")
        else:
            lines.append("if cond:")
            lines.append(f"    {expr}")
    return Program("\n".join(lines) + "\n", import_lines)


def _suffixes(target: str) -> list[str]:
    """Attribute paths from `target` to each changed member below it."""
    if not target:
        return []
    out = []
    for change in query().changes.changes:
        if change.member == target:
            out.append("")
        elif change.member.startswith(target + "."):
            out.append(change.member[len(target) + 1 :])
    return sorted(out)


class _Collect(cst.CSTVisitor):
    METADATA_DEPENDENCIES = (QualifiedNameProvider, PositionProvider)

    def __init__(self, members: dict[str, str]) -> None:
        self.members = members
        self.sites: set[tuple[int, str]] = set()

    def on_visit(self, node: cst.CSTNode) -> bool:
        if isinstance(node, (cst.Name, cst.Attribute)):
            for qualified in self.get_metadata(QualifiedNameProvider, node, set()):
                for member, change_id in self.members.items():
                    if qualified.name == member or qualified.name.startswith(member + "."):
                        line = self.get_metadata(PositionProvider, node).start.line
                        self.sites.add((line, change_id))
        return True


def _comparable_changes() -> dict[str, str]:
    return {c.member: c.id for c in query().changes.changes if not c.kind.about_parameter}


def reference_sites(code: str) -> set[tuple[int, str]]:
    visitor = _Collect(_comparable_changes())
    MetadataWrapper(cst.parse_module(code)).visit(visitor)
    return visitor.sites


def our_sites(program: Program) -> set[tuple[int, str]]:
    ids = set(_comparable_changes().values())
    return {
        (f.line, f.change)
        for f in findings(program.code)
        if f.confidence.label == "resolved" and f.change in ids and f.line not in program.import_lines
    }


def test_aliases_are_distinct_identifiers() -> None:
    assert all(a.isidentifier() and not keyword.iskeyword(a) for a in ALIASES + UNBOUND)
    assert not set(ALIASES) & set(ATTRS + UNBOUND + ["Store", "scatter_grid", "heronframe"])


def test_reference_on_a_fixed_program() -> None:
    code = (
        "import heronframe as hf\n"
        "from heronframe import stack as st_fn\n"
        "from heronframe.plotting import scatter_grid\n"
        "hf.Table.stack_rows\n"
        "st_fn()\n"
        "scatter_grid(1)\n"
        "plotting.scatter_grid()\n"
        "def f():\n"
        "    return hf.Table.copy.__doc__\n"
    )
    program = Program(code, frozenset({1, 2, 3}))
    # libcst's QualifiedNameProvider is the reference; the expected set is spelled out so the
    # test also pins the reference's own reading.
    expected = {(4, "HF-1"), (5, "HF-2"), (6, "HF-3"), (9, "HF-6")}
    assert reference_sites(code) == expected
    assert our_sites(program) == expected


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(programs())
def test_resolved_findings_equal_qualified_name_references(program: Program) -> None:
    # Reference: libcst.metadata.QualifiedNameProvider on the same module.
    assert our_sites(program) == reference_sites(program.code), program.code


# ---------------------------------------------------------------------------- jedi, second reference
# jedi's inference (jedi.Script.goto with follow_imports) on a real, importable package: a stub
# heronframe written to disk whose annotations say what the test change list's [types] says.
# This reaches past aliases into type flow (return annotations, chained calls, self).
JEDI_LIBRARY = {
    "heronframe/__init__.py": (
        "from . import plotting\n"
        "def stack(*tables): ...\n"
        "def _legacy_merge(a, b): ...\n"
        "class Table:\n"
        "    def stack_rows(self, other=None): ...\n"
        "    def filter_rows(self, f) -> 'Table': ...\n"
        "    def sort_by(self, by, inplace=False): ...\n"
        "    def copy(self): ...\n"
        "    def append(self, row): ...\n"
        "    def rename_cols(self, mapping): ...\n"
        "class Store:\n"
        "    def __enter__(self) -> 'Store': ...\n"
        "    def __exit__(self, *exc): ...\n"
        "    def flush_all(self): ...\n"
        "def read_table(path, sep=',') -> Table: ...\n"
        "def open_store(path) -> Store: ...\n"
    ),
    "heronframe/plotting.py": "def scatter_grid(table): ...\n",
}

JEDI_PROGRAMS = [
    "import heronframe as hf\nt = hf.read_table('p')\nt.stack_rows(1)\nt.copy()\n",
    "import heronframe as hf\nhf.read_table(p).filter_rows(f).stack_rows(o)\n",
    "from heronframe import stack as combine, Table\ncombine()\nTable().append(1)\n",
    "import heronframe.plotting as pl\nimport heronframe\npl.scatter_grid(1)\nheronframe.plotting.scatter_grid(2)\n",
    "import heronframe as hf\nwith hf.open_store(p) as s:\n    s.flush_all()\n",
    "import heronframe as hf\nclass Mine(hf.Table):\n    def go(self):\n        self.stack_rows()\n        return self.copy()\n",
    "import heronframe as hf\ndef load(p) -> hf.Table:\n    return unknown(p)\nload('x').stack_rows()\nu = load('y')\nu.append(2)\n",
]


def _jedi_member(script, line: int, column: int) -> set[str]:
    return {n.full_name for n in script.goto(line, column, follow_imports=True) if n.full_name}


def test_resolved_findings_agree_with_jedi(tmp_path) -> None:
    jedi = pytest.importorskip("jedi")
    lib = tmp_path / "lib"
    for rel, text in JEDI_LIBRARY.items():
        (lib / rel).parent.mkdir(parents=True, exist_ok=True)
        (lib / rel).write_text(text, encoding="utf-8")
    project = jedi.Project(str(tmp_path), added_sys_path=[str(lib)], smart_sys_path=False)
    members = {c.id: c.member for c in query().changes.changes}
    leaves = {c.member.rsplit(".", 1)[1]: c.member for c in query().changes.changes}
    checked = 0
    for code in JEDI_PROGRAMS:
        script = jedi.Script(code, path=str(tmp_path / "main.py"), project=project)
        ours = {(f.line, f.column): f for f in findings(code) if f.confidence.label == "resolved"}
        # Every resolved finding is, by jedi's reading, the changed member.
        for (line, column), f in ours.items():
            if code.splitlines()[line - 1].lstrip().startswith(("import ", "from ")):
                continue
            assert members[f.change] in _jedi_member(script, line, column), (code, line, column)
            checked += 1
        # Every spelling of a changed member's name that jedi resolves to the member is a
        # resolved finding of ours (parameter changes match only some calls: left out).
        for line_no, text in enumerate(code.splitlines(), 1):
            if text.lstrip().startswith(("import ", "from ")):
                continue
            for leaf, member in leaves.items():
                start = 0
                while (col := text.find(leaf, start)) >= 0:
                    start = col + 1
                    before = text[col - 1] if col else " "
                    after = text[col + len(leaf)] if col + len(leaf) < len(text) else " "
                    if before.isidentifier() or before.isdigit() or after.isidentifier() or after.isdigit():
                        continue
                    change = next(c for c in query().changes.changes if c.member == member)
                    if change.kind.about_parameter:
                        continue
                    if member in _jedi_member(script, line_no, col):
                        assert (line_no, col) in ours, (code, line_no, col, member)
                        checked += 1
    assert checked >= 15
