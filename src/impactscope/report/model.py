"""The report: one typed, immutable document built once from a results file.

`report.aggregate.build_report` makes it; every renderer (table, JSON, Markdown, and those to
come) reads only it. `Report.to_json()` is its serialisation, with the keys docs/report-json.md documents
(and a few more); `Report.from_json` reads that back, so a saved JSON report is a report too.

Counts per confidence level are `PerLevel` values, indexed by `Confidence`; statuses, kinds,
exposure classes and confidence levels are the enums of the modules that define them, never
their text. Nothing here holds a pandas object: aggregation converts before it builds.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Generic, Mapping, TypeVar

from impactscope.changes import Kind
from impactscope.exposure import Exposure
from impactscope.findings import Confidence, Finding, Reading, parse_pattern_label, pattern_label
from impactscope.outcomes import FileStatus
from impactscope.reasons import Reason, reason_of

T = TypeVar("T")
U = TypeVar("U")
Json = dict[str, Any]


class _Plain:
    """A record of plain values whose JSON object has its fields' names and order as keys."""

    def to_json(self) -> Json:
        return dict(vars(self))

    @classmethod
    def from_json(cls: type[R], data: Mapping[str, Any]) -> R:
        return cls(**data)


R = TypeVar("R", bound=_Plain)


@dataclass(frozen=True)
class PerLevel(Generic[T]):
    """One value per confidence level, strongest first (`resolved` is a lower bound, `possible`
    an upper bound, when the values are counts of projects hit at that level or stronger)."""

    resolved: T
    inferred: T
    possible: T

    @classmethod
    def build(cls, value: Callable[[Confidence], T]) -> "PerLevel[T]":
        return cls(*(value(level) for level in Confidence.strongest_first()))

    def __getitem__(self, level: Confidence) -> T:
        return getattr(self, level.label)  # type: ignore[no-any-return]

    def to_json(self, convert: Callable[[T], Any] = lambda v: v) -> Json:
        return {level.label: convert(self[level]) for level in Confidence.strongest_first()}

    @classmethod
    def from_json(cls, data: Mapping[str, Any], convert: Callable[[Any], U] = lambda v: v) -> "PerLevel[U]":
        return PerLevel(*(convert(data[level.label]) for level in Confidence.strongest_first()))


@dataclass(frozen=True)
class Estimate(_Plain):
    """A share (0..1) with the two ends of its interval, rounded to six places."""

    estimate: float
    low: float
    high: float


@dataclass(frozen=True)
class Share:
    """Share of the projects that use the library hit per level (Wilson score intervals)."""

    levels: PerLevel[Estimate]
    confidence: float
    denominator: int  # projects that use the library
    population: int | None = None  # the population sampled from, when given (finite correction)

    def to_json(self) -> Json:
        out = {**self.levels.to_json(Estimate.to_json), "confidence": self.confidence, "denominator": self.denominator}
        if self.population is not None:
            out["population"] = self.population
        return out

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "Share":
        return cls(PerLevel.from_json(data, Estimate.from_json), data["confidence"], data["denominator"],
                   data.get("population"))


@dataclass(frozen=True)
class WeightedShare:
    """Share of the weight (e.g. downloads) of the projects that use the library, per level."""

    levels: PerLevel[Estimate]
    confidence: float

    def to_json(self) -> Json:
        return {**self.levels.to_json(Estimate.to_json), "confidence": self.confidence}

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "WeightedShare":
        return cls(PerLevel.from_json(data, Estimate.from_json), data["confidence"])


@dataclass(frozen=True)
class ExposureCounts(_Plain):
    """Projects with a resolved finding, by how their declared requirement meets the release."""

    exposed: int = 0
    shielded: int = 0
    unconstrained: int = 0

    def __getitem__(self, exposure: Exposure) -> int:
        return getattr(self, exposure.value)  # type: ignore[no-any-return]


@dataclass(frozen=True)
class PatternRow:
    """One call pattern of a change: how many projects, sites and files show it."""

    pattern: str  # the shape, as `Finding.pattern`
    reading: Reading
    projects: int
    sites: int
    files: int
    confidence: Confidence  # the strongest level among its sites

    @property
    def label(self) -> str:
        return pattern_label(self.pattern, self.reading)

    def to_json(self) -> Json:
        return {"pattern": self.label, "projects": self.projects, "sites": self.sites, "files": self.files,
                "confidence": self.confidence.label}

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "PatternRow":
        return cls(*parse_pattern_label(data["pattern"]), data["projects"], data["sites"], data["files"],
                   Confidence.parse(data["confidence"]))


