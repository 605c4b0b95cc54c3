"""The terminal report (`report --format table`, and the demo): plain text that fits the terminal.

First what a maintainer asks first (how many projects any change hits, at each level), then
one table of projects hit per change, most proven first, and one of exposure and sites; then,
unless `--summary`, each change's hit projects, example sites and call patterns, and the
accounting of the files that were not analysed. Reads only the report model.
"""

from __future__ import annotations

import shutil

from impactscope.findings import Confidence
from impactscope.report.columns import Column, lay_out, wrap
from impactscope.report.model import ChangeReport, Report
from impactscope.report.views import (
    DEFAULT_SITES,
    LEVEL_WORDS,
    by_impact,
    confidence_text,
    example_sites,
    hit_by_any,
    hit_projects,
    interval,
    percent,
    plural,
    release_name,
    site_text,
    warnings,
    weights_text,
)

FALLBACK_WIDTH = 100  # when standard output is not a terminal
FAILED_ROWS = 20  # the terminal lists this many failed files; JSON lists them all
PATTERN_ROWS = 8  # call patterns per change, then "... N more"
PROJECT_NAMES = 10  # hit projects named per change, then "and N more"


def terminal_width() -> int:
    """The terminal's width (`COLUMNS` first, as the shell sets it), or FALLBACK_WIDTH."""
    return shutil.get_terminal_size((FALLBACK_WIDTH, 24)).columns


def to_table(report: Report, width: int | None = None, *, sites: int = DEFAULT_SITES, summary: bool = False) -> str:
    width = width or terminal_width()
    lines = _heading(report, width)
    ranked = by_impact(report)
    sure = [c for c in ranked if not c.low_certainty]
    low = [c for c in ranked if c.low_certainty]
    lines += ["", *wrap("Projects hit by each change, most proven first. Proven: a use resolved to the member; "
                        "likely: inferred; at most: any possible use. Share: of the "
                        f"{plural(report.totals.projects_using_library, 'project')} that use {report.library}, "
                        f"with its {confidence_text(report)} interval.", width)]
    lines += _hits_table(report, sure, width)
    if low:
        lo = report.by_certainty.low
        lines += ["", *wrap(f"Low-certainty draft entries ({plural(lo.changes, 'change')}, "
                            f"{plural(lo.projects_affected, 'project')} hit at most): review them before relying "
                            "on these counts", width)]
        lines += _hits_table(report, low, width)
    release = release_name(report, "the release")
    lines += ["", *wrap(f"Proven projects by what their declared requirement says of {release}, and sites "
                        "(uses in the code) per change.", width)]
    lines += _exposure_table(report, [*sure, *low])
    if report.weights is not None:
        lines += ["", *wrap(f"Share of the weight ({weights_text(report)}).", width)]
        lines += _weighted_table([*sure, *low], report)
    if not summary:
        for change in [*sure, *low]:
            lines += ["", *_change_details(report, change, width, sites)]
        lines += _accounting(report, width)
    return "\n".join(lines) + "\n"


def _heading(report: Report, width: int) -> list[str]:
    t = report.totals
    hit = hit_by_any(report)
    name = release_name(report)
    first = (f"{name}: the planned changes hit {plural(hit.resolved, 'project')} proven, {hit.inferred} likely, "
             f"{hit.possible} at most, of the {plural(t.projects_using_library, 'project')} that use "
             f"{report.library} ({plural(t.projects, 'project')} scanned)")
    lines = wrap(first, width)
    died = f", {t.files_worker_died} in projects whose worker died" if t.files_worker_died else ""
    lines += wrap(f"files: {t.files} = {t.files_parsed} parsed + {t.files_skipped} skipped + {t.files_unparsed} "
                  f"unparsed ({t.files_analysis_error} with an analysis error{died})", width)
    weighted = weights_text(report)
    if weighted:
        lines += wrap(weighted, width)
    for warning in warnings(report):
        lines += wrap(f"warning: {warning}", width)
    return lines


def _share(change: ChangeReport) -> str:
    if not change.share.denominator:
        return "n/a"
    proven = change.share.levels.resolved
    return f"{percent(proven.estimate)} ({interval(proven)})"


def _hits_table(report: Report, changes: list[ChangeReport], width: int) -> list[str]:
    columns = [
        Column("change"), Column("member", flexible=True), Column("kind"),
        *(Column(LEVEL_WORDS[level], "projects hit", right=True) for level in Confidence.strongest_first()),
        Column(f"proven ({confidence_text(report)} interval)", "share of users", right=True),
    ]
    rows = [[c.id, c.member, c.kind.value, *(str(c.projects[level]) for level in Confidence.strongest_first()),
             _share(c)] for c in changes]
    return lay_out(columns, rows, width)


