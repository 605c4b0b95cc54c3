"""Release notes: a Markdown section per change that sizes it, and towncrier fragment files.

towncrier reads one file per news item from a folder, named `<id>.<type>` (common practice;
that `removal` and `deprecation` are among its default types is recalled from memory). Each fragment holds the same facts as the change's Markdown section, in a
paragraph. Reads only the report model.
"""

from __future__ import annotations

import re
from pathlib import Path

from impactscope.changes import Kind
from impactscope.errors import InputError
from impactscope.report.model import ChangeReport, Report
from impactscope.report.views import by_impact, confidence_text, interval, percent, plural, release_name

# Which towncrier type a change is news of: a removal breaks code that works today; the other
# kinds change a member that stays, which is what a deprecation or behaviour note announces.
FRAGMENT_TYPE = {
    Kind.REMOVED: "removal", Kind.RENAMED: "removal", Kind.MOVED: "removal", Kind.PARAMETER_REMOVED: "removal",
    Kind.PARAMETER_RENAMED: "removal", Kind.DEFAULT_CHANGED: "deprecation", Kind.BEHAVIOUR_CHANGED: "deprecation",
}
# The kinds `impactscope rewrite` edits (renamed, moved and re-parameterised members, and a removed
# one with a replacement); the others it lists for review only.
REWRITTEN = (Kind.RENAMED, Kind.MOVED, Kind.REMOVED, Kind.PARAMETER_RENAMED, Kind.PARAMETER_REMOVED,
             Kind.DEFAULT_CHANGED)

KIND_WORDS = {
    Kind.REMOVED: "removed", Kind.RENAMED: "renamed", Kind.MOVED: "moved", Kind.PARAMETER_REMOVED: "parameter removed",
    Kind.PARAMETER_RENAMED: "parameter renamed", Kind.DEFAULT_CHANGED: "default changed",
    Kind.BEHAVIOUR_CHANGED: "behaviour changed",
}


class FragmentError(InputError):
    """The towncrier output folder cannot take the fragments."""


def _measured(report: Report, change: ChangeReport) -> str:
    share = change.share
    p = change.projects
    if not share.denominator:
        return f"no project of the {plural(report.totals.projects, 'project')} scanned uses {report.library}"
    proven, most = share.levels.resolved, share.levels.possible
    text = (f"{p.resolved} of the {plural(share.denominator, 'project')} that use {report.library} in a "
            f"corpus of {report.totals.projects} use it for certain: {percent(proven.estimate)} "
            f"({confidence_text(report)} interval {interval(proven)}, n = {share.denominator}); "
            f"at most {p.possible} ({percent(most.estimate)}, interval up to {percent(most.high)})")
    if change.weighted_share is not None and report.weights is not None:
        w = change.weighted_share.levels.resolved
        text += f"; weighted by {report.weights.file}: {percent(w.estimate)} ({interval(w)})"
    return text


def _exposure(report: Report, change: ChangeReport) -> str:
    e = change.exposure
    release = release_name(report, "the release")
    return (f"of the {plural(change.projects.resolved, 'project')} proven, {e.exposed} declare a requirement "
            f"that admits {release}, {e.shielded} one that excludes it, {e.unconstrained} none")


def _rewrite(report: Report, change: ChangeReport) -> str:
    if change.kind not in REWRITTEN or (change.kind in (Kind.REMOVED,) and not change.replacement):
        return "no automatic rewrite (each use needs a person's judgement)"
    command = ("`impactscope rewrite CHANGES.toml PATH/TO/YOUR/PROJECT --output rewrite/`, with this release's "
               "change list, writes a patch for the proven uses and lists the rest for review")
    if change.kind in (Kind.DEFAULT_CHANGED, Kind.PARAMETER_REMOVED):
        # Mechanical only with the old default (`default = ...` in the change list), which the
        # report does not carry: say what the patch needs.
        return command + "; it needs the old default in the change list (`default = ...`), else every use goes to review"
    return command


def _replacement(change: ChangeReport) -> str:
    if change.replacement:
        return f"`{change.replacement}`"
    if change.parameter and change.new_parameter:
        return f"the parameter `{change.new_parameter}` for `{change.parameter}`"
    return "none"


def _facts(report: Report, change: ChangeReport) -> list[tuple[str, str]]:
    facts = [("Member", f"`{change.member}`"), ("Change", KIND_WORDS[change.kind])]
    if change.parameter:
        facts.append(("Parameter", f"`{change.parameter}`"))
    return facts + [
        ("Deprecated since", change.deprecated_in or "not deprecated before this release"),
        ("Replacement", _replacement(change)),
        ("Measured", _measured(report, change)),
        ("Exposure", _exposure(report, change)),
        ("Rewrite", _rewrite(report, change)),
    ]


def to_release_notes(report: Report) -> str:
    """One `###` section per change, most projects proven first, under one `##` heading."""
    name = release_name(report)
    lines = [f"## Changes that can break code using {name}", ""]
    if not report.complete:
        lines += ["> The scan behind these figures was interrupted: they cover part of the corpus.", ""]
    for change in by_impact(report):
        lines += [f"### `{change.member}`: {KIND_WORDS[change.kind]} ({change.id})", ""]
        if change.note:
            lines += [change.note, ""]
        lines += [f"- {label}: {value}" for label, value in _facts(report, change)]
        lines.append("")
    return "\n".join(lines)


def fragment_name(change: ChangeReport) -> str:
    """`<id>.<type>`: the change's id made safe for a file name, then its towncrier type."""
    safe = re.sub(r"[^A-Za-z0-9_-]+", "-", change.id).strip("-") or "change"
    return f"{safe}.{FRAGMENT_TYPE[change.kind]}"


def fragment_text(report: Report, change: ChangeReport) -> str:
    kind = KIND_WORDS[change.kind]
    if change.parameter:  # "`Table.pivot`, parameter `fill`, is renamed"
        what = f"`{change.member}`, parameter `{change.parameter}`, is {kind.removeprefix('parameter ')}"
    else:
        what = f"`{change.member}` is {kind}"
    if _replacement(change) != "none":
        what += f"; use {_replacement(change)} instead"
    parts = [what + ".", f"Measured: {_measured(report, change)}.", f"Exposure: {_exposure(report, change)}."]
    if change.deprecated_in:
        parts.insert(1, f"Deprecated since {change.deprecated_in}.")
    if change.kind in REWRITTEN and (change.kind is not Kind.REMOVED or change.replacement):
        parts.append(f"Rewrite: {_rewrite(report, change)}.")
    return " ".join(parts) + "\n"


def write_towncrier(report: Report, folder: Path) -> list[Path]:
    """One fragment file per change in `folder` (made if missing); returns the files written."""
    if folder.exists() and not folder.is_dir():
        raise FragmentError(f"{folder}: is a file; --format towncrier writes one file per change into a folder")
    names = [fragment_name(c) for c in report.changes]
    clash = sorted({n for n in names if names.count(n) > 1})
    if clash:
        raise FragmentError(f"change ids {', '.join(clash)} give the same fragment file name; make the ids differ")
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for change, name in zip(report.changes, names):
        path = folder / name
        path.write_text(fragment_text(report, change), encoding="utf-8")
        written.append(path)
    return written


__all__ = ["FRAGMENT_TYPE", "FragmentError", "fragment_name", "fragment_text", "to_release_notes", "write_towncrier"]
