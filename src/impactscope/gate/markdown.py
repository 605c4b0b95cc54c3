"""The gate's verdict as Markdown, for a comment on the pull request."""

from __future__ import annotations

from impactscope.gate.rules import Outcome, Status
from impactscope.gate.run import GateRun

# A pull-request comment holds at most 65,536 characters on GitHub (recalled from memory, not
# measured): the rows stop short of it, and say how many are left out.
MAX_CHARS = 60_000


def _cell(text: str) -> str:
    # A table cell ends at a newline or an unescaped pipe; change lists and patterns may hold both.
    return " ".join(text.split()).replace("|", "\\|")


def _row(o: Outcome) -> str:
    m = o.measure
    return (f"| {_cell(o.change.id)} | `{_cell(o.change.member)}` | {o.change.kind.value} | `{o.rule.id}` | "
            f"{_cell(o.message)} | {m.proven} / {m.likely} / {m.possible} |")


def to_markdown(run: GateRun, max_chars: int = MAX_CHARS) -> str:
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
    if unchecked:  # one line per rule: the reason is the same for every change
        reasons: dict[str, list[Outcome]] = {}
        for o in unchecked:
            reasons.setdefault(o.rule.id, []).append(o)
        lines += [f"Not checked: `{rule}` for {len(mine)} changes ({_cell(mine[0].message)})."
                  for rule, mine in reasons.items()] + [""]
    if verdict.unused_waivers:
        lines += ["Waivers not needed (the rule holds): "
                  + ", ".join(f"{_cell(w.change)} `{w.rule}`" for w in verdict.unused_waivers), ""]
    header = ["| change | member | kind | rule | message | projects (proven / likely / at most) |",
              "|---|---|---|---|---|---|"]
    size = sum(len(line) + 1 for line in lines)
    for title, outcomes in (("Failed", failed), ("Waived", waived)):
        if not outcomes:
            continue
        lines += [f"### {title}", "", *header]
        size += sum(len(line) + 1 for line in lines[-4:])
        for shown, outcome in enumerate(outcomes):
            row = _row(outcome)
            if size + len(row) + 200 > max_chars:
                lines.append(f"\n... and {len(outcomes) - shown} more rows: the JUnit file lists them all")
                break
            lines.append(row)
            size += len(row) + 1
        lines.append("")
    return "\n".join(lines)
