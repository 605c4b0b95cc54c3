"""Aggregate the store into the report model (`report.model.Report`), once per report."""

from __future__ import annotations

import json
from collections import Counter
from typing import Iterable

import pandas as pd

from impactscope.findings import Confidence, Finding, Reading
from impactscope.outcomes import SCAN_FAILURES, FileOutcome, FileStatus
from impactscope.reasons import Reason
from impactscope.report.model import (
    ByCertainty,
    CertaintyGroup,
    ChangeReport,
    FailedFile,
    FileReason,
    NotProject,
    PatternRow,
    PerLevel,
    ProjectFacts,
    ProjectFiles,
    Report,
    Totals,
    WeightsUsed,
)
from impactscope.report.sizing import SizingError, SizingOptions, change_sizing, corpus_sizing, project_facts
from impactscope.store import ResultStore


def build_report(store: ResultStore, options: SizingOptions | None = None) -> Report:
    options = options or SizingOptions()
    changes = store.change_list()
    projects = store.projects()
    findings = store.findings()
    file_rows = list(store.files())

    status = Counter(outcome.status for _, outcome in file_rows)
    reasons: Counter[tuple[FileStatus, Reason | str]] = Counter(
        (outcome.status, outcome.reason or "") for _, outcome in file_rows if outcome.status is not FileStatus.PARSED
    )
    totals = Totals(
        projects=len(projects),
        projects_using_library=sum(p.uses_library for p in projects),
        files=len(file_rows),
        files_parsed=status[FileStatus.PARSED],
        files_skipped=status[FileStatus.SKIPPED],
        files_unparsed=status[FileStatus.UNPARSED],
        files_analysis_error=reasons[(FileStatus.UNPARSED, Reason.ANALYSIS_ERROR)],
        files_worker_died=reasons[(FileStatus.UNPARSED, Reason.WORKER_DIED)],
    )
    by_project: dict[str, list[FileOutcome]] = {}
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
    weights = _weights_used(options, facts.values())
    frame = _frame(findings)
    out_changes = []
    for change in changes.changes:
        rows = frame[frame["change"] == change.id]
        sizing = change_sizing(change.id, findings, facts, options)
        out_changes.append(
            ChangeReport(
                id=change.id,
                member=change.member,
                kind=change.kind,
                certainty=change.certainty,
                replacement=change.replacement,
                note=change.note,
                projects=PerLevel.build(lambda level: int(rows[rows["confidence"] >= int(level)]["project"].nunique())),
                sites=int(len(rows)),
                files=int(rows[["project", "file"]].drop_duplicates().shape[0]) if not rows.empty else 0,
                patterns=_patterns(rows),
                share=sizing.share,
                exposure=sizing.exposure,
                projects_fork_collapsed=sizing.projects_fork_collapsed,
                legacy_sites=sizing.legacy_sites,
                weighted_share=sizing.weighted_share,
                sites_by_level=PerLevel.build(lambda level: int((rows["confidence"] >= int(level)).sum())),
                deprecated_in=str(change.deprecated_in) if change.deprecated_in is not None else None,
                parameter=change.parameter,
                new_parameter=change.new_parameter,
            )
        )
    low = {c.id for c in changes.changes if c.uncertain}
    apart = {
        is_low: CertaintyGroup(
            changes=sum(1 for c in changes.changes if (c.id in low) == is_low),
            projects_affected=int(frame[frame["change"].isin(low) == is_low]["project"].nunique()) if not frame.empty else 0,
        )
        for is_low in (True, False)
    }
    meta = store.meta()
    return Report(
        library=changes.library,
        release=str(changes.release) if changes.release else None,
        complete=meta.get("complete") == "1",
        totals=totals,
        file_reasons=tuple(FileReason(s, r, n) for (s, r), n in sorted(reasons.items())),
        projects_affected=int(frame["project"].nunique()) if not frame.empty else 0,
        by_certainty=ByCertainty(low=apart[True], other=apart[False]),
        not_projects=tuple(NotProject(path, reason) for path, reason in json.loads(meta.get("not_projects") or "[]")),
        changes=tuple(out_changes),
        corpus=corpus_sizing(by_project, facts),
        projects=tuple(facts[p.name] for p in projects),
        findings=tuple(findings),
        files_by_project=_per_project(file_rows),
        failed_files=tuple(
            FailedFile(project, o.path, o.reason, o.detail)
            for project, o in file_rows
            if o.status is FileStatus.UNPARSED and o.reason in SCAN_FAILURES
        ),
        weights=weights,
    )


def _weights_used(options: SizingOptions, facts: Iterable[ProjectFacts]) -> WeightsUsed | None:
    """What a weights file matched; one that matches no project that uses the library is refused,
    since every weighted share would then be silently missing."""
    if options.weights is None:
        return None
    users = [f.project for f in facts if f.uses_library]
    matched = sum(1 for name in users if name in options.weights)
    name = options.weights_file or "weights"
    if not matched:
        example = next(iter(sorted(options.weights)), None)
        raise SizingError(
            f"--weights {name}: none of its {len(options.weights)} project names is a project of these results "
            f"that uses the library (first: {example!r}); use the names `report --format json` lists under "
            "`projects`"
        )
    return WeightsUsed(name, len(options.weights), matched)


def _frame(findings: list[Finding]) -> pd.DataFrame:
    """One row per finding; `label` is the pattern as reports show it, so patterns group by it."""
    return pd.DataFrame(
        [(f.project, f.file, f.change, int(f.confidence), f.pattern, f.reading.value, f.label) for f in findings],
        columns=["project", "file", "change", "confidence", "pattern", "reading", "label"],
    )


def _patterns(rows: pd.DataFrame) -> tuple[PatternRow, ...]:
    """A change's patterns, most projects first, then most sites, then by label."""
    if rows.empty:
        return ()
    rows = rows.assign(where=rows["project"] + "\0" + rows["file"])
    grouped = rows.groupby(["label", "pattern", "reading"]).agg(
        projects=("project", "nunique"), sites=("project", "size"), files=("where", "nunique"),
        strongest=("confidence", "max"),
    )
    grouped = grouped.reset_index().sort_values(["projects", "sites", "label"], ascending=[False, False, True])
    return tuple(
        PatternRow(r.pattern, Reading(r.reading), int(r.projects), int(r.sites), int(r.files), Confidence(int(r.strongest)))
        for r in grouped.itertuples(index=False)
    )


def _per_project(file_rows: list[tuple[str, FileOutcome]]) -> tuple[ProjectFiles, ...]:
    counts: dict[str, Counter[FileStatus]] = {}
    for project, outcome in file_rows:
        counts.setdefault(project, Counter())[outcome.status] += 1
    return tuple(
        ProjectFiles(project, sum(c.values()), c[FileStatus.PARSED], c[FileStatus.SKIPPED], c[FileStatus.UNPARSED])
        for project, c in counts.items()
    )
