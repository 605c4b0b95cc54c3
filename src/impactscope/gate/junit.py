"""The gate's verdict as JUnit XML, for a CI system's test view: one test case per change and rule.

A failed rule is a <failure> with the policy's message; a waived or unchecked one is <skipped>
with its reason. Text comes from change lists and downstream code, so characters XML 1.0 cannot
carry at all (control characters, lone surrogates) are written as visible escapes (\\x01):
a character reference would not help, `&#1;` is not well-formed XML 1.0 either.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

from impactscope.gate.rules import Status
from impactscope.gate.run import GateRun

# XML 1.0 (Fifth Edition), section 2.2, production [2] Char: what a document may contain.
_NOT_XML = re.compile("[^\u0009\u000a\u000d\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def xml_text(text: str) -> str:
    return _NOT_XML.sub(lambda m: f"\\x{ord(m.group()):02x}" if ord(m.group()) < 0x100 else f"\\u{ord(m.group()):04x}", text)


def to_junit(run: GateRun) -> str:
    verdict = run.verdict
    m = verdict.measures
    counts = {status: len(verdict.with_status(status)) for status in Status}
    skipped = counts[Status.WAIVED] + counts[Status.NOT_CHECKED]
    totals = {"tests": str(len(verdict.outcomes)), "failures": str(counts[Status.FAILED]),
              "errors": "0", "skipped": str(skipped)}
    suites = ET.Element("testsuites", {"name": "impactscope gate", **totals})
    name = f"{m.library} {m.release or ''}".strip() + f": policy {run.policy.path}"
    suite = ET.SubElement(suites, "testsuite", {"name": xml_text(name), **totals})
    for outcome in verdict.outcomes:
        change = outcome.change
        case = ET.SubElement(suite, "testcase", {
            "classname": xml_text(f"{m.library}.{change.id}"),
            "name": xml_text(f"{outcome.rule.id} ({change.member}, {change.kind.value})"),
        })
        message = xml_text(outcome.message)
        if outcome.status is Status.FAILED:
            failure = ET.SubElement(case, "failure", {"message": message, "type": outcome.rule.id})
            failure.text = xml_text(
                f"{change.id} {change.member} ({change.kind.value}): {outcome.message}\n"
                f"rule: {outcome.rule.short}\nhow to act: {outcome.rule.help}\n"
                f"downstream: {outcome.measure.proven} proven / {outcome.measure.likely} likely / "
                f"{outcome.measure.possible} at most of {outcome.measure.users} projects that use {m.library}"
            )
        elif outcome.status in (Status.WAIVED, Status.NOT_CHECKED):
            ET.SubElement(case, "skipped", {"message": message})
    ET.indent(suites)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(suites, encoding="unicode") + "\n"
