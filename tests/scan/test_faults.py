"""Fault isolation: a failure on one file costs that file; a dead worker costs the project it held.

Faults are injected (a resolver function that raises for one path, a worker that kills itself
on one path) except where a real input does it: code nested deeper than CPython's parser allows,
on which libcst's native parser dies with SIGSEGV (measured: about 1,280 nested brackets).
"""

from __future__ import annotations

import json
import multiprocessing
import os
import signal
from pathlib import Path

import libcst as cst
import pytest
from typer.testing import CliRunner

from impactscope.cli import app
from impactscope.reasons import Reason
from impactscope.resolve import evaluate, positions
from impactscope.resolve import project as project_resolver
from impactscope.scan.run import run_scan

from .helpers import _notebook, build_corpus, snapshot, write_changes

forked = pytest.mark.skipif(
    multiprocessing.get_start_method() != "fork",
    reason="faults are injected by patching this process before the pool forks its workers",
)

CRASHING = "proj000/pkg0/crash.py"  # a script nothing imports: its absence changes no other finding
KILLING = "killer.py"  # a loose file, so a project of its own
CRASH_TEXT = "import heronframe as hf\nt = hf.read_table('a')\nt.stack_rows(t)\n"


def _corpus(tmp_path: Path) -> tuple[Path, Path]:
    root = build_corpus(tmp_path / "corpus", projects=8)
    return write_changes(tmp_path), root


def _add_faulty_files(root: Path) -> None:
    (root / CRASHING).write_text(CRASH_TEXT, encoding="utf-8")
    (root / KILLING).write_text(CRASH_TEXT, encoding="utf-8")


def _inject(monkeypatch: pytest.MonkeyPatch, attempts: Path, *, kill_times: int = 99) -> None:
    """The resolver raises on CRASHING and kills its process on KILLING (at most `kill_times`
    times, counted in the file `attempts`, which every attempt appends to)."""
    real_run, real_stmt = evaluate.ModuleEvaluator.run, evaluate.ModuleEvaluator.stmt

    def run(self, cells):  # type: ignore[no-untyped-def]
        if self.path == KILLING:
            with open(attempts, "a", encoding="utf-8") as log:
                log.write(f"{os.getpid()}\n")
            if len(attempts.read_text(encoding="utf-8").split()) <= kill_times:
                os.kill(os.getpid(), signal.SIGKILL)
        return real_run(self, cells)

    def stmt(self, node, scope):  # type: ignore[no-untyped-def]
        # The crashing file's third statement (line 3, `t.stack_rows(t)`) fails.
        if self.path.endswith("crash.py") and node is self.at.top and "stack_rows" in cst.Module([]).code_for_node(node):
            raise RuntimeError("injected resolver fault")
        return real_stmt(self, node, scope)

    monkeypatch.setattr(evaluate.ModuleEvaluator, "run", run)
    monkeypatch.setattr(evaluate.ModuleEvaluator, "stmt", stmt)


def _by_file(out: Path) -> dict[tuple[str, str], tuple[str, str | None, str]]:
    return {(p, f.path): (f.status, f.reason, f.detail) for p, f in snapshot(out)["files"]}  # type: ignore[union-attr]


def _others(out: Path) -> list:
    return [f for f in snapshot(out)["findings"] if (f.project, f.file) not in {("proj000", "pkg0/crash.py"), (KILLING, KILLING)}]  # type: ignore[union-attr]


def test_resolver_crash_costs_only_that_file(tmp_path, monkeypatch):
    changes, root = _corpus(tmp_path)
    clean = run_scan(changes, [root], tmp_path / "clean.sqlite", jobs=1)
    (root / CRASHING).write_text(CRASH_TEXT, encoding="utf-8")
    _inject(monkeypatch, tmp_path / "attempts")
    out = tmp_path / "r.sqlite"
    summary = run_scan(changes, [root], out, jobs=1)
    assert summary.projects == clean.projects and summary.faults == {Reason.ANALYSIS_ERROR: 1}
    status, reason, detail = _by_file(out)[("proj000", "pkg0/crash.py")]
    assert (status, reason) == ("unparsed", Reason.ANALYSIS_ERROR)
    # One line: the exception, where in the analysed file, where in impactscope.
    assert "\n" not in detail
    assert detail.startswith("resolver: RuntimeError: injected resolver fault (statement at line 3; raised at ")
    assert "resolve/evaluate.py:" in detail  # the innermost frame of impactscope's own code
    # The rest of the project, and of the corpus, keeps every finding.
    assert _others(out) == snapshot(tmp_path / "clean.sqlite")["findings"]


