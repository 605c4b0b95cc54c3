"""`impactscope demo`: generate the heronframe corpus, scan it, report, and check against truth."""

from __future__ import annotations

import os
from importlib import resources
from pathlib import Path
from typing import Any, Callable, Iterable

from impactscope.findings import Finding


def demo_changes_path(name: str = "changes.toml") -> Path:
    """A change list of the demo: `changes.toml` (one change of every kind), or the benchmark's
    `bench-typical.toml` and `bench-common-names.toml`."""
    return Path(str(resources.files("impactscope.demo") / name))


def score(findings: Iterable[Finding], expected: Iterable[dict[str, Any]], change_ids: Iterable[str]) -> dict[str, dict[str, float]]:
    """Precision and recall of `resolved` findings per change, on (project, file, cell, line)."""
    got: dict[str, set[tuple]] = {c: set() for c in change_ids}
    want: dict[str, set[tuple]] = {c: set() for c in got}
    for f in findings:
        if f.confidence.label == "resolved":
            got.setdefault(f.change, set()).add((f.project, f.file, f.cell, f.line))
    for e in expected:
        if e["confidence"] == "resolved":
            want.setdefault(e["change"], set()).add((e["project"], e["file"], e["cell"], e["line"]))
    out = {}
    for change in sorted(set(got) | set(want)):
        g, w = got.get(change, set()), want.get(change, set())
        hit = len(g & w)
        out[change] = {
            "precision": hit / len(g) if g else 1.0,
            "recall": hit / len(w) if w else 1.0,
            "found": len(g),
            "expected": len(w),
        }
    return out


def run_demo(base: Path, *, projects: int, seed: int, echo: Callable[[str], None]) -> None:
    from impactscope.demo.generate import generate_corpus
    from impactscope.report.aggregate import build_report
    from impactscope.report.render import to_table
    from impactscope.scan.run import run_scan
    from impactscope.store import ResultStore

    base.mkdir(parents=True, exist_ok=True)
    root = base / "corpus"
    echo(f"Writing {projects} fictional downstream projects of heronframe to {root} (seed {seed}) ...")
    truth = generate_corpus(root, projects=projects, seed=seed)
    out = base / "results.sqlite"
    changes = demo_changes_path()
    summary = run_scan(changes, [root], out, jobs=os.cpu_count() or 1)
    echo(f"Scanned {summary.projects} projects, {summary.files} files in {summary.seconds:.1f} s.\n")
    store = ResultStore.open(out)
    try:
        document = build_report(store)
        findings = store.findings()
    finally:
        store.close()
    echo(to_table(document))
    scores = score(findings, truth.to_json()["expected"], [c.id for c in document.changes])
    echo("Check against the generator's ground truth (resolved findings, per change):")
    for change, s in scores.items():
        echo(
            f"  {change:6} precision {s['precision']:.2f}  recall {s['recall']:.2f}  "
            f"({int(s['found'])} found, {int(s['expected'])} expected)"
        )
    echo(f"\nChange list: {changes}\nResults file: {out}")
    echo(f"More: impactscope report {out} --format markdown")
