"""What every fuzz test runs: a scan of a generated corpus in this process, and what it recorded.

A scan is run the way the command line runs it (`run_scan`, one job, the results file written),
so that a name, a reason or a detail that the results file cannot hold fails here too.
"""

from __future__ import annotations

import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.findings import Finding
from impactscope.outcomes import SCAN_FAILURES
from impactscope.scan.run import run_scan
from impactscope.store import ResultStore

# The scan tests' change list (two changes of heronframe, a [types] table): pytest puts tests/ on
# the path, so their helpers are importable as `scan.helpers`.
from scan.helpers import CHANGES

if TYPE_CHECKING:
    from impactscope.scan.project import FileOutcome

USES = b"import heronframe as hf\nt = hf.read_table('a')\nt.stack_rows(t)\nhf.stack([t])\n"
# The faults of impactscope itself: none may be met on any input.
BUGS = SCAN_FAILURES


@dataclass(frozen=True)
class Scan:
    files: list[tuple[str, FileOutcome]]  # (project, outcome), as the results file holds them
    findings: list[Finding]

    def by_project(self) -> dict[str, list[FileOutcome]]:
        out: dict[str, list[FileOutcome]] = {}
        for project, outcome in self.files:
            out.setdefault(project, []).append(outcome)
        return out

    def bugs(self) -> list[str]:
        return [f"{p}/{f.path}: {f.detail}" for p, f in self.files if f.reason in BUGS]


def scan_root(root: Path, *, single: bool = False, limits: Limits = DEFAULT_LIMITS) -> Scan:
    """Scan `root` (a folder or an archive) with the change list above; what the results file holds."""
    with tempfile.TemporaryDirectory(prefix="fuzz-scan-") as folder:
        changes = Path(folder) / "changes.toml"
        changes.write_text(CHANGES, encoding="utf-8")
        out = Path(folder) / "results.sqlite"
        run_scan(changes, [root], out, jobs=1, single=single, limits=limits)
        store = ResultStore.open(out)
        try:
            return Scan(list(store.files()), store.findings())
        finally:
            store.close()
