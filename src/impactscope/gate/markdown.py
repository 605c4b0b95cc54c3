"""The gate's verdict as Markdown, for a comment on the pull request."""

from __future__ import annotations

from impactscope.gate.rules import Outcome, Status
from impactscope.gate.run import GateRun


def _cell(text: str) -> str:
    # A table cell ends at a newline or an unescaped pipe; change lists and patterns may hold both.
    return " ".join(text.split()).replace("|", "\\|")


def _row(o: Outcome) -> str:
    m = o.measure
    return (f"| {_cell(o.change.id)} | `{_cell(o.change.member)}` | {o.change.kind.value} | `{o.rule.id}` | "
            f"{_cell(o.message)} | {m.proven} / {m.likely} / {m.possible} |")


def to_markdown(run: GateRun) -> str:
    verdict = run.verdict
    m = verdict.measures
    failed, waived = verdict.failed, verdict.with_status(Status.WAIVED)
    unchecked = verdict.with_status(Status.NOT_CHECKED)
    what = f"{m.library} {m.release or ''}".strip()
    head = ("failed" if failed else "passed")
    lines = [
        f"## impactscope gate {head}: {what}",
        "",
        f"{len(verdict.outcomes)} checks on {len(m.changes)} changes against `{_cell(str(run.policy.path))}`: "
        f"{len(failed)} failed, {len(waived)} waived, {len(verdict.with_status(Status.HELD))} held, "
        f"{len(unchecked)} not checked. Downstream: {m.projects} projects scanned, {m.users} use {m.library}.",
        "",
    ]
    header = ["| change | member | kind | rule | message | projects (proven / likely / at most) |",
              "|---|---|---|---|---|---|"]
    for title, outcomes in (("Failed", failed), ("Waived", waived), ("Not checked", unchecked)):
        if outcomes:
            lines += [f"### {title}", "", *header, *(_row(o) for o in outcomes), ""]
    if verdict.unused_waivers:
        lines += ["Waivers not needed (the rule holds): "
                  + ", ".join(f"{_cell(w.change)} `{w.rule}`" for w in verdict.unused_waivers), ""]
    return "\n".join(lines)
