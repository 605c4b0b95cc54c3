from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest
from lxml import etree

from impactscope.gate.junit import to_junit, xml_text
from impactscope.gate.rules import Status
from impactscope.gate.run import run_gate

from .conftest import POLICIES, PREVIOUS


def test_one_test_case_per_change_and_rule_with_failures_carrying_the_message(demo_results):
    run = run_gate(demo_results, POLICIES / "strict.toml", previous=PREVIOUS)
    text = to_junit(run)
    root = ET.fromstring(text.encode("utf-8"))
    cases = root.findall("./testsuite/testcase")
    assert len(cases) == len(run.verdict.outcomes) == int(root.get("tests"))
    assert len({(c.get("classname"), c.get("name")) for c in cases}) == len(cases)
    failures = root.findall("./testsuite/testcase/failure")
    assert len(failures) == len(run.verdict.failed) == int(root.get("failures"))
    messages = {f.get("message") for f in failures}
    assert {o.message for o in run.verdict.failed} == messages
    assert etree.fromstring(text.encode("utf-8")).tag == "testsuites"  # lxml reads it too


def test_control_characters_are_escaped_so_any_parser_reads_the_file(demo_results, tmp_path):
    policy = tmp_path / "policy.toml"
    # TOML's \\u escapes let a reason hold characters XML 1.0 forbids (section 2.2, Char).
    policy.write_text(
        '[limits]\nmax_proven_projects = 1\n[deprecation]\nmin_releases = 0\n'
        '[[waiver]]\nchange = "HF-1"\nrule = "max_proven_projects"\nreason = "bell \\u0007 escape \\u001b nul-ish \\u0001 \\ufffe"\n',
        encoding="utf-8",
    )
    run = run_gate(demo_results, policy)
    text = to_junit(run)
    for parse in (lambda b: ET.fromstring(b), lambda b: etree.fromstring(b)):
        root = parse(text.encode("utf-8"))
        skipped = [c for c in root.iter("skipped") if "bell" in c.get("message")]
        assert skipped and "\\x07" in skipped[0].get("message") and "\\x1b" in skipped[0].get("message")
    waived = [o for o in run.verdict.outcomes if o.status is Status.WAIVED]
    assert len(waived) == 1


@pytest.mark.parametrize("raw, escaped", [
    ("a\x00b", "a\\x00b"), ("\x0b\x0c", "\\x0b\\x0c"), ("tab\tnl\ncr\r", "tab\tnl\ncr\r"),
    ("\ud800", "\\ud800"), ("\uffff", "\\uffff"), ("é✓\U0001f600", "é✓\U0001f600"),
])
def test_xml_text_keeps_what_xml_allows_and_escapes_the_rest(raw, escaped):
    assert xml_text(raw) == escaped
