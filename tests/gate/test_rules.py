from __future__ import annotations

import datetime
from dataclasses import replace

import pytest
from packaging.version import Version

from impactscope.changes import Change, Kind
from impactscope.gate.measures import ChangeMeasure, Measures
from impactscope.gate.policy import Deprecation, Limits, Policy, Waiver
from impactscope.gate.previous import Warned
from impactscope.gate.rules import RULES, Status, deprecation_period, evaluate, releases_with_warning


def measure(change_id="C-1", kind=Kind.REMOVED, proven=5, possible=9, exposed=2, users=100,
            low=0.02, high=0.15, **change) -> ChangeMeasure:
    return ChangeMeasure(
        change=Change(id=change_id, member=change.pop("member", "lib.f"), kind=kind, **change),
        proven=proven, likely=proven, possible=possible, share=proven / max(users, 1), share_low=low,
        share_high=high, users=users, confidence=0.95, exposed=exposed, shielded=0, unconstrained=0, sites=proven,
    )


def measures(*changes: ChangeMeasure, release="3.0") -> Measures:
    return Measures("lib", release, True, 120, 100, 0, changes)


def statuses(verdict):
    return {(o.change.id, o.rule.id): o.status for o in verdict.outcomes}


NO_PERIOD = Deprecation(min_releases=0, require_replacement=False, require_warning=False)


def test_a_limit_holds_at_its_value_and_fails_above_it():
    policy = Policy(Limits(max_proven_projects=5, max_possible_projects=8, max_exposed_projects=2), deprecation=NO_PERIOD)
    verdict = evaluate(policy, measures(measure(proven=5, possible=9, exposed=2)))
    assert statuses(verdict) == {
        ("C-1", "max_proven_projects"): Status.HELD,
        ("C-1", "max_possible_projects"): Status.FAILED,
        ("C-1", "max_exposed_projects"): Status.HELD,
    }
    failed = verdict.failed[0]
    assert failed.message == "9 projects hit at most (any certainty); the policy allows 8"
    assert not verdict.holds


def test_a_kind_table_overrides_the_limit_for_that_kind_only():
    policy = Policy(Limits(max_proven_projects=10), {Kind.BEHAVIOUR_CHANGED: Limits(max_proven_projects=3)}, NO_PERIOD)
    verdict = evaluate(policy, measures(measure("A", proven=5), measure("B", Kind.BEHAVIOUR_CHANGED, proven=5)))
    assert statuses(verdict) == {("A", "max_proven_projects"): Status.HELD, ("B", "max_proven_projects"): Status.FAILED}


def test_share_rules_read_the_two_ends_of_the_interval():
    policy = Policy(Limits(max_share_low=0.05, max_share_high=0.10), deprecation=NO_PERIOD)
    verdict = evaluate(policy, measures(measure(low=0.06, high=0.09)))
    assert statuses(verdict) == {("C-1", "max_share_low"): Status.FAILED, ("C-1", "max_share_high"): Status.HELD}
    assert verdict.failed[0].message == (
        "the share's interval starts at 6.0% of the 100 projects that use the library (95% interval); "
        "the policy allows 5.0%"
    )


def test_without_users_there_is_no_share_to_check():
    policy = Policy(Limits(max_share_high=0.1), deprecation=NO_PERIOD)
    verdict = evaluate(policy, measures(measure(users=0, proven=0, possible=0, low=0.0, high=1.0)))
    assert [o.status for o in verdict.outcomes] == [Status.NOT_CHECKED]
    assert verdict.holds


def test_a_waiver_turns_a_failure_into_waived_with_its_reason_and_unused_waivers_are_kept():
    waivers = (Waiver("C-1", "max_proven_projects", "users notified", 0), Waiver("C-1", "max_exposed_projects", "x", 1))
    policy = Policy(Limits(max_proven_projects=1, max_exposed_projects=10), deprecation=NO_PERIOD, waivers=waivers)
    verdict = evaluate(policy, measures(measure(proven=5)))
    assert statuses(verdict)[("C-1", "max_proven_projects")] is Status.WAIVED
    assert verdict.outcomes[0].message.endswith("(waived: users notified)")
    assert verdict.holds
    assert verdict.unused_waivers == (waivers[1],)


