"""Acceptance for sizing: exposure, fork families, legacy Python, and interval coverage.

The generated heronframe corpus (seed 7) carries, per project, the exposure class its declared
requirement implies for release 3.0 on Python 3.12 (computed by the generator with `packaging`),
its fork family and whether it holds Python 2 files; the scan's report must agree exactly.
"""

from __future__ import annotations

import random
from collections import defaultdict

from impactscope.estimate import wilson_interval


def test_project_facts_match_the_ground_truth(scanned_demo_corpus) -> None:
    truth = scanned_demo_corpus.truth.projects
    facts = {p["project"]: p for p in scanned_demo_corpus.report["projects"]}
    assert set(facts) == set(truth)
    wrong = [
        (name, key, facts[name][key], getattr(expected, key))
        for name, expected in truth.items()
        for key in ("uses_library", "exposure", "fork_family", "legacy_python")
        if facts[name][key] != getattr(expected, key)
    ]
    assert not wrong, wrong[:10]
    # The corpus really exercises every class (else the comparison proves little).
    classes = {f["exposure"] for f in facts.values()}
    assert {"exposed", "shielded", "unconstrained"} <= classes
    assert len({f["fork_family"] for f in facts.values() if f["fork_family"]}) >= 3


def test_exposure_counts_per_change_cover_the_resolved_projects(scanned_demo_corpus) -> None:
    report = scanned_demo_corpus.report
    for change in report["changes"]:
        assert sum(change["exposure"].values()) == change["projects"]["resolved"], change["id"]


def test_python2_files_are_read_at_token_level_as_possible(scanned_demo_corpus) -> None:
    truth = {(e.project, e.file, e.line, e.change) for e in scanned_demo_corpus.truth.legacy}
    found = {
        (f["project"], f["file"], f["line"], f["change"])
        for f in scanned_demo_corpus.report["findings"]
        if f["pattern"].startswith("legacy:")
    }
    assert found == truth
    assert all(
        f["confidence"] == "possible" for f in scanned_demo_corpus.report["findings"] if f["pattern"].startswith("legacy:")
    )


def test_fork_collapsed_counts_never_exceed_raw_counts(scanned_demo_corpus) -> None:
    for change in scanned_demo_corpus.report["changes"]:
        for level in ("resolved", "inferred", "possible"):
            assert change["projects_fork_collapsed"][level] <= change["projects"][level]


def test_wilson_intervals_with_fpc_cover_the_full_corpus_share(scanned_demo_corpus) -> None:
    """Over 200 seeded samples of 40% of the projects, the 95% interval (with the finite
    population correction) holds the full-corpus share in at least 93% of samples, for every
    change that at least 10 projects use. Nominal is 95%; Wilson intervals run a little under
    nominal at some proportions (Newcombe 1998). Project results do not depend on which other
    projects are scanned, so a sample's counts are read from the full scan's findings."""
    report = scanned_demo_corpus.report
    projects = sorted(p["project"] for p in report["projects"])
    users = {p["project"] for p in report["projects"] if p["uses_library"]}
    hits: dict[str, set[str]] = defaultdict(set)
    for f in report["findings"]:
        if f["confidence"] == "resolved":
            hits[f["change"]].add(f["project"])
    checked = 0
    for change, hit in sorted(hits.items()):
        if len(hit) < 10:
            continue
        checked += 1
        full = len(hit & users) / len(users)
        covered = 0
        for seed in range(200):
            sample = random.Random(seed).sample(projects, k=round(0.4 * len(projects)))
            sampled_users = [p for p in sample if p in users]
            k = sum(1 for p in sampled_users if p in hit)
            interval = wilson_interval(k, len(sampled_users), 0.95, population=len(users))
            covered += interval.low <= full <= interval.high
        print(f"{change}: full share {full:.3f}, covered in {covered}/200 samples")
        assert covered >= 186, (change, covered)  # 93% of 200
    assert checked >= 5
