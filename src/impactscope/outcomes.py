"""What a scan records for one project: every file's outcome, the findings, the manifests.

These sit beside `Finding`, below the scan that makes them and the store and reports that read
them, so that no reader has to reach into `scan/`.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass, field

from impactscope.findings import Finding


# The reasons of an unparsed file that are failures of the scan, not of the file: an unexpected
# exception met on it (resolve.faults describes it), and a project whose worker process died
# twice while scanning it (scan.executor). Reports list these files apart, as bugs to report.
ANALYSIS_ERROR = "analysis error"
WORKER_DIED = "worker died"


class FileStatus(str, enum.Enum):
    """What became of a file; the value is what the results file and the JSON report hold."""

    PARSED = "parsed"
    SKIPPED = "skipped"  # on purpose: not source, no candidate, a limit, a vendored copy, ...
    UNPARSED = "unparsed"  # it should have been read and was not: syntax error, Python 2, ...


@dataclass(frozen=True)
class FileOutcome:
    """One file of a project and what the scan did with it.

    `reason` says why a file was skipped or not parsed, in the words of the stage that decided
    (the corpus readers, the source decoders, the resolver); it is an open set, shown as is.
    """

    path: str
    status: FileStatus
    reason: str | None = None
    detail: str = ""
    digest: str | None = None  # sha256 of the content, for sources that were read
    kind: str | None = None  # module | notebook, for sources

    def __post_init__(self) -> None:
        # The scan's stages may name the status by its text; it is checked and kept as a value.
        object.__setattr__(self, "status", FileStatus(self.status))


@dataclass
class ProjectResult:
    """One scanned project, as the store writes it (built up file by file during the scan)."""

    name: str
    origin: str
    files: list[FileOutcome] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    uses_library: bool = False
    manifests: dict[str, bytes] = field(default_factory=dict)


__all__ = ["ANALYSIS_ERROR", "WORKER_DIED", "FileStatus", "FileOutcome", "ProjectResult"]