def _exposure_table(report: Report, changes: list[ChangeReport]) -> list[str]:
    release = report.release or "the release"
    group = "proven projects whose requirement"
    columns = [
        Column("change"),
        Column(f"admits {release}", group, right=True), Column("excludes it", group, right=True),
        Column("states none", group, right=True),
        *(Column(LEVEL_WORDS[level], "sites", right=True) for level in Confidence.strongest_first()),
        Column("files", right=True),
    ]
    rows = [[c.id, str(c.exposure.exposed), str(c.exposure.shielded), str(c.exposure.unconstrained),
             *(str(c.sites_by_level[level]) for level in Confidence.strongest_first()), str(c.files)]
            for c in changes]
    return lay_out(columns, rows, 1000)  # fixed columns only: narrower than any terminal


def _weighted_table(changes: list[ChangeReport], report: Report) -> list[str]:
    columns = [Column("change"), *(Column(LEVEL_WORDS[level], f"weighted share ({confidence_text(report)} interval)",
                                          right=True) for level in (Confidence.RESOLVED, Confidence.POSSIBLE))]
    rows = []
    for c in changes:
        w = c.weighted_share
        cells = ([f"{percent(w.levels[level].estimate)} ({interval(w.levels[level])})"
                  for level in (Confidence.RESOLVED, Confidence.POSSIBLE)] if w is not None else ["n/a", "n/a"])
        rows.append([c.id, *cells])
    return lay_out(columns, rows, 1000)


def _change_details(report: Report, change: ChangeReport, width: int, sites: int) -> list[str]:
    p = change.projects
    head = f"{change.id} {change.member} ({change.kind.value})"
    if change.replacement:
        head += f", use {change.replacement}"
    lines = wrap(f"{head}: {plural(p.resolved, 'project')} proven, {p.inferred} likely, {p.possible} at most", width)
    hits = hit_projects(report, change.id)
    if not hits:
        return [*lines, "  no project uses it"]
    names = ", ".join(f"{h.project} ({LEVEL_WORDS[h.strongest]}, {plural(h.sites, 'site')})"
                      for h in hits[:PROJECT_NAMES])
    if len(hits) > PROJECT_NAMES:
        names += f"; and {len(hits) - PROJECT_NAMES} more (--format html or json lists them all)"
    lines += _labelled("projects", names, width)
    examples = example_sites(report, change.id, sites)
    for index, f in enumerate(examples):
        lines += _labelled("sites" if index == 0 else "", f"{site_text(f)}  {f.label} ({LEVEL_WORDS[f.confidence]})", width)
    columns = [Column("call pattern", flexible=True), Column("how sure"), Column("projects", right=True),
               Column("sites", right=True)]
    rows = [[r.label, r.confidence.label, str(r.projects), str(r.sites)] for r in change.patterns[:PATTERN_ROWS]]
    if len(change.patterns) > PATTERN_ROWS:
        rows.append([f"... {len(change.patterns) - PATTERN_ROWS} more", "", "", ""])
    lines += ["  " + line for line in lay_out(columns, rows, width - 2)]
    return lines


def _labelled(label: str, text: str, width: int) -> list[str]:
    """`  label     text`, the text wrapped under itself."""
    indent = 12
    parts = wrap(text, width - indent)
    return [("  " + label).ljust(indent) + parts[0], *(" " * indent + part for part in parts[1:])]


def _accounting(report: Report, width: int) -> list[str]:
    """Python 2 sites, files not analysed, files the scan failed on, what is not a project."""
    lines: list[str] = []
    legacy = [(c.id, {f.project for f in report.findings if f.change == c.id and f.token_level}, c.legacy_sites)
              for c in report.changes if c.legacy_sites]
    if legacy:
        lines += ["", "Python 2 files (read at token level; every site counts as possible)"]
        lines += lay_out([Column("change"), Column("projects", right=True), Column("sites", right=True)],
                         [[cid, str(len(projects)), str(n)] for cid, projects, n in legacy], width)
    if report.file_reasons:
        lines += ["", "Files not analysed"]
        lines += lay_out([Column("status"), Column("reason", flexible=True), Column("files", right=True)],
                         [[r.status.value, r.reason, str(r.files)] for r in report.file_reasons], width)
    failed = report.failed_files
    if failed:
        lines += ["", "Files the scan failed on (please report these)"]
        rows = [[f.project, f.reason, f"{f.file}: {f.detail}"] for f in failed[:FAILED_ROWS]]
        if len(failed) > FAILED_ROWS:
            rows.append([f"... {len(failed) - FAILED_ROWS} more (see --format json)", "", ""])
        lines += lay_out([Column("project"), Column("reason"), Column("file: detail", flexible=True)], rows, width)
    if report.not_projects:
        counts: dict[str, int] = {}
        for item in report.not_projects:
            counts[item.reason] = counts.get(item.reason, 0) + 1
        lines += ["", "In the roots but not projects"]
        lines += lay_out([Column("reason", flexible=True), Column("items", right=True)],
                         [[reason, str(n)] for reason, n in sorted(counts.items())], width)
    return lines


__all__ = ["FAILED_ROWS", "FALLBACK_WIDTH", "PATTERN_ROWS", "PROJECT_NAMES", "terminal_width", "to_table"]
