from __future__ import annotations

import datetime
from pathlib import Path

import pytest
from packaging.version import Version

from impactscope.changes import Kind
from impactscope.gate.policy import Limits, PolicyError, load_policy, parse_policy

from .conftest import POLICIES

FULL = b"""
[limits]
max_proven_projects = 10
max_share_high = 0.05
max_exposed_projects = 5

[limits.removed]
max_proven_projects = 3
max_share_low = 0.01

[deprecation]
min_releases = 3
min_days = 365
release_dates = { "2.4" = 2025-03-01, "3.0" = 2026-06-01 }
require_replacement = false
require_warning = false

[[waiver]]
change = "HF-2"
rule = "max_proven_projects"
reason = "announced in 2.2; downstream notified"
"""


def parse(text: bytes | str):
    return parse_policy(text.encode() if isinstance(text, str) else text, Path("p.toml"))


def test_a_full_policy_is_read_with_kind_tables_over_the_defaults():
    policy = parse(FULL)
    assert policy.limits == Limits(max_proven_projects=10, max_share_high=0.05, max_exposed_projects=5)
    assert policy.limits_for(Kind.REMOVED) == Limits(
        max_proven_projects=3, max_share_low=0.01, max_share_high=0.05, max_exposed_projects=5
    )
    assert policy.limits_for(Kind.RENAMED) == policy.limits
    assert policy.deprecation.min_releases == 3 and policy.deprecation.min_days == 365
    assert policy.deprecation.release_dates[Version("2.4")] == datetime.date(2025, 3, 1)
    assert not policy.deprecation.require_replacement and not policy.deprecation.require_warning
    waiver = policy.waiver("HF-2", "max_proven_projects")
    assert waiver is not None and waiver.reason == "announced in 2.2; downstream notified"
    assert policy.waiver("HF-2", "max_share_high") is None


def test_an_empty_policy_asks_for_the_pep_387_defaults_only():
    policy = parse(b"")
    assert policy.limits == Limits()
    assert policy.deprecation.min_releases == 2 and policy.deprecation.require_replacement


@pytest.mark.parametrize("text, words", [
    ("[limit]\nmax_proven_projects = 1", ["unknown top-level key(s) limit", "[limits]"]),
    ("[limits]\nmax_projects = 1", ["[limits]: unknown key(s) max_projects", "max_proven_projects"]),
    ("[limits.deleted]\nmax_proven_projects = 1", ["[limits.deleted]", "unknown change kind", "removed"]),
    ("[limits]\nmax_proven_projects = true", ["max_proven_projects must be a whole number", "True"]),
    ("[limits]\nmax_proven_projects = -1", ["max_proven_projects must be a whole number"]),
    ("[limits]\nmax_proven_projects = 2.5", ["max_proven_projects must be a whole number"]),
    ("[limits.removed]\nmax_share_high = 5", ["[limits.removed]: max_share_high must be a share between 0 and 1"]),
    ("[limits]\nmax_share_low = \"5%\"", ["max_share_low must be a share"]),
    ("[deprecation]\nmin_release = 2", ["[deprecation]: unknown key(s) min_release"]),
    ("[deprecation]\nmin_releases = \"2\"", ["min_releases must be a whole number"]),
    ("[deprecation]\nrequire_replacement = 1", ["require_replacement must be true or false"]),
    ("[deprecation]\nmin_days = 30", ["min_days needs release_dates"]),
    ("[deprecation]\nrelease_dates = { \"two\" = 2025-01-01 }", ["release_dates key 'two' is not a PEP 440 version"]),
    ("[deprecation]\nrelease_dates = { \"2.0\" = \"2025-01-01\" }", ["release_dates '2.0' must be a TOML date"]),
    ("[waiver]\nchange = \"HF-1\"", ["write [[waiver]], not [waiver]"]),
    ("[[waiver]]\nchange = \"HF-1\"\nrule = \"max_proven_projects\"", ["[[waiver]] #1: reason must be a non-empty string"]),
    ("[[waiver]]\nchange = \"HF-1\"\nrule = \"max_proven_projects\"\nreason = \"  \"", ["reason must be a non-empty"]),
    ("[[waiver]]\nchange = \"HF-1\"\nrule = \"max_sites\"\nreason = \"r\"", ["unknown rule 'max_sites'", "deprecation_period"]),
    ("[[waiver]]\nchange = \"HF-1\"\nrule = \"warned_before\"\nreason = \"r\"\nuntil = \"3.1\"", ["unknown key(s) until"]),
    ("[[waiver]]\nchange = \"A\"\nrule = \"warned_before\"\nreason = \"r\"\n[[waiver]]\nchange = \"A\"\n"
     "rule = \"warned_before\"\nreason = \"s\"", ["[[waiver]] #2", "again (also [[waiver]] #1)"]),
    ("[limits\n", ["invalid TOML"]),
])
def test_bad_policies_are_input_errors_naming_the_file_and_the_entry(text, words):
    with pytest.raises(PolicyError) as caught:
        parse(text)
    message = str(caught.value)
    assert isinstance(caught.value, ValueError) and message.startswith("p.toml: ")
    for word in words:
        assert word in message


def test_a_policy_that_is_not_utf8_or_missing_is_an_input_error(tmp_path):
    with pytest.raises(PolicyError, match="not UTF-8"):
        parse(b"\xff\xfe")
    with pytest.raises(PolicyError, match="policy not found"):
        load_policy(tmp_path / "absent.toml")


def test_a_waiver_for_a_change_the_list_does_not_have_is_refused():
    policy = parse(FULL)
    policy.check_waivers({"HF-2"})
    with pytest.raises(PolicyError, match=r"\[\[waiver\]\] #1 \(change 'HF-2'.*has no change 'HF-2'; use one of its ids \(HF-1\)"):
        policy.check_waivers({"HF-1"})


@pytest.mark.parametrize("name", ["strict.toml", "lenient.toml"])
def test_the_example_policies_load(name):
    assert load_policy(POLICIES / name).path == POLICIES / name
