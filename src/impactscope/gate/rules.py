"""The gate's rules: each has an id (its policy key), a message per change, and may be waived.

`evaluate` checks every change against every rule the policy sets and gives one `Outcome` per
(change, rule): held, failed, waived (failed, with a waiver's reason) or not checked (the
evidence is missing, and the message says what to give).
"""

from __future__ import annotations

import enum
from dataclasses import dataclass
from packaging.version import Version

from impactscope.changes import Change, Kind
from impactscope.gate.measures import ChangeMeasure, Measures
from impactscope.gate.policy import Deprecation, Limits, Policy, Waiver
from impactscope.gate.previous import CHECKED_KINDS, Warned

# A removal or rename leaves callers with nothing to call: the policy may ask that it name a successor.
REPLACED_KINDS = frozenset({Kind.REMOVED, Kind.RENAMED, Kind.MOVED})


class Status(str, enum.Enum):
    HELD = "held"
    FAILED = "failed"
    WAIVED = "waived"
    NOT_CHECKED = "not checked"


@dataclass(frozen=True)
class Rule:
    id: str
    title: str  # a few words, for headers
    short: str  # one sentence
    full: str  # what it measures and why
    help: str  # how to act on a failure (Markdown)


RULES: dict[str, Rule] = {r.id: r for r in (
    Rule("max_proven_projects", "Projects proven broken",
          "A change may break at most the policy's number of projects with a resolved use.",
          "Counts the scanned projects where the resolver proved a use of the changed member "
          "(confidence `resolved`) and compares the count with `max_proven_projects`.",
          "Reduce the change's reach (keep an alias, deprecate first), raise `max_proven_projects` "
          "for the change's kind, or add a `[[waiver]]` with a reason."),
    Rule("max_possible_projects", "Projects possibly broken",
          "A change may touch at most the policy's number of projects, counting every level of certainty.",
          "Counts the projects with any finding (resolved, inferred or possible): the upper bound of "
          "the change's reach, compared with `max_possible_projects`.",
          "Look at the possible sites in the report; if they are not uses, the bound is loose. "
          "Otherwise act as for a proven breakage, or waive with a reason."),
    Rule("max_share_low", "Share of users, low end",
          "Even the low end of the share's interval must stay within the policy's share.",
          "The share of the scanned projects that use the library which the change breaks, proven, "
          "as a Wilson score interval; fails when the interval's low end exceeds `max_share_low`, "
          "i.e. when the corpus shows the share is above the limit.",
          "The corpus says many users depend on this member: keep it, or deprecate it for longer."),
    Rule("max_share_high", "Share of users, high end",
          "The high end of the share's interval (counting possible uses) must stay within the policy's share.",
          "The high end of the Wilson score interval of the share of users hit at any level of "
          "certainty; fails when it exceeds `max_share_high`: the corpus cannot rule out a share "
          "above the limit.",
          "Scan a larger corpus to narrow the interval, or act as for a proven breakage."),
    Rule("max_exposed_projects", "Projects exposed by their requirements",
          "At most the policy's number of proven projects may declare a requirement that admits the release.",
          "Counts proven projects whose declared requirement on the library admits the new release "
          "(they will install it and break), compared with `max_exposed_projects`.",
          "Exposed projects break on their next install: notify them, or keep the member for a release."),
    Rule("deprecation_period", "Deprecation period (PEP 387)",
          "A change must have been deprecated for the policy's number of releases (and days) before it ships.",
          "PEP 387: wait for the warning to appear in at least two minor versions of the same major "
          "version, or one minor version in an older major version. The change list's `deprecated_in` "
          "and `[library] release` decide; `min_days` also asks for time between the releases' dates.",
          "Ship a deprecation warning first and set `deprecated_in` in the change list, or postpone "
          "the change; waive only with a reason (PEP 387 lets the steering body shorten the period)."),
    Rule("require_replacement", "Replacement named",
          "A removal, rename or move must name its replacement.",
          "A removed, renamed or moved member needs `replacement` in the change list, so that users "
          "and the rewrite know what to call instead.",
          "Add `replacement = \"pkg.new_name\"` to the change, or waive with a reason (e.g. no successor)."),
    Rule("warned_before", "Warned in the previous release",
          "A member removed or changed now must have warned in the previous release.",
          "Harvests the previous release's source (or reads its harvest) for deprecation warnings "
          "and checks that the changed member (or parameter) was among them.",
          "Add a deprecation warning to the member and release it before removing the member, or waive."),
)}


@dataclass(frozen=True)
class Outcome:
    rule: Rule
    measure: ChangeMeasure
    status: Status
    message: str
    waiver: Waiver | None = None

    @property
    def change(self) -> Change:
        return self.measure.change


@dataclass(frozen=True)
class Verdict:
    measures: Measures
    outcomes: tuple[Outcome, ...]
    unused_waivers: tuple[Waiver, ...]

    @property
    def failed(self) -> tuple[Outcome, ...]:
        return tuple(o for o in self.outcomes if o.status is Status.FAILED)

    @property
    def holds(self) -> bool:
        return not self.failed

    def with_status(self, status: Status) -> tuple[Outcome, ...]:
        return tuple(o for o in self.outcomes if o.status is status)


def evaluate(policy: Policy, measures: Measures, warned: Warned | None = None) -> Verdict:
    release = Version(measures.release) if measures.release else None
    outcomes: list[Outcome] = []
    used: set[Waiver] = set()
    for m in measures.changes:
        checks = _checks(policy.limits_for(m.change.kind), policy.deprecation, m, release, warned)
        for rule_id, (status, message) in checks:
            waiver = policy.waiver(m.change.id, rule_id) if status is Status.FAILED else None
            if waiver is not None:
                used.add(waiver)
                status, message = Status.WAIVED, f"{message} (waived: {waiver.reason})"
            outcomes.append(Outcome(RULES[rule_id], m, status, message, waiver))
    unused = tuple(w for w in policy.waivers if w not in used)
    return Verdict(measures, tuple(outcomes), unused)


