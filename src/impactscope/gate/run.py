"""`impactscope gate`: read the results and the policy, check every rule, keep what renderers need."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Mapping

from impactscope.errors import InputError
from impactscope.gate.locate import Place, library_lines
from impactscope.gate.measures import measures_from_report
from impactscope.gate.policy import Policy, load_policy
from impactscope.gate.previous import read_previous
from impactscope.gate.rules import Verdict, evaluate


class GateError(InputError):
    """Results the gate cannot judge (an interrupted scan, a missing library source)."""


@dataclass(frozen=True)
class GateRun:
    verdict: Verdict
    policy: Policy
    results: Path
    places: Mapping[str, Place]  # change id -> the library's own line for it (with --head-source)
    source_root: Path  # SARIF URIs are relative to it


def run_gate(
    results: Path,
    policy_path: Path,
    *,
    previous: Path | None = None,
    head_source: Path | None = None,
    source_root: Path | None = None,
) -> GateRun:
    from impactscope.report.aggregate import build_report
    from impactscope.store import ResultStore

    policy = load_policy(policy_path)  # first: a bad policy is reported before any work
    if head_source is not None and not head_source.exists():
        raise GateError(f"{head_source}: --head-source not found; pass the library's source as the pull request has it")
    store = ResultStore.open(results)
    try:
        changes = store.change_list()
        measures = measures_from_report(build_report(store), changes)
    finally:
        store.close()
    if not measures.complete:
        raise GateError(
            f"{results}: the scan that wrote it was interrupted, so every count may be too low; "
            "run the same scan command again to finish it, then gate"
        )
    policy.check_waivers({c.id for c in changes.changes})
    warned = read_previous(previous, changes) if previous is not None else None
    places: dict[str, Place] = {}
    if head_source is not None:
        lines = library_lines(head_source, changes.import_name)
        for change in changes.changes:
            place = lines.place(change, warned.surface if warned is not None else None)
            if place is not None:
                places[change.id] = place
    verdict = evaluate(policy, measures, warned)
    return GateRun(verdict, policy, results, places, (source_root or Path.cwd()).resolve())
