"""The demo's report model, built once from the session's scan of the demo corpus (tests/conftest.py)."""

from __future__ import annotations

import pytest

from impactscope.report.aggregate import build_report
from impactscope.report.model import Report
from impactscope.store import ResultStore


def model_of(results) -> Report:  # type: ignore[no-untyped-def]
    """`build_report` on a results file, closing the store after."""
    store = ResultStore.open(results)
    try:
        return build_report(store)
    finally:
        store.close()


@pytest.fixture(scope="session")
def demo_model(scanned_demo_corpus) -> Report:
    return model_of(scanned_demo_corpus.results)
