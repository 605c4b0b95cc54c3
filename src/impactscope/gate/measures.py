"""What the gate reads of a report: per change, the counts, the share's interval and the exposure.

The rules see only `ChangeMeasure`; `measures_from_report` is the one place that knows the
report's shape, so a change of the report's model touches this function alone.
"""

from __future__ import annotations

from dataclasses import dataclass

from impactscope.changes import Change, ChangeList
from impactscope.report.model import Report


@dataclass(frozen=True)
class Pattern:
    pattern: str
    projects: int
    sites: int


@dataclass(frozen=True)
class ChangeMeasure:
    change: Change
    proven: int  # projects with a resolved finding
    likely: int  # ... resolved or inferred
    possible: int  # ... any finding: the upper bound
    share: float  # proven share of the projects that use the library
    share_low: float  # low end of the proven share's interval
    share_high: float  # high end of the at-most share's interval
    users: int  # the share's denominator: projects that use the library
    confidence: float
    exposed: int
    shielded: int
    unconstrained: int
    sites: int
    patterns: tuple[Pattern, ...] = ()


@dataclass(frozen=True)
class Measures:
    """The report's facts the gate needs, per change in change-list order, and about the scan."""

    library: str
    release: str | None
    complete: bool  # False: the scan was interrupted, the counts are too low
    projects: int
    users: int
    files_failed: int  # files the scan failed on (analysis error, worker died)
    changes: tuple[ChangeMeasure, ...]


def measures_from_report(report: Report, changes: ChangeList) -> Measures:
    """The gate's view of the report (report/model.py)."""
    out = tuple(
        ChangeMeasure(
            change=changes.by_id(c.id),
            proven=c.projects.resolved,
            likely=c.projects.inferred,
            possible=c.projects.possible,
            share=c.share.levels.resolved.estimate,
            share_low=c.share.levels.resolved.low,
            share_high=c.share.levels.possible.high,
            users=c.share.denominator,
            confidence=c.share.confidence,
            exposed=c.exposure.exposed,
            shielded=c.exposure.shielded,
            unconstrained=c.exposure.unconstrained,
            sites=c.sites,
            patterns=tuple(Pattern(p.label, p.projects, p.sites) for p in c.patterns),
        )
        for c in report.changes
    )
    t = report.totals
    return Measures(report.library, report.release, report.complete, t.projects, t.projects_using_library,
                    t.files_analysis_error + t.files_worker_died, out)
