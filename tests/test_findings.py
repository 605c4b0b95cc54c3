"""Finding and Confidence: the record every consumer reads."""

from __future__ import annotations

import pytest

from impactscope.findings import Confidence, Finding, Reading, parse_pattern_label, pattern_label


def test_the_levels_strongest_first_and_at_least_by_comparison() -> None:
    assert Confidence.strongest_first() == (Confidence.RESOLVED, Confidence.INFERRED, Confidence.POSSIBLE)
    assert set(Confidence.strongest_first()) == set(Confidence)
    assert [c.label for c in Confidence.strongest_first()] == ["resolved", "inferred", "possible"]
    assert Confidence.RESOLVED >= Confidence.INFERRED >= Confidence.POSSIBLE
    assert Confidence.parse("Inferred") is Confidence.INFERRED
    with pytest.raises(ValueError, match="unknown confidence 'sure'"):
        Confidence.parse("sure")


def test_a_token_level_finding_keeps_its_shape_and_says_how_it_was_read() -> None:
    token = Finding("p", "old.py", None, 2, 4, "HF-2", Confidence.POSSIBLE, "?.stack", Reading.TOKEN_LEVEL)
    tree = Finding("p", "a.py", 0, 1, 0, "HF-2", Confidence.RESOLVED, "heronframe.stack()")
    assert token.token_level and not tree.token_level and tree.reading is Reading.SYNTAX_TREE
    assert token.label == "legacy: ?.stack" and tree.label == "heronframe.stack()"
    assert token.to_json()["pattern"] == "legacy: ?.stack"


def test_json_round_trip() -> None:
    for finding in (
        Finding("p", "old.py", None, 2, 4, "HF-2", Confidence.POSSIBLE, "?.stack", Reading.TOKEN_LEVEL),
        Finding("p", "nb.ipynb", 3, 1, 0, "HF-1", Confidence.INFERRED, "?.stack_rows(_)"),
    ):
        data = finding.to_json()
        assert list(data) == ["project", "file", "cell", "line", "column", "change", "confidence", "pattern"]
        assert Finding.from_json(data) == finding
    assert parse_pattern_label(pattern_label("x", Reading.TOKEN_LEVEL)) == ("x", Reading.TOKEN_LEVEL)


def test_findings_sort_by_place_first() -> None:
    a = Finding("p", "a.py", None, 9, 0, "HF-1", Confidence.RESOLVED, "z")
    b = Finding("p", "a.py", None, 10, 0, "HF-1", Confidence.POSSIBLE, "a", Reading.TOKEN_LEVEL)
    c = Finding("p", "a.py", None, 10, 0, "HF-1", Confidence.POSSIBLE, "a")
    assert sorted([c, b, a]) == [a, c, b]  # same place and shape: the syntax tree's first
