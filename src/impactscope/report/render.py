"""Renderers: the report model as JSON or Markdown (the terminal report is report/terminal.py,
re-exported here). They read only the model."""

from __future__ import annotations

import json

from impactscope.report.model import ChangeReport, Report
from impactscope.report.terminal import FAILED_ROWS, to_table
from impactscope.report.views import confidence_text, warnings, weights_text


def to_json(report: Report) -> str:
    return json.dumps(report.to_json(), indent=2, sort_keys=False) + "\n"


def _bounds(change: ChangeReport) -> str:
    p = change.projects
    return f"{p.resolved} / {p.inferred} / {p.possible}"


def _share(change: ChangeReport) -> str:
    share = change.share
    if not share.denominator:
        return "n/a"
    r, p = share.levels.resolved, share.levels.possible
    return f"{r.estimate:.1%} ({r.low:.1%}–{p.high:.1%})"


def _exposed(change: ChangeReport) -> str:
    e = change.exposure
    return f"{e.exposed} / {e.shielded} / {e.unconstrained}"


def _faults(report: Report) -> str:
    """How many files the scan failed on (bugs to report), as part of the unparsed count."""
    t = report.totals
    text = f"{t.files_analysis_error} with an analysis error"
    if t.files_worker_died:
        text += f", {t.files_worker_died} in projects whose worker died"
    return text


def _users(report: Report) -> str:
    return f"{report.totals.projects_using_library} projects that use {report.library}"


def to_markdown(report: Report) -> str:
    t = report.totals
    lines = [
        f"# Impact of {report.library} {report.release or ''}".rstrip(),
        "",
        f"Scanned {t.projects} projects ({t.projects_using_library} use {report.library}); "
        f"{t.files} files: {t.files_parsed} parsed, {t.files_skipped} skipped, "
        f"{t.files_unparsed} unparsed ({_faults(report)}).",
        *(["", f"Share of the weight: {weights_text(report)}."] if report.weights is not None else []),
        *(line for warning in warnings(report) for line in ("", f"**Warning:** {warning}.")),
        "",
        "Projects hit are given as proven / likely / at most (resolved, inferred, possible). "
        f"Share is of the {_users(report)}: the proven share, with the interval running from the low end "
        f"for proven to the high end for at most ({confidence_text(report)} Wilson score). Exposure counts proven "
        "projects whose declared requirement admits the release / excludes it / declares none.",
        "",
    ]
    sure, low = _by_certainty(report)
    lines += _changes_table(sure)
    if low:
        lines += ["", f"## Low-certainty draft entries ({_low_line(report)}): review them before relying on these counts", ""]
        lines += _changes_table(low)
    if report.weights is not None:
        lines += ["", f"## Share of the weight ({confidence_text(report)} interval)", "",
                  "| change | proven | at most |", "|---|---|---|"]
        for c in report.changes:
            w = c.weighted_share
            cells = [f"{e.estimate:.1%} ({e.low:.1%}–{e.high:.1%})" for e in (w.levels.resolved, w.levels.possible)] \
                if w is not None else ["n/a", "n/a"]
            lines.append(f"| {c.id} | {cells[0]} | {cells[1]} |")
    legacy = [(c.id, projects, c.legacy_sites) for c, projects in report.token_level()]
    if legacy:
        lines += ["", "## Python 2 files (token-level reading, all at possible)", "",
                  "| change | projects | sites |", "|---|---|---|"]
        lines += [f"| {cid} | {p} | {n} |" for cid, p, n in legacy]
    for c in report.changes:
        if not c.patterns:
            continue
        lines += ["", f"## {c.id}: `{c.member}` ({c.kind.value})", ""]
        if c.note:
            lines += [c.note, ""]
        lines += ["| call pattern | how sure | projects | sites |", "|---|---|---|---|"]
        for p in c.patterns:
            lines.append(f"| `{p.label}` | {p.confidence.label} | {p.projects} | {p.sites} |")
    if report.file_reasons:
        lines += ["", "## Files not analysed", "", "| status | reason | files |", "|---|---|---|"]
        for r in report.file_reasons:
            lines.append(f"| {r.status.value} | {r.reason} | {r.files} |")
    failed = report.failed_files
    if failed:
        lines += ["", "## Files the scan failed on (please report these)", "",
                  "| project | file | reason | detail |", "|---|---|---|---|"]
        for f in failed:
            detail = f.detail.replace("|", "\\|")
            lines.append(f"| {f.project} | `{f.file}` | {f.reason} | {detail} |")
    if report.not_projects:
        lines += ["", "## In the roots but not projects", "", "| reason | items |", "|---|---|"]
        for reason, count in _not_projects(report):
            lines.append(f"| {reason} | {count} |")
    return "\n".join(lines) + "\n"


def _changes_table(changes: list[ChangeReport]) -> list[str]:
    return ["| change | member | kind | projects hit | share of users | exposed / shielded / unconstrained | sites |",
            "|---|---|---|---|---|---|---|",
            *(f"| {c.id} | `{c.member}` | {c.kind.value} | {_bounds(c)} | {_share(c)} | {_exposed(c)} | {c.sites} |"
              for c in changes)]


def _by_certainty(report: Report) -> tuple[list[ChangeReport], list[ChangeReport]]:
    """The changes, and apart from them those a draft marked `certainty = "low"`."""
    return [c for c in report.changes if not c.low_certainty], [c for c in report.changes if c.low_certainty]


def _low_line(report: Report) -> str:
    low = report.by_certainty.low
    return f"{low.changes} changes, {low.projects_affected} projects hit at most"


def _not_projects(report: Report) -> list[tuple[str, int]]:
    counts: dict[str, int] = {}
    for item in report.not_projects:
        counts[item.reason] = counts.get(item.reason, 0) + 1
    return sorted(counts.items())
