from __future__ import annotations

import json
import os
from pathlib import Path

import jsonschema
import pytest

from impactscope.gate.run import run_gate
from impactscope.gate.sarif import MAX_RESULTS, to_sarif
from impactscope.store import ResultStore, StoreError

from .conftest import HEAD, POLICIES, PREVIOUS, REPO, SOURCE_ROOT

# The SARIF 2.1.0 schema (OASIS, errata 01), as kept in ../shared/standards.
SCHEMA_PATH = REPO.parent / "shared" / "standards" / "sarif-schema-2.1.0.json"
REALWORLD = Path(os.environ.get("IMPACTSCOPE_REALWORLD_RESULTS", "/tmp/rwl/results"))


@pytest.fixture(scope="module")
def schema() -> dict:
    if not SCHEMA_PATH.is_file():
        # CI runs with ../shared beside the clone: there a missing schema is a failure, not a skip.
        if os.environ.get("CI"):
            pytest.fail(f"{SCHEMA_PATH} is not here: CI must have ../shared beside the repository")
        pytest.skip(f"{SCHEMA_PATH} is not here")
    return json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))


def validate(text: str, schema: dict) -> dict:
    document = json.loads(text)
    jsonschema.Draft4Validator(schema).validate(document)  # the schema declares draft-04
    return document


@pytest.fixture(scope="module")
def strict_run(demo_results):
    return run_gate(demo_results, POLICIES / "strict.toml", previous=PREVIOUS, head_source=HEAD, source_root=SOURCE_ROOT)


def test_the_demo_sarif_is_valid_and_points_at_the_library_lines(strict_run, schema):
    document = validate(to_sarif(strict_run), schema)
    run = document["runs"][0]
    assert document["version"] == "2.1.0" and run["columnKind"] == "unicodeCodePoints"
    results = run["results"]
    assert len(results) == len(strict_run.verdict.failed) > 0
    for result in results:
        location = result["locations"][0]["physicalLocation"]
        assert location["artifactLocation"]["uriBaseId"] == "SRCROOT"
        uri = location["artifactLocation"]["uri"]
        assert uri.startswith("src/impactscope/demo/heronframe_3_0/heronframe/") and (SOURCE_ROOT / uri).is_file()
        assert location["region"]["startLine"] >= 1 and location["region"]["startColumn"] >= 1
        assert set(result["partialFingerprints"]) == {"impactscopeChange/v1"}
        props = result["properties"]
        assert {"projects", "share", "exposure", "patterns"} <= set(props)
        assert f"{props['projects']['proven']} proven" in result["message"]["text"]
        assert run["tool"]["driver"]["rules"][result["ruleIndex"]]["id"] == result["ruleId"]
    by_rule = {(r["properties"]["change"], r["ruleId"]) for r in results}
    assert ("HF-1", "warned_before") in by_rule and ("HF-2", "deprecation_period") not in by_rule
    for rule in run["tool"]["driver"]["rules"]:
        assert rule["shortDescription"]["text"] and rule["fullDescription"]["text"]
        assert rule["help"]["text"] and rule["help"]["markdown"]
    assert "security-severity" not in json.dumps(document)
    fingerprints = [r["partialFingerprints"]["impactscopeChange/v1"] for r in results]
    assert len(set(fingerprints)) == len(fingerprints)


def test_the_sarif_is_the_same_bytes_for_the_same_results(strict_run):
    assert to_sarif(strict_run) == to_sarif(strict_run)


def test_a_waived_result_carries_a_suppression_with_the_reason(demo_results, schema):
    run = run_gate(demo_results, POLICIES / "lenient.toml", head_source=HEAD, source_root=SOURCE_ROOT)
    results = validate(to_sarif(run), schema)["runs"][0]["results"]
    assert [r["suppressions"][0]["justification"] for r in results] == [
        "describe() adds a row: output changes, no call fails; announced in the 3.0 notes"
    ]


def test_without_the_head_source_results_point_at_the_policy_rule(demo_results, schema):
    run = run_gate(demo_results, POLICIES / "strict.toml", source_root=REPO)
    document = validate(to_sarif(run), schema)
    lines = (POLICIES / "strict.toml").read_text(encoding="utf-8").split("\n")
    for result in document["runs"][0]["results"]:
        location = result["locations"][0]["physicalLocation"]
        assert location["artifactLocation"]["uri"] == "examples/policies/strict.toml"
        region = location["region"]
        key = lines[region["startLine"] - 1][region["startColumn"] - 1:]
        expected = {"deprecation_period": "min_releases"}.get(result["ruleId"], result["ruleId"])
        assert key.startswith(expected + " =")
    assert "--head-source" in document["runs"][0]["properties"]["locations"]


def test_results_are_capped_by_count_and_size_and_the_run_says_so(strict_run, schema):
    assert MAX_RESULTS == 5000  # GitHub's code scanning shows the top 5,000 results of a run (its SARIF limits page)
    total = len(strict_run.verdict.failed)
    capped = validate(to_sarif(strict_run, max_results=3), schema)["runs"][0]
    assert len(capped["results"]) == 3
    assert capped["properties"]["resultsTotal"] == total and capped["properties"]["resultsWritten"] == 3
    assert f"{total - 3} of {total} results left out" in capped["properties"]["resultsCapped"]
    small = to_sarif(strict_run, max_bytes=40_000)
    assert len(small.encode()) <= 40_000
    assert 0 < len(validate(small, schema)["runs"][0]["results"]) < total


@pytest.mark.parametrize("name", ["pandas-source", "networkx-source"])
def test_the_sarif_of_a_real_world_corpus_is_valid(name, schema, tmp_path):
    results = REALWORLD / f"{name}.sqlite"
    if not results.is_file():
        pytest.skip(f"{results}: the real-world benchmark's results are not here (examples/realworld/run.py scan)")
    try:
        ResultStore.open(results).close()
    except StoreError as exc:
        pytest.skip(f"written by an older impactscope; scan again (examples/realworld/run.py scan): {exc}")
    policy = tmp_path / "policy.toml"
    policy.write_text("[limits]\nmax_proven_projects = 0\nmax_share_high = 0.01\n", encoding="utf-8")
    run = run_gate(results, policy, source_root=tmp_path)
    document = validate(to_sarif(run), schema)
    assert len(document["runs"][0]["results"]) == len(run.verdict.failed) > 0
