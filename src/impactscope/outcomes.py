"""What a scan records for one project: every file's outcome, the findings, the manifests.

These sit beside `Finding`, below the scan that makes them and the store and reports that read
them, so that no reader has to reach into `scan/`.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass, field

from impactscope.findings import Finding
from impactscope.reasons import Reason, reason_of


# The reasons of an unparsed file that are failures of the scan, not of the file: reports list
# these files apart, as bugs to report.
SCAN_FAILURES = frozenset({Reason.ANALYSIS_ERROR, Reason.WORKER_DIED})


class FileStatus(str, enum.Enum):
    """What became of a file; the value is what the results file and the JSON report hold."""

    PARSED = "parsed"
    SKIPPED = "skipped"  # on purpose: not source, no candidate, a limit, a vendored copy, ...
    UNPARSED = "unparsed"  # it should have been read and was not: syntax error, Python 2, ...


@dataclass(frozen=True)
class FileOutcome:
    """One file of a project and what the scan did with it.

    `reason` says why a file was skipped or not parsed (None for a parsed file). A text that
    names a `Reason` is kept as the member; any other text is kept as it is, so that a results
    file written by a version with a reason this one no longer has still loads and shows it.
    """

    path: str
    status: FileStatus
    reason: Reason | str | None = None
    detail: str = ""
    digest: str | None = None  # sha256 of the content, for sources that were read
    kind: str | None = None  # module | notebook, for sources

    def __post_init__(self) -> None:
        # The scan's stages may name the status by its text; it is checked and kept as a value.
        object.__setattr__(self, "status", FileStatus(self.status))
        if self.reason is not None and not isinstance(self.reason, Reason):
            object.__setattr__(self, "reason", reason_of(self.reason))


@dataclass
class ProjectResult:
    """One scanned project, as the store writes it (built up file by file during the scan)."""

    name: str
    origin: str
    files: list[FileOutcome] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    uses_library: bool = False
    manifests: dict[str, bytes] = field(default_factory=dict)


__all__ = ["SCAN_FAILURES", "FileStatus", "FileOutcome", "ProjectResult"]
