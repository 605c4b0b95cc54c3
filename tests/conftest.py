"""Shared fixtures: the generated heronframe corpus, scanned once per test session."""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from impactscope.demo import generate_corpus
from impactscope.demo.run import demo_changes_path


@dataclass(frozen=True)
class ScannedCorpus:
    root: Path
    results: Path
    truth: dict[str, Any]
    report: dict[str, Any]


@pytest.fixture(scope="session")
def scanned_demo_corpus(tmp_path_factory: pytest.TempPathFactory) -> ScannedCorpus:
    from typer.testing import CliRunner

    from impactscope.cli import app

    base = tmp_path_factory.mktemp("demo-corpus")
    root = base / "corpus"
    truth = generate_corpus(root, projects=240, seed=7).to_json()
    results = base / "results.sqlite"
    runner = CliRunner()
    scanned = runner.invoke(app, ["scan", str(demo_changes_path()), str(root), "--out", str(results), "--jobs", "1"])
    assert scanned.exit_code == 0, scanned.output
    reported = runner.invoke(app, ["report", str(results), "--format", "json"])
    assert reported.exit_code == 0, reported.output
    return ScannedCorpus(root, results, truth, json.loads(reported.stdout))
