"""Sizing: shares with intervals, version exposure, legacy Python and fork families per project.

Everything here is derived from the store (findings, per-file outcomes and digests, manifest
texts), so a report can be re-sized with another confidence, population or Python without
rescanning.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Mapping, Sequence

from impactscope.changes import ChangeList
from impactscope.errors import InputError
from impactscope.estimate import Interval, weighted_share, wilson_interval
from impactscope.exposure import classify, environment_for_python, read_manifests
from impactscope.findings import Confidence, Finding
from impactscope.forks import fork_families, unique_sources
from impactscope.scan.project import FileOutcome

LEVELS = (Confidence.RESOLVED, Confidence.INFERRED, Confidence.POSSIBLE)


class SizingError(InputError):
    """Bad sizing options (a weights file, a population, a Python version)."""


@dataclass(frozen=True)
class SizingOptions:
    confidence: float = 0.95
    population: int | None = None
    python: str = "3.12"
    weights: Mapping[str, float] | None = None


def read_weights(path: Path) -> dict[str, float]:
    """A CSV of project,weight (a header row is optional), e.g. downloads per project."""
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise SizingError(f"{path}: cannot read the weights file ({exc.strerror})") from None
    except UnicodeDecodeError as exc:
        raise SizingError(f"{path}: the weights file is not UTF-8 ({exc.reason}); save it as UTF-8") from None
    out: dict[str, float] = {}
    for number, row in enumerate(csv.reader(io.StringIO(text)), start=1):
        if not row or row[0].startswith("#"):
            continue
        if len(row) < 2:
            raise SizingError(f"{path}:{number}: expected `project,weight`, got {','.join(row)!r}")
        try:
            weight = float(row[1])
        except ValueError:
            if number == 1:
                continue  # a header row
            raise SizingError(f"{path}:{number}: weight {row[1]!r} is not a number") from None
        if weight < 0:
            raise SizingError(f"{path}:{number}: weight must be >= 0, got {weight}")
        out[row[0].strip()] = weight
    return out


def _interval_json(interval: Interval) -> dict[str, float]:
    return {"estimate": round(interval.estimate, 6), "low": round(interval.low, 6), "high": round(interval.high, 6)}


def project_facts(
    changes: ChangeList,
    projects: Sequence[tuple[str, bool]],
    files: Mapping[str, list[FileOutcome]],
    manifests: Mapping[str, Mapping[str, bytes]],
    findings: Sequence[Finding],
    options: SizingOptions,
) -> dict[str, dict[str, Any]]:
    """Per project: uses_library, exposure, constraint, legacy_python, fork_family."""
    hashes = {
        name: {f.path: f.digest for f in files.get(name, []) if f.digest and f.path.endswith(".py")}
        for name, _ in projects
    }
    families = fork_families(hashes)
    environment = environment_for_python(options.python)
    excludes_py2 = changes.requires_python is not None and not changes.requires_python.contains("2.7", prereleases=True)
    resolved_projects = {f.project for f in findings if f.confidence is Confidence.RESOLVED}
    out: dict[str, dict[str, Any]] = {}
    for name, uses in projects:
        outcomes = files.get(name, [])
        py2 = [f for f in outcomes if f.reason == "python 2"]
        py3 = [f for f in outcomes if f.status == "parsed" and f.kind == "module"]
        legacy = bool(py2)
        read = read_manifests(manifests.get(name, {}), changes.library)
        declared = read.declared
        exposure: str | None = None
        if name in resolved_projects:
            if changes.release is not None:
                exposure = classify(declared, changes.release, environment, python=read.python,
                                    release_python=changes.requires_python).value
            else:
                exposure = "unconstrained"
        out[name] = {
            "project": name,
            "uses_library": uses,
            "exposure": exposure,
            "constraint": "; ".join(d.text for d in declared) or None,
            "legacy_python": legacy,
            # Python 2 only: some files are Python 2 and none of the analysed modules is Python 3.
            "outside_release": bool(legacy and not py3 and excludes_py2),
            "fork_family": families.get(name),
            "manifest_problems": list(read.problems),
        }
    return out


def change_sizing(
    change_id: str,
    findings: Sequence[Finding],
    facts: Mapping[str, Mapping[str, Any]],
    options: SizingOptions,
) -> dict[str, Any]:
    users = [name for name, f in facts.items() if f["uses_library"]]
    denominator = len(users)
    mine = [f for f in findings if f.change == change_id]
    share: dict[str, Any] = {}
    weighted: dict[str, Any] = {}
    families: dict[str, int] = {}
    for level in LEVELS:
        hit = {f.project for f in mine if f.confidence >= level}
        k = len(hit & set(users)) if users else 0
        share[level.label] = _interval_json(
            wilson_interval(k, denominator, options.confidence, options.population)
        )
        families[level.label] = len({facts[p]["fork_family"] or p for p in hit})
        if options.weights is not None:
            all_w = [options.weights.get(p, 0.0) for p in users]
            hit_w = [options.weights.get(p, 0.0) for p in users if p in hit]
            if sum(all_w) > 0:
                weighted[level.label] = _interval_json(weighted_share(hit_w, all_w, options.confidence))
    share["confidence"] = options.confidence
    share["denominator"] = denominator
    if options.population is not None:
        share["population"] = options.population
    resolved = {f.project for f in mine if f.confidence is Confidence.RESOLVED}
    exposure = {"exposed": 0, "shielded": 0, "unconstrained": 0}
    for p in resolved:
        state = facts[p]["exposure"] or "unconstrained"
        exposure[state] += 1
    legacy_sites = sum(1 for f in mine if f.pattern.startswith("legacy:"))
    out: dict[str, Any] = {
        "share": share,
        "exposure": exposure,
        "projects_fork_collapsed": families,
        "legacy_sites": legacy_sites,
    }
    if weighted:
        weighted["confidence"] = options.confidence
        out["weighted_share"] = weighted
    return out


def corpus_sizing(files: Mapping[str, list[FileOutcome]], facts: Mapping[str, Mapping[str, Any]]) -> dict[str, Any]:
    hashes = {name: {f.path: f.digest for f in outcomes if f.digest} for name, outcomes in files.items()}
    return {
        "unique_sources": unique_sources(hashes),
        "fork_families": len({f["fork_family"] for f in facts.values() if f["fork_family"]}),
        "legacy_python_projects": sum(1 for f in facts.values() if f["legacy_python"]),
    }


__all__ = ["SizingOptions", "SizingError", "read_weights", "project_facts", "change_sizing", "corpus_sizing"]