def test_crash_in_an_imported_module_costs_only_that_module(tmp_path, monkeypatch):
    """Project files are analysed together: the importer goes on without the broken module's names."""
    root = tmp_path / "corpus" / "app"
    root.mkdir(parents=True)
    (root / "crash.py").write_text("import heronframe as hf\nfrom heronframe import stack\nhf.stack_rows(1)\n", encoding="utf-8")
    (root / "main.py").write_text(
        "import heronframe as hf\nimport crash\nhf.stack([])\nt = hf.read_table('a')\nt.stack_rows(t)\n", encoding="utf-8"
    )
    changes = write_changes(tmp_path)
    _inject(monkeypatch, tmp_path / "attempts")
    out = tmp_path / "r.sqlite"
    run_scan(changes, [root.parent], out, jobs=1)
    files = _by_file(out)
    assert files[("app", "crash.py")][:2] == ("unparsed", Reason.ANALYSIS_ERROR)
    assert files[("app", "crash.py")][2].endswith("; read at token level")
    assert files[("app", "main.py")][:2] == ("parsed", None)
    found = snapshot(out)["findings"]
    assert {(f.file, f.line, f.change) for f in found if f.file == "main.py"} == {("main.py", 3, "HF-2"), ("main.py", 5, "HF-1")}
    # The broken module's own uses still count, as a token-level reading finds them: at possible.
    assert {(f.line, f.change, f.confidence.label, f.token_level) for f in found if f.file == "crash.py"} == {
        (2, "HF-2", "possible", True), (3, "HF-1", "possible", True)}


def test_positions_crash_costs_only_that_file(tmp_path, monkeypatch):
    changes, root = _corpus(tmp_path)
    run_scan(changes, [root], tmp_path / "clean.sqlite", jobs=1)
    (root / CRASHING).write_text(CRASH_TEXT, encoding="utf-8")

    class Failing(positions.Positions):
        """Positions do not know the path: the crashing file is told by its text."""

        def __init__(self, cells):  # type: ignore[no-untyped-def]
            super().__init__(cells)
            self.marked = any("read_table('a')" in code for _, _, code, _ in cells.values())

        def locate(self, wanted):  # type: ignore[no-untyped-def]
            if self.marked:
                raise IndexError("injected positions fault")
            return super().locate(wanted)

    monkeypatch.setattr(project_resolver, "Positions", Failing)
    out = tmp_path / "r.sqlite"
    run_scan(changes, [root], out, jobs=1)
    status, reason, detail = _by_file(out)[("proj000", "pkg0/crash.py")]
    assert (status, reason) == ("unparsed", Reason.ANALYSIS_ERROR) and "matching: IndexError" in detail
    assert _others(out) == snapshot(tmp_path / "clean.sqlite")["findings"]


@forked
def test_crashing_and_worker_killing_files_in_a_pooled_scan(tmp_path, monkeypatch):
    """The acceptance check: the scan completes, every other finding is what a scan without the
    two files finds, both files are reported with their reason, and the killed project was tried
    exactly twice (once in its batch, once alone)."""
    changes, root = _corpus(tmp_path)
    clean = run_scan(changes, [root], tmp_path / "clean.sqlite", jobs=2)
    _add_faulty_files(root)
    attempts = tmp_path / "attempts"
    _inject(monkeypatch, attempts)
    out = tmp_path / "r.sqlite"
    summary = run_scan(changes, [root], out, jobs=2)
    assert summary.projects == clean.projects + 1
    assert summary.faults == {Reason.ANALYSIS_ERROR: 1, Reason.WORKER_DIED: 1}
    assert len(attempts.read_text().split()) == 2
    assert len(set(attempts.read_text().split())) == 2  # two different worker processes
    files = _by_file(out)
    assert files[("proj000", "pkg0/crash.py")][:2] == ("unparsed", Reason.ANALYSIS_ERROR)
    status, reason, detail = files[(KILLING, KILLING)]
    assert (status, reason) == ("unparsed", Reason.WORKER_DIED) and "killed by SIGKILL" in detail and "twice" in detail
    assert _others(out) == snapshot(tmp_path / "clean.sqlite")["findings"]
    # A failed project is not reused: the next scan tries it again (the fault may have been passing).
    monkeypatch.undo()
    again = run_scan(changes, [root], out, jobs=2)
    assert again.reused == again.projects - 1
    # Nothing is injected now: the killed project scans cleanly; the crashed file's project is
    # reused as it was (the same tool on the same file fails the same way).
    assert again.faults == {Reason.ANALYSIS_ERROR: 1}

    # Every report format says how many files failed, and which.
    _inject(monkeypatch, attempts)
    run_scan(changes, [root], out, jobs=2, fresh=True)
    runner = CliRunner()
    document = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    assert document["totals"]["files_analysis_error"] == 1 and document["totals"]["files_worker_died"] == 1
    assert {(f["project"], f["file"], f["reason"]) for f in document["failed_files"]} == {
        ("proj000", "pkg0/crash.py", Reason.ANALYSIS_ERROR), (KILLING, KILLING, Reason.WORKER_DIED)
    }
    for form in ("table", "markdown"):
        text = " ".join(runner.invoke(app, ["report", str(out), "--format", form]).stdout.split())
        assert "1 with an analysis error, 1 in projects whose worker died" in text, form
        assert "pkg0/crash.py" in text and "injected" in text, form