Check = tuple[str, tuple[Status, str]]


def _checks(limits: Limits, dep: Deprecation, m: ChangeMeasure, release: Version | None,
            warned: Warned | None) -> list[Check]:
    out: list[Check] = []
    counts: tuple[tuple[str, int | None, int, str], ...] = (
        ("max_proven_projects", limits.max_proven_projects, m.proven, "projects proven broken"),
        ("max_possible_projects", limits.max_possible_projects, m.possible, "projects hit at most (any certainty)"),
        ("max_exposed_projects", limits.max_exposed_projects, m.exposed,
         "proven projects whose requirement admits the release"),
    )
    for rule_id, limit, value, what in counts:
        if limit is not None:
            out.append((rule_id, _at_most(value, limit, what)))
    shares = (
        ("max_share_low", limits.max_share_low, m.share_low, "the share's interval starts at"),
        ("max_share_high", limits.max_share_high, m.share_high, "the share's interval reaches"),
    )
    for rule_id, limit, value, what in shares:
        if limit is None:
            continue
        if m.users == 0:
            out.append((rule_id, (Status.NOT_CHECKED, "no scanned project uses the library: no share to measure")))
            continue
        status = Status.HELD if value <= limit else Status.FAILED
        out.append((rule_id, (status, f"{what} {value:.1%} of the {m.users} projects that use the library "
                                      f"({m.confidence:.0%} interval); the policy allows {limit:.1%}")))
    if dep.min_releases > 0 or dep.min_days is not None:
        out.append(("deprecation_period", deprecation_period(m.change, release, dep)))
    if dep.require_replacement and m.change.kind in REPLACED_KINDS:
        if m.change.replacement:
            out.append(("require_replacement", (Status.HELD, f"replacement: {m.change.replacement}")))
        else:
            out.append(("require_replacement", (Status.FAILED, f"{m.change.kind.value} with no replacement named; "
                                                             "add replacement = \"...\" to the change")))
    if dep.require_warning and m.change.kind in CHECKED_KINDS:
        out.append(("warned_before", _warned(m.change, warned)))
    return out


def _at_most(value: int, limit: int, what: str) -> tuple[Status, str]:
    return (Status.HELD if value <= limit else Status.FAILED, f"{value} {what}; the policy allows {limit}")


def _feature(version: Version) -> tuple[int, int]:
    release = version.release + (0,)
    return release[0], release[1]


def releases_with_warning(deprecated_in: Version, release: Version) -> int:
    """Feature releases from `deprecated_in` up to, not including, `release`, within one major
    version: the releases that carried the warning (2.4 -> 2.6: 2.4 and 2.5)."""
    (dep_major, dep_minor), (major, minor) = _feature(deprecated_in), _feature(release)
    return minor - dep_minor if major == dep_major else 0


def deprecation_period(change: Change, release: Version | None, dep: Deprecation) -> tuple[Status, str]:
    """PEP 387, "Making Incompatible Changes", step 3: "Wait for the warning to appear in at
    least two minor Python versions of the same major version, or one minor version in an older
    major version". `min_releases` is the "two"; a later major version needs the warning in one
    earlier release; `min_days` adds a time between the two releases' dates."""
    if release is None:
        return Status.FAILED, "the change list has no [library] release, so the period cannot be counted; add it"
    if change.deprecated_in is None:
        return Status.FAILED, f"no deprecated_in: the change ships in {release} without a deprecation period"
    dep_in = change.deprecated_in
    if dep_in >= release:
        return Status.FAILED, f"deprecated in {dep_in}, changed in {release}: the warning never shipped before"
    problems: list[str] = []
    if _feature(release)[0] > _feature(dep_in)[0]:
        said = f"deprecated in {dep_in}, an older major version than {release}"
    else:
        count = releases_with_warning(dep_in, release)
        said = f"deprecated in {dep_in}: {count} release{'s' if count != 1 else ''} with the warning before {release}"
        if count < dep.min_releases:
            problems.append(f"the policy asks for {dep.min_releases}")
    if dep.min_days is not None:
        start, end = dep.release_dates.get(dep_in), dep.release_dates.get(release)
        missing = [str(v) for v, d in ((dep_in, start), (release, end)) if d is None]
        if missing:
            problems.append(f"release_dates has no day for {' and '.join(missing)}")
        elif start is not None and end is not None:
            days = (end - start).days
            said += f", {days} days"
            if days < dep.min_days:
                problems.append(f"the policy asks for {dep.min_days} days")
    if problems:
        return Status.FAILED, f"{said}; {'; '.join(problems)}"
    return Status.HELD, said


def _warned(change: Change, warned: Warned | None) -> tuple[Status, str]:
    if warned is None:
        return Status.NOT_CHECKED, "the previous release was not given (--previous SOURCE or its harvest)"
    if warned.warned(change):
        return Status.HELD, f"the previous release warned ({warned.origin})"
    what = f"{change.member}({change.parameter}=...)" if change.kind.about_parameter else change.member
    return Status.FAILED, f"the previous release ({warned.origin}) has no deprecation warning for {what}"


__all__: list[str] = ["RULES", "Rule", "Status", "Outcome", "Verdict", "evaluate", "deprecation_period",
                      "releases_with_warning"]
