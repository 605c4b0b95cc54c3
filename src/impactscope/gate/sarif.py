"""The gate's verdict as SARIF 2.1.0, for a code-scanning view.

The downstream sites are in other people's repositories, so each result points at the library's
own line (gate/locate.py), with a URI relative to `SRCROOT` (the library's repository root), and
carries the downstream counts, the share's interval and the top patterns in its message and
properties. Without the head source a result points at the rule's key in the policy file.
"""

from __future__ import annotations

import hashlib
import json
import re
from pathlib import Path
from typing import Any
from urllib.parse import quote

from impactscope import __version__
from impactscope.gate.rules import RULES, Outcome, Status
from impactscope.gate.run import GateRun

BASE = "SRCROOT"
# Limits of a common code-scanning service (GitHub's "SARIF results exceed limit" page, read
# 2026-12): 25,000 results per run are accepted but only the top 5,000 shown, and the upload is
# at most 10 MB gzip-compressed. Keeping the file itself under 10 MB keeps it within any gzip.
MAX_RESULTS = 5000
MAX_BYTES = 10_000_000
TOP_PATTERNS = 5


def to_sarif(run: GateRun, *, max_results: int = MAX_RESULTS, max_bytes: int = MAX_BYTES) -> str:
    outcomes = [o for o in run.verdict.outcomes if o.status in (Status.FAILED, Status.WAIVED)]
    outcomes.sort(key=lambda o: o.status is not Status.FAILED)  # failures first, when the cap cuts
    rules = list(RULES)
    results = [_result(run, o, rules.index(o.rule.id)) for o in outcomes]
    kept = min(len(results), max_results)
    while True:
        text = _document(run, results[:kept], len(results))
        if len(text.encode("utf-8")) <= max_bytes or kept == 0:
            return text
        kept = kept * 9 // 10  # results are alike in size: a few passes find the cut


def _document(run: GateRun, results: list[dict[str, Any]], total: int) -> str:
    m = run.verdict.measures
    properties: dict[str, Any] = {
        "library": m.library,
        "release": m.release,
        "policy": str(run.policy.path),
        "projects": m.projects,
        "projectsUsingLibrary": m.users,
        "filesFailed": m.files_failed,
        "verdict": "held" if run.verdict.holds else "failed",
        "resultsTotal": total,
        "resultsWritten": len(results),
    }
    if len(results) < total:
        properties["resultsCapped"] = (
            f"{total - len(results)} of {total} results left out to stay within {MAX_RESULTS} results and "
            f"{MAX_BYTES} bytes (common code-scanning limits); the JUnit and Markdown files list them all"
        )
    if not run.places:
        properties["locations"] = "no library source given (--head-source): results point at the policy's rule"
    document = {
        "$schema": "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json",
        "version": "2.1.0",
        "runs": [
            {
                "tool": {"driver": {"name": "impactscope", "version": __version__, "semanticVersion": __version__,
                                    "rules": [_rule(r) for r in RULES.values()]}},
                "originalUriBaseIds": {
                    BASE: {"description": {"text": "The root of the library's repository."}},
                },
                "columnKind": "unicodeCodePoints",
                "results": results,
                "properties": properties,
            }
        ],
    }
    return json.dumps(document, indent=2, ensure_ascii=False) + "\n"


def _rule(rule: Any) -> dict[str, Any]:
    return {
        "id": rule.id,
        "name": "".join(part.title() for part in rule.id.split("_")),
        "shortDescription": {"text": rule.short},
        "fullDescription": {"text": rule.full},
        "help": {"text": _plain(rule.help), "markdown": f"**{rule.title}.** {rule.help}"},
        "defaultConfiguration": {"level": "error"},
        "properties": {"tags": ["impactscope", "api-change"]},
    }


def _plain(markdown: str) -> str:
    return markdown.replace("`", "")


def _result(run: GateRun, outcome: Outcome, index: int) -> dict[str, Any]:
    m = outcome.measure
    change = m.change
    patterns = [{"pattern": p.pattern, "projects": p.projects, "sites": p.sites} for p in m.patterns[:TOP_PATTERNS]]
    top = "; ".join(f"{p['pattern']} ({p['projects']} projects)" for p in patterns[:3])
    text = (
        f"{change.id} {change.member} ({change.kind.value}): {outcome.message}. Downstream: "
        f"{m.proven} proven / {m.likely} likely / {m.possible} at most of {m.users} projects that use "
        f"{run.verdict.measures.library}; share {m.share:.1%} ({m.share_low:.1%}-{m.share_high:.1%}, "
        f"{m.confidence:.0%} interval); {m.exposed} exposed."
        + (f" Top patterns: {top}." if top else "")
    )
    result: dict[str, Any] = {
        "ruleId": outcome.rule.id,
        "ruleIndex": index,
        "level": "error",
        "message": {"text": text},
        "locations": [_location(run, outcome)],
        "partialFingerprints": {"impactscopeChange/v1": _fingerprint(outcome)},
        "properties": {
            "change": change.id,
            "member": change.member,
            "kind": change.kind.value,
            "status": outcome.status.value,
            "projects": {"proven": m.proven, "likely": m.likely, "atMost": m.possible},
            "projectsUsingLibrary": m.users,
            "share": {"estimate": m.share, "low": m.share_low, "high": m.share_high, "confidence": m.confidence},
            "exposure": {"exposed": m.exposed, "shielded": m.shielded, "unconstrained": m.unconstrained},
            "sites": m.sites,
            "patterns": patterns,
        },
    }
    if outcome.waiver is not None:
        result["suppressions"] = [{"kind": "external", "status": "accepted", "justification": outcome.waiver.reason}]
    return result


def _fingerprint(outcome: Outcome) -> str:
    # Stable while the change and the rule are: lines may move between commits, the alert stays one.
    key = "\0".join((outcome.rule.id, outcome.change.id, outcome.change.member, outcome.change.parameter or ""))
    return hashlib.sha256(key.encode("utf-8")).hexdigest()[:32]


def _location(run: GateRun, outcome: Outcome) -> dict[str, Any]:
    place = run.places.get(outcome.change.id)
    if place is not None:
        path, line, column, what = place.path, place.line, place.column, f"{outcome.change.member}: {place.what}"
    else:
        path = (run.policy.path or Path("policy.toml")).resolve()
        line, column = _key_line(run.policy.text, outcome.rule.id)
        what = f"the policy's {outcome.rule.id}"
    return {
        "physicalLocation": {"artifactLocation": _artifact(path, run.source_root),
                             "region": {"startLine": line, "startColumn": column}},
        "message": {"text": what},
    }


def _artifact(path: Path, root: Path) -> dict[str, Any]:
    try:
        relative = path.resolve().relative_to(root)
    except ValueError:
        return {"uri": path.resolve().as_uri()}  # outside the repository: an absolute URI, no base
    return {"uri": quote(relative.as_posix()), "uriBaseId": BASE}


_KEYS = {"deprecation_period": ("min_releases", "min_days"), "warned_before": ("require_warning",)}


def _key_line(text: str, rule_id: str) -> tuple[int, int]:
    """The line (and 1-based column) where the policy sets the rule, else its first line."""
    keys = _KEYS.get(rule_id, (rule_id,))
    for number, row in enumerate(text.split("\n"), start=1):
        match = re.match(r"\s*(\w+)\s*=", row)
        if match and match.group(1) in keys:
            return number, match.start(1) + 1
    return 1, 1
