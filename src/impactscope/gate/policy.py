"""The gate's policy: a TOML file of limits, deprecation rules and waivers, loaded and validated.

The keys are documented in docs/policy.md. Validation follows the change list's (changes.py):
an unknown key, a value of the wrong type or a waiver that names nothing is a `PolicyError`
whose message names the file, the table or entry, and the fix.
"""

from __future__ import annotations

import datetime
import os
from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from typing import Any, Mapping

from packaging.version import InvalidVersion, Version

from impactscope.changes import Kind
from impactscope.errors import InputError
from impactscope.tomlinput import TomlInput


class PolicyError(InputError):
    """A policy that cannot be used; the message names the file, the entry and the fix."""


# Rule ids of the limits are their policy keys, so a waiver names a rule as the policy spells it.
COUNT_LIMITS = ("max_proven_projects", "max_possible_projects", "max_exposed_projects")
SHARE_LIMITS = ("max_share_low", "max_share_high")
DEPRECATION_RULES = ("deprecation_period", "require_replacement", "warned_before")
RULE_IDS = COUNT_LIMITS + SHARE_LIMITS + DEPRECATION_RULES

_TOP_KEYS = {"limits", "deprecation", "waiver"}
_DEPRECATION_KEYS = {"min_releases", "min_days", "release_dates", "require_replacement", "require_warning"}
_WAIVER_KEYS = {"change", "rule", "reason"}


@dataclass(frozen=True)
class Limits:
    """Upper limits on what one change may break; None: not limited."""

    max_proven_projects: int | None = None  # projects with a resolved finding
    max_possible_projects: int | None = None  # the upper bound: projects with any finding
    max_share_low: float | None = None  # low end of the share's interval (proven)
    max_share_high: float | None = None  # high end of the share's interval (at most)
    max_exposed_projects: int | None = None  # proven projects whose requirement admits the release

    def over(self, other: "Limits") -> "Limits":
        """These limits, with every key `other` sets taken from `other` (a kind's own table)."""
        return replace(self, **{f.name: getattr(other, f.name) for f in fields(other) if getattr(other, f.name) is not None})


@dataclass(frozen=True)
class Deprecation:
    """PEP 387's deprecation period and the rules on replacements and earlier warnings.

    Every requirement set must hold: `min_releases` feature releases carrying the warning, and,
    when `min_days` is set, that many days between the two releases' dates in `release_dates`.
    """

    min_releases: int = 2
    min_days: int | None = None
    release_dates: Mapping[Version, datetime.date] = field(default_factory=dict)
    require_replacement: bool = True
    require_warning: bool = True  # checked when the gate is given the previous release (--previous)


@dataclass(frozen=True)
class Waiver:
    change: str
    rule: str
    reason: str
    index: int  # 0-based, among the [[waiver]] tables, for messages

    @property
    def label(self) -> str:
        return f"[[waiver]] #{self.index + 1} (change {self.change!r}, rule {self.rule!r})"


@dataclass(frozen=True)
class Policy:
    limits: Limits = Limits()
    by_kind: Mapping[Kind, Limits] = field(default_factory=dict)
    deprecation: Deprecation = Deprecation()
    waivers: tuple[Waiver, ...] = ()
    path: Path | None = field(default=None, compare=False)
    text: str = field(default="", compare=False, repr=False)

    def limits_for(self, kind: Kind) -> Limits:
        own = self.by_kind.get(kind)
        return self.limits if own is None else self.limits.over(own)

    def waiver(self, change: str, rule: str) -> Waiver | None:
        return next((w for w in self.waivers if w.change == change and w.rule == rule), None)

    def check_waivers(self, change_ids: set[str]) -> None:
        """A waiver for a change the results do not hold is a typo or a stale entry: refuse it."""
        for w in self.waivers:
            if w.change not in change_ids:
                known = ", ".join(sorted(change_ids)[:8]) + (" ..." if len(change_ids) > 8 else "")
                raise PolicyError(
                    f"{self.path}: {w.label}: the change list has no change {w.change!r}; "
                    f"use one of its ids ({known}) or delete the waiver"
                )


def _known(table: Mapping[str, Any], allowed: set[str], what: str, listed: str) -> None:
    unknown = set(table) - allowed
    if unknown:
        raise PolicyError(f"{what} key(s) {', '.join(sorted(unknown))}; allowed are {listed}")


_TOML = TomlInput(
    "policy", "pass the path of a TOML policy (see docs/policy.md)", "a policy needs two levels at most", PolicyError,
)


def load_policy(path: str | os.PathLike[str]) -> Policy:
    return parse_policy(_TOML.read(path), Path(path))


def parse_policy(raw: bytes, path: Path) -> Policy:
    where = str(path)
    text, data = _TOML.parse(raw, where)
    _known(data, _TOP_KEYS, f"{where}: unknown top-level", "[limits], [limits.<kind>], [deprecation] and [[waiver]]")
    limits, by_kind = _limits(data.get("limits", {}), where)
    deprecation = _deprecation(data.get("deprecation", {}), where)
    waivers = _waivers(data.get("waiver", []), where)
    return Policy(limits, by_kind, deprecation, waivers, path, text)