@forked
def test_a_worker_that_dies_once_costs_nothing(tmp_path, monkeypatch):
    changes, root = _corpus(tmp_path)
    _add_faulty_files(root)
    (root / CRASHING).unlink()
    attempts = tmp_path / "attempts"
    _inject(monkeypatch, attempts, kill_times=1)
    out = tmp_path / "r.sqlite"
    summary = run_scan(changes, [root], out, jobs=2)
    assert summary.faults == {}
    assert len(attempts.read_text().split()) == 2
    assert {(f.line, f.change) for f in snapshot(out)["findings"] if f.project == KILLING} == {(3, "HF-1")}


def test_the_summary_line_counts_analysis_errors(tmp_path, monkeypatch):
    changes, root = _corpus(tmp_path)
    (root / CRASHING).write_text(CRASH_TEXT, encoding="utf-8")
    _inject(monkeypatch, tmp_path / "attempts")
    result = CliRunner().invoke(app, ["scan", str(changes), str(root), "--out", str(tmp_path / "r.sqlite"), "--jobs", "1"])
    assert result.exit_code == 0, result.output
    assert "1 file with an analysis error" in result.stderr


# ------------------------------------------------------------------ real crashes of libcst


def _nested(depth: int) -> str:
    return "(" * depth + "1" + ")" * depth


def test_code_nested_past_cpythons_limit_never_reaches_libcst(tmp_path):
    """Python's tokenizer refuses more than 200 nested brackets ("too many nested parentheses";
    the Python Language Reference leaves the limit to the implementation, CPython's is 200);
    libcst's native parser dies with SIGSEGV at about 1,280 (measured). Run in the pool, so that
    if the guard ever let one through, the test fails with "worker died" instead of crashing."""
    root = tmp_path / "corpus"
    (root / "deep").mkdir(parents=True)
    (root / "deep" / "deep.py").write_text(f"import heronframe as hf\nhf.stack({_nested(3000)})\n", encoding="utf-8")
    (root / "deep" / "fine.py").write_text("import heronframe as hf\nhf.stack([])\n", encoding="utf-8")
    # An attribute chain nests one level per link: libcst died at 8,000 links here, CPython did not.
    (root / "deep" / "chain.py").write_text("import heronframe as hf\nhf" + ".a" * 100_000 + ".stack()\n", encoding="utf-8")
    (root / "deep" / "cells.ipynb").write_text(
        _notebook("import heronframe as hf", f"x = {_nested(3000)}", "hf.stack([])"), encoding="utf-8"
    )
    out = tmp_path / "r.sqlite"
    summary = run_scan(write_changes(tmp_path), [root], out, jobs=2)
    assert summary.faults == {}
    files = _by_file(out)
    assert files[("deep", "deep.py")][:2] == ("unparsed", "too deeply nested")
    assert files[("deep", "chain.py")][:2] == ("unparsed", "too deeply nested")
    assert files[("deep", "cells.ipynb")][0] == "parsed" and "1 cell(s) skipped" in files[("deep", "cells.ipynb")][2]
    found = {(f.file, f.cell, f.line, f.confidence.label) for f in snapshot(out)["findings"]}
    # A file too deep to parse is read at token level, as Python 2 files are: its use stays, at possible.
    assert found == {("fine.py", None, 2, "resolved"), ("cells.ipynb", 2, 1, "resolved"),
                     ("deep.py", None, 2, "possible"), ("chain.py", None, 2, "possible")}