def test_a_removal_must_name_a_replacement():
    policy = Policy(deprecation=Deprecation(min_releases=0, require_warning=False))
    verdict = evaluate(policy, measures(measure("A"), measure("B", replacement="lib.g"),
                                        measure("C", Kind.PARAMETER_REMOVED, parameter="x")))
    assert statuses(verdict) == {("A", "require_replacement"): Status.FAILED, ("B", "require_replacement"): Status.HELD}


# PEP 387, "Making Incompatible Changes", step 3: "Wait for the warning to appear in at least two
# minor Python versions of the same major version, or one minor version in an older major version
# (e.g., for a warning in Python 3.10.0, you either wait until at least Python 3.12 or Python 4.0
# to make the change)."
@pytest.mark.parametrize("deprecated, release, status", [
    ("3.10.0", "3.12", Status.HELD),  # "wait until at least Python 3.12"
    ("3.10.0", "3.11", Status.FAILED),  # one minor version of the same major is not enough
    ("3.10.0", "4.0", Status.HELD),  # "or Python 4.0": one minor version in an older major version
    ("3.10.0", "3.13", Status.HELD),
    ("2.4", "2.6.0rc1", Status.HELD),
    ("3.0", "3.0", Status.FAILED),  # the warning never shipped before the change
    ("3.1", "3.0", Status.FAILED),
])
def test_the_deprecation_period_follows_pep_387(deprecated, release, status):
    change = Change("C-1", "lib.f", Kind.REMOVED, deprecated_in=Version(deprecated))
    got, message = deprecation_period(change, Version(release), Deprecation(min_releases=2))
    assert got is status, message


def test_releases_with_the_warning_are_counted_within_a_major_version():
    assert releases_with_warning(Version("2.4"), Version("2.6")) == 2  # 2.4 and 2.5
    assert releases_with_warning(Version("2.4.3"), Version("2.5.0")) == 1
    assert releases_with_warning(Version("2"), Version("2.2")) == 2


def test_no_deprecated_in_or_no_release_fails_the_period_with_the_fix():
    plain = Change("C-1", "lib.f", Kind.REMOVED)
    assert deprecation_period(plain, Version("3.0"), Deprecation()) == (
        Status.FAILED, "no deprecated_in: the change ships in 3.0 without a deprecation period")
    status, message = deprecation_period(replace(plain, deprecated_in=Version("2.0")), None, Deprecation())
    assert status is Status.FAILED and "no [library] release" in message


def test_a_stated_time_is_counted_between_the_release_dates():
    # PEP 387 also prefers a time: "It is preferred, though, to wait 5 years before removal".
    dates = {Version("2.4"): datetime.date(2021, 1, 1), Version("2.9"): datetime.date(2026, 1, 1)}
    five_years = Deprecation(min_releases=2, min_days=5 * 365, release_dates=dates)
    change = Change("C-1", "lib.f", Kind.REMOVED, deprecated_in=Version("2.4"))
    assert deprecation_period(change, Version("2.9"), five_years) == (
        Status.HELD, "deprecated in 2.4: 5 releases with the warning before 2.9, 1826 days")
    status, message = deprecation_period(change, Version("2.9"), replace(five_years, min_days=2000))
    assert status is Status.FAILED and message.endswith("the policy asks for 2000 days")
    status, message = deprecation_period(change, Version("2.8"), five_years)
    assert status is Status.FAILED and "release_dates has no day for 2.8" in message


def test_warned_before_is_not_checked_without_the_previous_release_and_checked_with_it():
    policy = Policy(deprecation=Deprecation(min_releases=0, require_replacement=False))
    changes = measures(measure("A", member="lib.f"), measure("B", member="lib.g"),
                       measure("P", Kind.PARAMETER_REMOVED, member="lib.h", parameter="x"),
                       measure("D", Kind.BEHAVIOUR_CHANGED, member="lib.k"))
    assert {o.status for o in evaluate(policy, changes).outcomes} == {Status.NOT_CHECKED}
    warned = Warned("2.4", frozenset({("lib.f", Kind.REMOVED, None), ("lib.h", Kind.PARAMETER_REMOVED, "x")}))
    assert statuses(evaluate(policy, changes, warned)) == {
        ("A", "warned_before"): Status.HELD, ("B", "warned_before"): Status.FAILED,
        ("P", "warned_before"): Status.HELD,  # behaviour changes: harvest cannot read what they announce
    }


def test_every_rule_has_an_id_title_descriptions_and_help():
    for rule_id, rule in RULES.items():
        assert rule.id == rule_id and rule.title and rule.short and rule.full and rule.help