def _limits(table: Any, where: str) -> tuple[Limits, dict[Kind, Limits]]:
    if not isinstance(table, dict):
        raise PolicyError(f"{where}: [limits] must be a table, e.g. [limits]\\nmax_proven_projects = 10")
    kinds = {k.value: k for k in Kind}
    own = {k: v for k, v in table.items() if not isinstance(v, dict)}
    by_kind: dict[Kind, Limits] = {}
    for key, value in table.items():
        if isinstance(value, dict):
            if key not in kinds:
                raise PolicyError(
                    f"{where}: [limits.{key}]: unknown change kind {key!r}; use one of {', '.join(kinds)}"
                )
            by_kind[kinds[key]] = _limit_values(value, f"{where}: [limits.{key}]")
    return _limit_values(own, f"{where}: [limits]"), by_kind


def _limit_values(table: Mapping[str, Any], label: str) -> Limits:
    allowed = COUNT_LIMITS + SHARE_LIMITS
    _known(table, set(allowed), f"{label}: unknown", f"{', '.join(allowed)} (and [limits.<kind>] tables)")
    values: dict[str, Any] = {}
    for key, value in table.items():
        if key in COUNT_LIMITS:
            if isinstance(value, bool) or not isinstance(value, int) or value < 0:
                raise PolicyError(f"{label}: {key} must be a whole number of projects >= 0, got {value!r}")
        else:
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 <= value <= 1:
                raise PolicyError(
                    f"{label}: {key} must be a share between 0 and 1 (0.05 is 5%), got {value!r}"
                )
            value = float(value)
        values[key] = value
    return Limits(**values)


def _deprecation(table: Any, where: str) -> Deprecation:
    label = f"{where}: [deprecation]"
    if not isinstance(table, dict):
        raise PolicyError(f"{label} must be a table, e.g. [deprecation]\\nmin_releases = 2")
    _known(table, _DEPRECATION_KEYS, f"{label}: unknown", ", ".join(sorted(_DEPRECATION_KEYS)))
    values: dict[str, Any] = {}
    for key in ("min_releases", "min_days"):
        if key in table:
            value = table[key]
            if isinstance(value, bool) or not isinstance(value, int) or value < 0:
                raise PolicyError(f"{label}: {key} must be a whole number >= 0, got {value!r}")
            values[key] = value
    for key in ("require_replacement", "require_warning"):
        if key in table:
            if not isinstance(table[key], bool):
                raise PolicyError(f"{label}: {key} must be true or false, got {table[key]!r}")
            values[key] = table[key]
    dates = table.get("release_dates", {})
    if not isinstance(dates, dict):
        raise PolicyError(f'{label}: release_dates must be a table of "version" = date, e.g. "2.4" = 2025-03-01')
    parsed: dict[Version, datetime.date] = {}
    for version, day in dates.items():
        try:
            v = Version(version)
        except InvalidVersion:
            raise PolicyError(
                f"{label}: release_dates key {version!r} is not a PEP 440 version; write e.g. \"2.4\""
            ) from None
        if isinstance(day, datetime.datetime):
            day = day.date()
        if not isinstance(day, datetime.date):
            raise PolicyError(
                f"{label}: release_dates {version!r} must be a TOML date (2025-03-01, no quotes), got {day!r}"
            )
        parsed[v] = day
    values["release_dates"] = parsed
    if values.get("min_days") is not None and not parsed:
        raise PolicyError(
            f"{label}: min_days needs release_dates, the day each release shipped, e.g. "
            'release_dates = { "2.4" = 2025-03-01, "3.0" = 2026-06-01 }'
        )
    return Deprecation(**values)


def _waivers(entries: Any, where: str) -> tuple[Waiver, ...]:
    if not isinstance(entries, list):
        raise PolicyError(f"{where}: waiver must be an array of tables: write [[waiver]], not [waiver]")
    out: list[Waiver] = []
    seen: dict[tuple[str, str], int] = {}
    for index, entry in enumerate(entries):
        label = f"{where}: [[waiver]] #{index + 1}"
        if not isinstance(entry, dict):
            raise PolicyError(f"{label}: must be a table with change, rule and reason")
        _known(entry, _WAIVER_KEYS, f"{label}: unknown", "change, rule, reason")
        for key in ("change", "rule", "reason"):
            value = entry.get(key)
            if not isinstance(value, str) or not value.strip():
                raise PolicyError(
                    f"{label}: {key} must be a non-empty string"
                    + ("; say why the rule may fail for this change" if key == "reason" else "")
                )
        if entry["rule"] not in RULE_IDS:
            raise PolicyError(
                f"{label}: unknown rule {entry['rule']!r}; use one of {', '.join(RULE_IDS)}"
            )
        pair = (entry["change"], entry["rule"])
        if pair in seen:
            raise PolicyError(
                f"{label}: waives rule {pair[1]!r} for change {pair[0]!r} again (also [[waiver]] #{seen[pair] + 1}); "
                "keep one"
            )
        seen[pair] = index
        out.append(Waiver(entry["change"], entry["rule"], entry["reason"].strip(), index))
    return tuple(out)
