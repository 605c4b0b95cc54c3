"""What several renderers show, derived from the report model alone: the order of the changes,
the projects each change hits, example sites, the warnings and the plain words for the counts.

The terminal report, the HTML report and the release notes read these, so that a project or a
site listed in one is listed in the others, in the same order.
"""

from __future__ import annotations

from dataclasses import dataclass

from impactscope.findings import Confidence, Finding
from impactscope.report.model import ChangeReport, Estimate, PerLevel, Report

# The words reports use for the levels (docs/findings.md): a resolved finding proves the use,
# an inferred one makes it likely, and the possible count is an upper bound.
LEVEL_WORDS = PerLevel(resolved="proven", inferred="likely", possible="at most")
DEFAULT_SITES = 3  # example sites per change, unless `--sites N`


def by_impact(report: Report) -> list[ChangeReport]:
    """The changes, most projects proven first, then most at most, then in change-list order."""
    order = {c.id: index for index, c in enumerate(report.changes)}
    return sorted(report.changes, key=lambda c: (-c.projects.resolved, -c.projects.possible, order[c.id]))


def hit_by_any(report: Report) -> PerLevel[int]:
    """Projects with a finding of some change at that level or stronger."""
    return PerLevel.build(lambda level: len({f.project for f in report.findings if f.confidence >= level}))


@dataclass(frozen=True)
class HitProject:
    """A project one change hits: its strongest level and how many sites it has."""

    project: str
    strongest: Confidence
    sites: int


def hit_projects(report: Report, change: str) -> list[HitProject]:
    """The projects a change hits, strongest level first, then most sites, then by name."""
    strongest: dict[str, Confidence] = {}
    sites: dict[str, int] = {}
    for f in report.findings:
        if f.change == change:
            strongest[f.project] = max(strongest.get(f.project, f.confidence), f.confidence)
            sites[f.project] = sites.get(f.project, 0) + 1
    hits = [HitProject(p, strongest[p], sites[p]) for p in strongest]
    return sorted(hits, key=lambda h: (-h.strongest, -h.sites, h.project))


def example_sites(report: Report, change: str, count: int) -> list[Finding]:
    """`count` sites of a change, strongest first, one per project before a second from any."""
    mine = sorted((f for f in report.findings if f.change == change),
                  key=lambda f: (-f.confidence, f.project, f.file, f.cell or 0, f.line, f.column))
    first: list[Finding] = []
    rest: list[Finding] = []
    seen: set[str] = set()
    for f in mine:
        (rest if f.project in seen else first).append(f)
        seen.add(f.project)
    return (first + rest)[:max(count, 0)]


def site_text(finding: Finding) -> str:
    """Where a site is: `project: file:line:column`, a notebook's cell in brackets."""
    cell = f"[cell {finding.cell}]" if finding.cell is not None else ""
    return f"{finding.project}: {finding.file}{cell}:{finding.line}:{finding.column + 1}"


def warnings(report: Report) -> list[str]:
    """What makes the figures partial or suspect, one sentence each."""
    out = []
    if not report.complete:
        out.append(f"the scan was interrupted: these figures cover the {plural(report.totals.projects, 'project')} "
                   "finished so far; run the same scan command again to finish it")
    t = report.totals
    if t.files_analysis_error:
        out.append(f"impactscope failed on {plural(t.files_analysis_error, 'file')} (analysis error, a bug to "
                   "report): their uses count only at possible, as a token-level reading finds them in modules (not in "
                   "notebooks); the failed files are listed below and in --format json")
    if t.files_worker_died:
        out.append(f"{plural(t.files_worker_died, 'file')} of projects whose worker process died twice were not "
                   "read: the uses in them are not counted")
    return out


def release_name(report: Report, otherwise: str | None = None) -> str:
    """`heronframe 3.0`; without a release, `otherwise` (the library's name unless given)."""
    if report.release:
        return f"{report.library} {report.release}"
    return report.library if otherwise is None else otherwise


def plural(count: int, noun: str, nouns: str | None = None) -> str:
    """`1 project`, `2 projects` (`nouns` when the plural is not noun + s)."""
    return f"{count} {noun if count == 1 else (nouns or noun + 's')}"


def percent(value: float) -> str:
    return f"{value:.1%}"


def interval(estimate: Estimate) -> str:
    """`12.0%–30.5%`: the two ends of a share's interval."""
    return f"{percent(estimate.low)}–{percent(estimate.high)}"


def confidence_text(report: Report) -> str:
    level = report.interval_confidence
    return f"{level:.0%}" if level is not None else "95%"


def weights_text(report: Report) -> str | None:
    """The line saying which weights a report was sized with, or None without `--weights`."""
    w = report.weights
    if w is None:
        return None
    return (f"weighted by {w.file}: {plural(w.entries, 'entry', 'entries')}, matching {w.matched} of the "
            f"{plural(report.totals.projects_using_library, 'project')} that use {report.library}")


__all__ = [
    "DEFAULT_SITES", "HitProject", "LEVEL_WORDS", "by_impact", "confidence_text", "example_sites", "hit_by_any",
    "hit_projects", "interval", "percent", "plural", "site_text", "warnings", "weights_text",
]