@dataclass(frozen=True)
class ChangeReport:
    """One planned change and what it would break."""

    id: str
    member: str
    kind: Kind
    certainty: str | None  # "high" | "medium" | "low" as a draft wrote it; None when written by hand
    replacement: str | None
    note: str
    projects: PerLevel[int]  # projects with a finding at that level or stronger
    sites: int
    files: int
    patterns: tuple[PatternRow, ...]  # most projects first
    share: Share
    exposure: ExposureCounts
    projects_fork_collapsed: PerLevel[int]  # as `projects`, a family of forks counted once
    legacy_sites: int  # sites found by a token-level reading (Python 2, nesting too deep)
    weighted_share: WeightedShare | None = None  # with a weights file only
    # Sites at that level or stronger, as `projects`: `sites` mixes every level, and a maintainer
    # asks first how many uses are proven.
    sites_by_level: PerLevel[int] = PerLevel(0, 0, 0)
    deprecated_in: str | None = None  # the change list's `deprecated_in`, as PEP 440 prints it
    parameter: str | None = None  # the parameter a parameter change is about
    new_parameter: str | None = None  # its new name, for a renamed parameter

    @property
    def low_certainty(self) -> bool:
        """A draft's low-certainty entry: reports show it apart from the others."""
        return self.certainty == "low"

    def to_json(self) -> Json:
        out = {
            "id": self.id, "member": self.member, "kind": self.kind.value, "certainty": self.certainty,
            "replacement": self.replacement, "note": self.note, "projects": self.projects.to_json(),
            "sites": self.sites, "files": self.files, "patterns": [p.to_json() for p in self.patterns],
            "share": self.share.to_json(), "exposure": self.exposure.to_json(),
            "projects_fork_collapsed": self.projects_fork_collapsed.to_json(), "legacy_sites": self.legacy_sites,
            "sites_by_level": self.sites_by_level.to_json(), "deprecated_in": self.deprecated_in,
            "parameter": self.parameter, "new_parameter": self.new_parameter,
        }
        if self.weighted_share is not None:
            out["weighted_share"] = self.weighted_share.to_json()
        return out

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "ChangeReport":
        weighted = data.get("weighted_share")
        return cls(
            data["id"], data["member"], Kind(data["kind"]), data["certainty"], data["replacement"], data["note"],
            PerLevel.from_json(data["projects"]), data["sites"], data["files"],
            tuple(PatternRow.from_json(p) for p in data["patterns"]), Share.from_json(data["share"]),
            ExposureCounts.from_json(data["exposure"]), PerLevel.from_json(data["projects_fork_collapsed"]),
            data["legacy_sites"], WeightedShare.from_json(weighted) if weighted is not None else None,
            PerLevel.from_json(data["sites_by_level"]), data["deprecated_in"], data["parameter"], data["new_parameter"],
        )


@dataclass(frozen=True)
class Totals(_Plain):
    """Every project and file of the corpus, accounted for."""

    projects: int
    projects_using_library: int
    files: int
    files_parsed: int
    files_skipped: int
    files_unparsed: int
    # Part of files_unparsed: an unexpected exception met on the file (a bug to report), and
    # files of projects whose worker process died twice.
    files_analysis_error: int
    files_worker_died: int


@dataclass(frozen=True)
class FileReason:
    """How many files were skipped or not parsed for one reason."""

    status: FileStatus
    reason: Reason | str  # a text no Reason names comes from an older results file (FileOutcome)
    files: int

    def to_json(self) -> Json:
        return {"status": self.status.value, "reason": str(self.reason), "files": self.files}

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "FileReason":
        return cls(FileStatus(data["status"]), reason_of(data["reason"]), data["files"])


@dataclass(frozen=True)
class CertaintyGroup(_Plain):
    changes: int
    projects_affected: int  # projects with a finding at any level for one of these changes


@dataclass(frozen=True)
class ByCertainty:
    """Low-certainty draft entries counted apart, so that a guess does not swell the totals."""

    low: CertaintyGroup
    other: CertaintyGroup

    def to_json(self) -> Json:
        return {"low": self.low.to_json(), "other": self.other.to_json()}

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "ByCertainty":
        return cls(CertaintyGroup.from_json(data["low"]), CertaintyGroup.from_json(data["other"]))


@dataclass(frozen=True)
class NotProject(_Plain):
    """Something the roots held besides projects (a hidden entry, a stray file, an unsafe path)."""

    path: str
    reason: str


@dataclass(frozen=True)
class CorpusFacts(_Plain):
    unique_sources: int  # distinct file contents over all projects
    fork_families: int  # families of two or more projects that share most of their Python files
    legacy_python_projects: int  # projects with at least one Python 2 file


