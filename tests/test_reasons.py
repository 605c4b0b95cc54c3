"""Reason: one member per cause, named by every stage that decides, kept through the results file."""

from __future__ import annotations

import ast
import re
import sqlite3
from pathlib import Path

import impactscope
from impactscope.changes import parse_change_list
from impactscope.outcomes import SCAN_FAILURES, FileOutcome, FileStatus, ProjectResult
from impactscope.reasons import Reason, reason_of
from impactscope.report.aggregate import build_report
from impactscope.store import ResultStore

PACKAGE = Path(impactscope.__file__).parent
DOCS = Path(__file__).parents[1] / "docs"

CHANGES = '[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n'

# Names that held a reason's text before Reason existed; no module defines them any more.
OLD_CONSTANTS = frozenset({
    "ANALYSIS_ERROR", "WORKER_DIED", "OVER_BUDGET", "NO_CANDIDATE", "TOO_DEEP", "TOO_LARGE",
    "SPECIAL_FILE", "BROKEN_LINK", "LINK_OUTSIDE_CORPUS", "LINK_OUTSIDE_PROJECT",
})
# A text that happens to spell a reason and is not one: the surface listing's word for a module
# of the library that could not be read.
NOT_REASONS = {("surface/model.py", "unreadable: ")}


def test_every_value_is_unique() -> None:
    # An Enum makes a repeated value an alias of the first member without a word: two causes
    # would then be counted as one.
    assert len(Reason.__members__) == len({member.value for member in Reason}) == len(list(Reason))


def test_the_text_is_the_value() -> None:
    # The results file, the JSON report and every printed text hold the value.
    assert str(Reason.PYTHON_2) == f"{Reason.PYTHON_2}" == "python 2"
    assert f"{Reason.CORRUPT_ARCHIVE}: bad header" == "corrupt archive: bad header"


def test_every_member_says_when_it_applies() -> None:
    lines = (PACKAGE / "reasons.py").read_text(encoding="utf-8").splitlines()
    members = [line for line in lines if re.match(r"    [A-Z0-9_]+ = \"", line)]
    assert len(members) == len(Reason)
    assert [line for line in members if "  # " not in line] == []


def test_a_stored_text_comes_back_as_the_member() -> None:
    assert FileOutcome("a.py", "skipped", "no candidate").reason is Reason.NO_CANDIDATE
    assert FileOutcome("a.py", "parsed").reason is None


def _store(out: Path) -> ResultStore:
    return ResultStore.create(out, parse_change_list(CHANGES.encode(), Path("changes.toml")), CHANGES, settings="s")


def test_round_trip_through_the_results_store(tmp_path: Path) -> None:
    out = tmp_path / "r.sqlite"
    store = _store(out)
    files = [FileOutcome(f"f{i:02}.py", "unparsed", reason, "detail") for i, reason in enumerate(Reason)]
    store.add_project(ProjectResult("p", "/corpus/p", files=files), "k")
    store.close()
    reader = ResultStore.open(out)
    read = [outcome for _, outcome in reader.files()]
    assert [outcome.reason for outcome in read] == list(Reason)
    assert all(type(outcome.reason) is Reason for outcome in read)
    assert reader.fault_counts() == {reason: 1 for reason in SCAN_FAILURES}


def test_an_unknown_stored_text_loads_as_it_is(tmp_path: Path) -> None:
    # A results file written by another version may hold a reason this one does not have.
    out = tmp_path / "r.sqlite"
    store = _store(out)
    store.add_project(ProjectResult("p", "/corpus/p", files=[FileOutcome("a.py", "skipped", Reason.CACHE)]), "k")
    store.close()
    with sqlite3.connect(out) as db:
        db.execute("INSERT INTO files VALUES ('p', 'b.py', 'skipped', 'retired reason', '', NULL, NULL)")
    reader = ResultStore.open(out)
    outcomes = {outcome.path: outcome for _, outcome in reader.files()}
    assert outcomes["b.py"].reason == "retired reason" and not isinstance(outcomes["b.py"].reason, Reason)
    reasons = {(r.status, r.reason): r.files for r in build_report(reader).file_reasons}
    assert reasons == {(FileStatus.SKIPPED, Reason.CACHE): 1, (FileStatus.SKIPPED, "retired reason"): 1}
    assert reason_of("retired reason") == "retired reason"


def _docstrings(tree: ast.AST) -> set[int]:
    kinds = (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)
    return {
        id(node.body[0].value)
        for node in ast.walk(tree)
        if isinstance(node, kinds) and node.body and isinstance(node.body[0], ast.Expr)
        and isinstance(node.body[0].value, ast.Constant)
    }


def _spelled(source: str, where: str) -> list[tuple[str, int, str]]:
    """Strings of `source` (docstrings aside) that are a reason's text, or a reason's text then
    ": " (an entry's error is built by corpus.entries.failure), and names of old constants that
    it defines."""
    texts = {member.value for member in Reason}
    tree = ast.parse(source)
    docstrings = _docstrings(tree)
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in docstrings:
            if (node.value in texts or node.value.partition(": ")[0] in texts) and (where, node.value) not in NOT_REASONS:
                out.append((where, node.lineno, node.value))
        elif isinstance(node, (ast.Assign, ast.AnnAssign)):
            targets = node.targets if isinstance(node, ast.Assign) else [node.target]
            out += [(where, node.lineno, t.id) for t in targets if isinstance(t, ast.Name) and t.id in OLD_CONSTANTS]
    return out


def test_no_reason_is_spelled_outside_its_module() -> None:
    # Every producer names a member of Reason.
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        where = path.relative_to(PACKAGE).as_posix()
        if where != "reasons.py":
            found += _spelled(path.read_text(encoding="utf-8"), where)
    assert found == []


def test_the_check_above_finds_a_reason_written_the_old_way() -> None:
    source = 'NO_CANDIDATE = "x"\nFileOutcome(path, "skipped", "no candidate")\nerror = f"corrupt archive: {exc}"\n'
    assert _spelled(source, "scan/project.py") == [
        ("scan/project.py", 1, "NO_CANDIDATE"), ("scan/project.py", 2, "no candidate"), ("scan/project.py", 3, "corrupt archive: ")
    ]
    assert _spelled('"""no candidate"""\nx = "surface text"\n', "m.py") == []


def test_the_documented_reasons_are_the_members() -> None:
    # docs/corpus.md lists the skip and unparsed reasons in two tables, one row per reason
    # (one row names the four archive limits together).
    text = (DOCS / "corpus.md").read_text(encoding="utf-8")
    tables = text[text.index("### Skip reasons"): text.index("## Notebooks")]
    documented = {name for row in re.findall(r"^\| (`[^|]+`) \|", tables, re.M) for name in re.findall(r"`([^`]+)`", row)}
    assert documented == {member.value for member in Reason}
