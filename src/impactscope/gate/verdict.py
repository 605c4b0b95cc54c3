"""The gate's verdict on the terminal: one screen (24 lines of 100 columns) whatever the size."""

from __future__ import annotations

import re

from impactscope.gate.rules import Outcome, Status
from impactscope.gate.run import GateRun
from impactscope.report.views import plural

LINES = 24
COLUMNS = 100


def _fit(text: str) -> str:
    text = re.sub(r"\s", " ", text)  # a message's newline or tab never breaks the screen's lines
    return text if len(text) <= COLUMNS else text[: COLUMNS - 1] + "…"


def to_terminal(run: GateRun) -> str:
    verdict = run.verdict
    m = verdict.measures
    failed = verdict.failed
    waived = verdict.with_status(Status.WAIVED)
    what = f"{m.library} {m.release or ''}".strip()
    if failed:
        rules = len({o.rule.id for o in failed})
        changes = len({o.change.id for o in failed})
        head = (f"gate FAILED: {plural(rules, 'rule')} failed ({plural(len(failed), 'check')}) for "
                f"{changes} of {plural(len(m.changes), 'change')} of {what}")
    else:
        head = (f"gate passed: every rule holds for the {plural(len(m.changes), 'change')} of {what}"
                f"{f' ({len(waived)} waived)' if waived else ''}")
    failures = f"; the scan failed on {plural(m.files_failed, 'file')}" if m.files_failed else ""
    lines = [head, f"{plural(m.projects, 'project')} scanned, {m.users} use {m.library}{failures}; "
                   f"policy {run.policy.path}",
             f"{'rule':<24}{'held':>8}{'failed':>8}{'waived':>8}{'not checked':>13}"]
    for rule in dict.fromkeys(o.rule for o in verdict.outcomes):
        mine = [o for o in verdict.outcomes if o.rule is rule]
        n = {s: sum(o.status is s for o in mine) for s in Status}
        lines.append(f"{rule.id:<24}{n[Status.HELD]:>8}{n[Status.FAILED]:>8}{n[Status.WAIVED]:>8}"
                     f"{n[Status.NOT_CHECKED]:>13}")
    tail = []
    if verdict.unused_waivers:
        tail.append("waivers not needed (the rule holds): "
                    + ", ".join(f"{w.change} {w.rule}" for w in verdict.unused_waivers))
    listed: tuple[Outcome, ...] = failed or waived
    if listed:
        lines.append("failed:" if failed else "waived:")
        room = LINES - len(lines) - len(tail)
        rows = [f"  {o.change.id} {o.rule.id}: {o.message}" for o in listed]
        if len(rows) > room:  # one line per rule instead, naming its changes (the messages: --junit, --markdown)
            by_rule: dict[str, list[str]] = {}
            for o in listed:
                by_rule.setdefault(o.rule.id, []).append(o.change.id)
            rows = [f"  {rule} ({len(ids)}): {', '.join(ids)}" for rule, ids in by_rule.items()]
        if len(rows) > room:
            rows = rows[: room - 1] + [f"  ... and {len(rows) - room + 1} more: see --junit or --markdown"]
        lines += rows
    lines += tail
    return "\n".join(_fit(line) for line in lines[:LINES]) + "\n"
