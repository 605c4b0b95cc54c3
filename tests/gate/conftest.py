"""Gate fixtures: the demo's results (scanned once per session, tests/conftest.py) and its policies."""

from __future__ import annotations

from pathlib import Path

import pytest

from impactscope.demo.run import demo_changes_path

REPO = Path(__file__).resolve().parents[2]
POLICIES = REPO / "examples" / "policies"
DEMO = demo_changes_path().parent
PREVIOUS = DEMO / "heronframe"  # heronframe 2.4, the release before the demo's 3.0
HEAD = DEMO / "heronframe_3_0" / "heronframe"
SOURCE_ROOT = DEMO.parents[2]  # the checkout that holds src/impactscope/demo: SARIF paths start there


@pytest.fixture(scope="session")
def demo_results(scanned_demo_corpus) -> Path:
    return scanned_demo_corpus.results
