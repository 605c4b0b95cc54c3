"""Shared fixtures: the generated heronframe corpus, generated once and scanned once per session.

The demo corpus (240 projects, seed 7) and its scan with the demo change list are the most
expensive inputs of the suite, and several modules read them (the generator's own tests, the
ground-truth and surface acceptance, sizing, the report renderers, the CLI). They are built once
here and shared READ-ONLY: a test that needs to change the corpus or the results file copies it
into its own `tmp_path` first.

The suite runs on every core (pytest-xdist, `-n auto` in pyproject.toml): the corpus and its
scan are then made by the first worker that needs them and read by the others (`_made_once`),
and the slow tests are started first (`pytest_collection_modifyitems`), so that no core is left
alone with them at the end.
"""

from __future__ import annotations

import fcntl
import json
import os
import shutil
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterator

import pytest

from impactscope.demo import GroundTruth, generate_corpus, load_truth, truth_path
from impactscope.demo.run import demo_changes_path

DEMO_SEED = 7
DEMO_PROJECTS = 240


@dataclass(frozen=True)
class DemoCorpus:
    """The generated corpus root (never written after generation) and the generator's truth."""

    root: Path
    truth: GroundTruth

    def __repr__(self) -> str:
        return f"DemoCorpus(root={str(self.root)!r}, {len(self.truth.projects)} projects)"


@dataclass(frozen=True)
class ScannedCorpus:
    """`DemoCorpus` scanned with the demo change list: the results file and its JSON report."""

    root: Path
    results: Path
    truth: GroundTruth
    report: dict[str, Any]

    def __repr__(self) -> str:  # a failing test shows its arguments: not the whole report
        return f"ScannedCorpus(results={str(self.results)!r}, {len(self.report['findings'])} findings)"


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    """The tests marked slow first (the sort is stable), so that under xdist none of them is left
    to one worker at the end while the other has nothing to do: the short tests fill in last."""
    items.sort(key=lambda item: item.get_closest_marker("slow") is None)


@dataclass(frozen=True)
class RunFolder:
    """A folder of this run that every xdist worker sees (each worker's own temporary folders are
    below it); without xdist, the run's base temporary folder."""

    path: Path

    @contextmanager
    def locked(self, name: str) -> Iterator[Path]:
        """`path / name`, this worker's alone until the block ends: the others wait for it."""
        with open(self.path / f"{name}.lock", "w") as lock:
            fcntl.flock(lock, fcntl.LOCK_EX)  # released when the file closes, or the worker dies
            yield self.path / name


@pytest.fixture(scope="session")
def run_folder(tmp_path_factory: pytest.TempPathFactory) -> RunFolder:
    base = tmp_path_factory.getbasetemp()
    return RunFolder(base.parent if "PYTEST_XDIST_WORKER" in os.environ else base)


def _made_once(run: RunFolder, name: str, make: Callable[[Path], None]) -> Path:
    """A folder that `make` fills once per run: the first worker to get here fills it, the others
    wait, then read it (the pattern pytest-xdist's documentation shows for session fixtures). A
    failed `make` leaves no mark, so the next worker starts it afresh (and fails its tests too)."""
    with run.locked(name) as folder:
        if not (folder / ".made").exists():
            shutil.rmtree(folder, ignore_errors=True)
            folder.mkdir()
            make(folder)
            (folder / ".made").touch()
    return folder


@pytest.fixture(scope="session")
def made_once(run_folder: RunFolder) -> Callable[[str, Callable[[Path], None]], Path]:
    """`made_once(name, make)`: a folder of this run that `make` fills once for every worker."""
    return lambda name, make: _made_once(run_folder, name, make)


@pytest.fixture(scope="session")
def demo_corpus(run_folder: RunFolder) -> DemoCorpus:
    def generate(folder: Path) -> None:
        generate_corpus(folder / "corpus", projects=DEMO_PROJECTS, seed=DEMO_SEED)

    root = _made_once(run_folder, "demo-corpus", generate) / "corpus"
    return DemoCorpus(root, load_truth(truth_path(root)))  # equal to what generate_corpus returned


@pytest.fixture(scope="session")
def scanned_demo_corpus(demo_corpus: DemoCorpus, run_folder: RunFolder) -> ScannedCorpus:
    """`impactscope scan` then `report --format json`, in-process through typer's CliRunner."""
    from typer.testing import CliRunner

    from impactscope.cli import app

    def scan(folder: Path) -> None:
        runner = CliRunner()
        args = ["scan", str(demo_changes_path()), str(demo_corpus.root), "--out", str(folder / "results.sqlite"), "--jobs", "1"]
        scanned = runner.invoke(app, args)
        assert scanned.exit_code == 0, f"scan failed ({scanned.exit_code}):\n{scanned.output}\n{scanned.exception!r}"
        reported = runner.invoke(app, ["report", str(folder / "results.sqlite"), "--format", "json"])
        assert reported.exit_code == 0, f"report failed ({reported.exit_code}):\n{reported.output}\n{reported.exception!r}"
        (folder / "report.json").write_text(reported.stdout, encoding="utf-8")

    folder = _made_once(run_folder, "demo-scan", scan)
    report = json.loads((folder / "report.json").read_text(encoding="utf-8"))
    return ScannedCorpus(demo_corpus.root, folder / "results.sqlite", demo_corpus.truth, report)
