"""Shared fixtures: the generated heronframe corpus, generated once and scanned once per session.

The demo corpus (240 projects, seed 7) and its scan with the demo change list are the most
expensive inputs of the suite, and several modules read them (the generator's own tests, the
ground-truth and surface acceptance, sizing, the report renderers, the CLI). They are built once
here and shared READ-ONLY: a test that needs to change the corpus or the results file copies it
into its own `tmp_path` first.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from impactscope.demo import GroundTruth, generate_corpus
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


@pytest.fixture(scope="session")
def demo_corpus(tmp_path_factory: pytest.TempPathFactory) -> DemoCorpus:
    root = tmp_path_factory.mktemp("demo-corpus") / "corpus"
    return DemoCorpus(root, generate_corpus(root, projects=DEMO_PROJECTS, seed=DEMO_SEED))


@pytest.fixture(scope="session")
def scanned_demo_corpus(demo_corpus: DemoCorpus, tmp_path_factory: pytest.TempPathFactory) -> ScannedCorpus:
    """`impactscope scan` then `report --format json`, in-process through typer's CliRunner."""
    from typer.testing import CliRunner

    from impactscope.cli import app

    results = tmp_path_factory.mktemp("demo-scan") / "results.sqlite"
    runner = CliRunner()
    scanned = runner.invoke(app, ["scan", str(demo_changes_path()), str(demo_corpus.root), "--out", str(results), "--jobs", "1"])
    assert scanned.exit_code == 0, f"scan failed ({scanned.exit_code}):\n{scanned.output}\n{scanned.exception!r}"
    reported = runner.invoke(app, ["report", str(results), "--format", "json"])
    assert reported.exit_code == 0, f"report failed ({reported.exit_code}):\n{reported.output}\n{reported.exception!r}"
    return ScannedCorpus(demo_corpus.root, results, demo_corpus.truth, json.loads(reported.stdout))