@dataclass(frozen=True)
class ProjectFacts:
    """What the report knows of one project beyond its findings."""

    project: str
    uses_library: bool
    exposure: Exposure | None  # for projects with a resolved finding only
    constraint: str | None  # its declared requirements on the library, joined by "; "
    legacy_python: bool  # some file is Python 2
    outside_release: bool  # Python 2 only, and the release requires Python 3
    fork_family: str | None  # the family's id (its smallest member's name), if in one
    manifest_problems: tuple[str, ...]

    def to_json(self) -> Json:
        return {
            "project": self.project, "uses_library": self.uses_library,
            "exposure": self.exposure.value if self.exposure is not None else None,
            "constraint": self.constraint, "legacy_python": self.legacy_python,
            "outside_release": self.outside_release, "fork_family": self.fork_family,
            "manifest_problems": list(self.manifest_problems),
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "ProjectFacts":
        exposure = data["exposure"]
        return cls(
            data["project"], data["uses_library"], Exposure(exposure) if exposure is not None else None,
            data["constraint"], data["legacy_python"], data["outside_release"], data["fork_family"],
            tuple(data["manifest_problems"]),
        )


@dataclass(frozen=True)
class ProjectFiles:
    """One project's files by status."""

    project: str
    files: int
    parsed: int
    skipped: int
    unparsed: int

    def to_json(self) -> Json:
        return {"files": self.files, "parsed": self.parsed, "skipped": self.skipped, "unparsed": self.unparsed}


@dataclass(frozen=True)
class FailedFile(_Plain):
    """A file the scan failed on (an analysis error, a dead worker): what a bug report needs."""

    project: str
    file: str
    reason: Reason | str
    detail: str

    def __post_init__(self) -> None:
        object.__setattr__(self, "reason", reason_of(self.reason))


@dataclass(frozen=True)
class WeightsUsed(_Plain):
    """The weights file a report was sized with (`--weights`): its name and what it matched."""

    file: str  # the file's name, without its folder, so that the report's bytes do not depend on it
    entries: int  # rows of project,weight in the file
    matched: int  # projects that use the library and have a weight in the file


@dataclass(frozen=True)
class Report:
    """The impact report of one results file."""

    library: str
    release: str | None
    complete: bool  # the scan finished (an interrupted scan's report covers part of the corpus)
    totals: Totals
    file_reasons: tuple[FileReason, ...]  # by status, then reason
    projects_affected: int  # projects with a finding at any level
    by_certainty: ByCertainty
    not_projects: tuple[NotProject, ...]
    changes: tuple[ChangeReport, ...]  # in the change list's order
    corpus: CorpusFacts
    projects: tuple[ProjectFacts, ...]  # by name
    findings: tuple[Finding, ...]  # sorted
    files_by_project: tuple[ProjectFiles, ...]  # by name
    failed_files: tuple[FailedFile, ...]
    weights: WeightsUsed | None = None  # with `--weights` only

    @property
    def interval_confidence(self) -> float | None:
        """The confidence level of the intervals (one for the whole report); None without changes."""
        return self.changes[0].share.confidence if self.changes else None

    def token_level(self) -> tuple[tuple[ChangeReport, int], ...]:
        """The changes with sites read at token level (Python 2 files and the like), each with
        how many projects hold them; its sites are `ChangeReport.legacy_sites`."""
        projects: dict[str, set[str]] = {}
        for f in self.findings:
            if f.token_level:
                projects.setdefault(f.change, set()).add(f.project)
        return tuple((c, len(projects.get(c.id, ()))) for c in self.changes if c.legacy_sites)

    def to_json(self) -> Json:
        return {
            "library": self.library,
            "release": self.release,
            "complete": self.complete,
            "totals": self.totals.to_json(),
            "file_reasons": [r.to_json() for r in self.file_reasons],
            "projects_affected": self.projects_affected,
            "by_certainty": self.by_certainty.to_json(),
            "not_projects": [n.to_json() for n in self.not_projects],
            "changes": [c.to_json() for c in self.changes],
            "corpus": self.corpus.to_json(),
            "projects": [p.to_json() for p in self.projects],
            "findings": [f.to_json() for f in self.findings],
            "files_by_project": {p.project: p.to_json() for p in self.files_by_project},
            "failed_files": [f.to_json() for f in self.failed_files],
            "weights": self.weights.to_json() if self.weights is not None else None,
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "Report":
        return cls(
            library=data["library"],
            release=data["release"],
            complete=data["complete"],
            totals=Totals.from_json(data["totals"]),
            file_reasons=tuple(FileReason.from_json(r) for r in data["file_reasons"]),
            projects_affected=data["projects_affected"],
            by_certainty=ByCertainty.from_json(data["by_certainty"]),
            not_projects=tuple(NotProject.from_json(n) for n in data["not_projects"]),
            changes=tuple(ChangeReport.from_json(c) for c in data["changes"]),
            corpus=CorpusFacts.from_json(data["corpus"]),
            projects=tuple(ProjectFacts.from_json(p) for p in data["projects"]),
            findings=tuple(Finding.from_json(f) for f in data["findings"]),
            files_by_project=tuple(ProjectFiles(name, **counts) for name, counts in data["files_by_project"].items()),
            failed_files=tuple(FailedFile.from_json(f) for f in data["failed_files"]),
            weights=WeightsUsed.from_json(data["weights"]) if data.get("weights") is not None else None,
        )


__all__ = [
    "ByCertainty", "CertaintyGroup", "ChangeReport", "CorpusFacts", "Estimate", "ExposureCounts", "FailedFile",
    "FileReason", "NotProject", "PatternRow", "PerLevel", "ProjectFacts", "ProjectFiles", "Report", "Share",
    "Totals", "WeightedShare", "WeightsUsed",
]
