"""Aggregate the store into the report document (DESIGN.md's JSON keys, plus additions)."""

from __future__ import annotations

import json
from collections import Counter
from typing import Any

import pandas as pd

from impactscope.findings import Confidence
from impactscope.resolve.faults import ANALYSIS_ERROR, WORKER_DIED
from impactscope.report.sizing import SizingOptions, change_sizing, corpus_sizing, project_facts
from impactscope.store import ResultStore

LEVELS = (Confidence.RESOLVED, Confidence.INFERRED, Confidence.POSSIBLE)


def build_report(store: ResultStore, options: SizingOptions | None = None) -> dict[str, Any]:
    options = options or SizingOptions()
    changes = store.change_list()
    projects = store.projects()
    findings = store.findings()
    file_rows = list(store.files())

    status = Counter(outcome.status for _, outcome in file_rows)
    reasons: Counter[tuple[str, str]] = Counter(
        (outcome.status, outcome.reason or "") for _, outcome in file_rows if outcome.status != "parsed"
    )
    totals = {
        "projects": len(projects),
        "projects_using_library": sum(p.uses_library for p in projects),
        "files": len(file_rows),
        "files_parsed": status["parsed"],
        "files_skipped": status["skipped"],
        "files_unparsed": status["unparsed"],
        # Part of files_unparsed: an unexpected exception met on the file (a bug to report), and
        # files of projects whose worker process died twice.
        "files_analysis_error": reasons[("unparsed", ANALYSIS_ERROR)],
        "files_worker_died": reasons[("unparsed", WORKER_DIED)],
    }
    by_project: dict[str, list] = {}
    for project, outcome in file_rows:
        by_project.setdefault(project, []).append(outcome)
    facts = project_facts(
        changes,
        [(p.name, p.uses_library) for p in projects],
        by_project,
        {p.name: store.manifests(p.name) for p in projects},
        findings,
        options,
    )
    frame = pd.DataFrame(
        [(f.project, f.file, f.change, int(f.confidence), f.pattern) for f in findings],
        columns=["project", "file", "change", "confidence", "pattern"],
    )
    out_changes = []
    for change in changes.changes:
        rows = frame[frame["change"] == change.id]
        counts = {
            level.label: int(rows[rows["confidence"] >= int(level)]["project"].nunique()) for level in LEVELS
        }
        patterns = []
        if not rows.empty:
            rows = rows.assign(where=rows["project"] + "\0" + rows["file"])
            grouped = rows.groupby("pattern").agg(
                projects=("project", "nunique"), sites=("project", "size"), files=("where", "nunique"),
                strongest=("confidence", "max"),
            )
            grouped = grouped.reset_index().sort_values(["projects", "sites", "pattern"], ascending=[False, False, True])
            patterns = [
                {
                    "pattern": r.pattern, "projects": int(r.projects), "sites": int(r.sites), "files": int(r.files),
                    "confidence": Confidence(int(r.strongest)).label,
                }
                for r in grouped.itertuples(index=False)
            ]
        out_changes.append(
            {
                "id": change.id,
                "member": change.member,
                "kind": change.kind.value,
                "certainty": change.certainty,  # as a draft wrote it; None when written by hand
                "replacement": change.replacement,
                "note": change.note,
                "projects": counts,
                "sites": int(len(rows)),
                "files": int(rows[["project", "file"]].drop_duplicates().shape[0]) if not rows.empty else 0,
                "patterns": patterns,
                **change_sizing(change.id, findings, facts, options),
            }
        )
    affected = frame["project"].nunique() if not frame.empty else 0
    # Low-certainty draft entries are counted apart, so that a guess does not swell the totals.
    low = {c.id for c in changes.changes if c.uncertain}
    apart = {
        name: {
            "changes": sum(1 for c in changes.changes if (c.id in low) == is_low),
            "projects_affected": int(frame[frame["change"].isin(low) == is_low]["project"].nunique()) if not frame.empty else 0,
        }
        for name, is_low in (("low", True), ("other", False))
    }
    meta = store.meta()
    return {
        "library": changes.library,
        "release": str(changes.release) if changes.release else None,
        "complete": meta.get("complete") == "1",
        "totals": totals,
        "file_reasons": [
            {"status": s, "reason": r, "files": n} for (s, r), n in sorted(reasons.items())
        ],
        "projects_affected": int(affected),
        "by_certainty": apart,
        # What the roots held besides projects (hidden entries, stray files, unsafe archive paths).
        "not_projects": [
            {"path": path, "reason": reason} for path, reason in json.loads(meta.get("not_projects") or "[]")
        ],
        "changes": out_changes,
        "corpus": corpus_sizing(by_project, facts),
        "projects": [facts[p.name] for p in projects],
        "findings": [f.to_json() for f in findings],
        "files_by_project": _per_project(file_rows),
        # Each file the scan failed on, with its one-line detail: what a bug report needs.
        "failed_files": [
            {"project": project, "file": o.path, "reason": o.reason, "detail": o.detail}
            for project, o in file_rows
            if o.status == "unparsed" and o.reason in (ANALYSIS_ERROR, WORKER_DIED)
        ],
    }


def _per_project(file_rows: list) -> dict[str, dict[str, int]]:
    out: dict[str, dict[str, int]] = {}
    for project, outcome in file_rows:
        row = out.setdefault(project, {"files": 0, "parsed": 0, "skipped": 0, "unparsed": 0})
        row["files"] += 1
        row[outcome.status] += 1
    return out
