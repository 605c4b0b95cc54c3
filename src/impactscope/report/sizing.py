"""Sizing: shares with intervals, version exposure, legacy Python and fork families per project.

Everything here is derived from the store (findings, per-file outcomes and digests, manifest
texts), so a report can be re-sized with another confidence, population or Python without
rescanning.
"""

from __future__ import annotations

import csv
import io
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping, Sequence

from impactscope.changes import ChangeList
from impactscope.errors import InputError
from impactscope.estimate import Interval, weighted_share, wilson_interval
from impactscope.exposure import Exposure, classify, environment_for_python, read_manifests
from impactscope.findings import Confidence, Finding
from impactscope.forks import fork_families, unique_sources
from impactscope.outcomes import FileStatus, FileOutcome
from impactscope.reasons import Reason
from impactscope.report.model import CorpusFacts, Estimate, ExposureCounts, PerLevel, ProjectFacts, Share, WeightedShare


class SizingError(InputError):
    """Bad sizing options (a weights file, a population, a Python version)."""


@dataclass(frozen=True)
class SizingOptions:
    confidence: float = 0.95
    population: int | None = None
    python: str = "3.12"
    weights: Mapping[str, float] | None = None
    weights_file: str | None = None  # the weights file's name, as reports show it


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


def _estimate(interval: Interval) -> Estimate:
    return Estimate(round(interval.estimate, 6), round(interval.low, 6), round(interval.high, 6))


def project_facts(
    changes: ChangeList,
    projects: Sequence[tuple[str, bool]],
    files: Mapping[str, list[FileOutcome]],
    manifests: Mapping[str, Mapping[str, bytes]],
    findings: Sequence[Finding],
    options: SizingOptions,
) -> dict[str, ProjectFacts]:
    """Per project: uses_library, exposure, constraint, legacy_python, fork_family."""
    hashes = {
        name: {f.path: f.digest for f in files.get(name, []) if f.digest and f.path.endswith(".py")}
        for name, _ in projects
    }
    families = fork_families(hashes)
    environment = environment_for_python(options.python)
    excludes_py2 = changes.requires_python is not None and not changes.requires_python.contains("2.7", prereleases=True)
    resolved_projects = {f.project for f in findings if f.confidence is Confidence.RESOLVED}
    out: dict[str, ProjectFacts] = {}
    for name, uses in projects:
        outcomes = files.get(name, [])
        py2 = [f for f in outcomes if f.reason is Reason.PYTHON_2]
        py3 = [f for f in outcomes if f.status is FileStatus.PARSED and f.kind == "module"]
        legacy = bool(py2)
        read = read_manifests(manifests.get(name, {}), changes.library)
        declared = read.declared
        exposure: Exposure | None = None
        if name in resolved_projects:
            if changes.release is not None:
                exposure = classify(declared, changes.release, environment, python=read.python,
                                    release_python=changes.requires_python)
            else:
                exposure = Exposure.UNCONSTRAINED
        out[name] = ProjectFacts(
            project=name,
            uses_library=uses,
            exposure=exposure,
            constraint="; ".join(d.text for d in declared) or None,
            legacy_python=legacy,
            # Python 2 only: some files are Python 2 and none of the analysed modules is Python 3.
            outside_release=bool(legacy and not py3 and excludes_py2),
            fork_family=families.get(name),
            manifest_problems=tuple(read.problems),
        )
    return out


@dataclass(frozen=True)
class ChangeSizing:
    """What sizing adds to one change's counts."""

    share: Share
    exposure: ExposureCounts
    projects_fork_collapsed: PerLevel[int]
    legacy_sites: int
    weighted_share: WeightedShare | None


def change_sizing(
    change_id: str,
    findings: Sequence[Finding],
    facts: Mapping[str, ProjectFacts],
    options: SizingOptions,
) -> ChangeSizing:
    users = {name for name, f in facts.items() if f.uses_library}
    mine = [f for f in findings if f.change == change_id]
    hit = PerLevel.build(lambda level: {f.project for f in mine if f.confidence >= level})
    share = PerLevel.build(
        lambda level: _estimate(wilson_interval(len(hit[level] & users), len(users), options.confidence, options.population))
    )
    families = PerLevel.build(lambda level: len({facts[p].fork_family or p for p in hit[level]}))
    weighted: WeightedShare | None = None
    if options.weights is not None:
        ordered = [name for name in facts if name in users]
        all_w = [options.weights.get(p, 0.0) for p in ordered]
        if sum(all_w) > 0:
            levels = PerLevel.build(lambda level: _estimate(weighted_share(
                [options.weights.get(p, 0.0) for p in ordered if p in hit[level]], all_w, options.confidence  # type: ignore[union-attr]
            )))
            weighted = WeightedShare(levels, options.confidence)
    exposure = Counter(facts[p].exposure or Exposure.UNCONSTRAINED for p in hit[Confidence.RESOLVED])
    return ChangeSizing(
        share=Share(share, options.confidence, len(users), options.population),
        exposure=ExposureCounts(*(exposure[e] for e in (Exposure.EXPOSED, Exposure.SHIELDED, Exposure.UNCONSTRAINED))),
        projects_fork_collapsed=families,
        legacy_sites=sum(1 for f in mine if f.token_level),
        weighted_share=weighted,
    )


def corpus_sizing(files: Mapping[str, list[FileOutcome]], facts: Mapping[str, ProjectFacts]) -> CorpusFacts:
    hashes = {name: {f.path: f.digest for f in outcomes if f.digest} for name, outcomes in files.items()}
    return CorpusFacts(
        unique_sources=unique_sources(hashes),
        fork_families=len({f.fork_family for f in facts.values() if f.fork_family}),
        legacy_python_projects=sum(1 for f in facts.values() if f.legacy_python),
    )


__all__ = ["ChangeSizing", "SizingOptions", "SizingError", "read_weights", "project_facts", "change_sizing", "corpus_sizing"]
