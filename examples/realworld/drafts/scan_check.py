"""Scan each draft, as written, on real downstream code: does it report unchanged members as changed?

    python examples/realworld/drafts/scan_check.py --work /tmp/drafts

The downstream code is the corpus benchmark's pinned packages (examples/realworld/corpus.toml,
fetched and unpacked by its own helpers into `<work>/corpus`): the pandas ones for pandas, the
networkx ones for networkx, and all of them for numpy, which both sets use. Each draft is scanned
without an edit (`impactscope scan DRAFT ROOT --jobs 1`). Then every change with a finding is
checked as score.py checks a draft's entries: one that the release notes document, or whose
claim an independent reading of the two wheels shows, is right; a finding on any other entry (the
member or parameter is still there, the default did not change) is a finding on an unchanged member. Reported per draft: entries with findings,
projects and sites at `resolved`, and how many of them fall on unchanged members, kept apart by
certainty (low-certainty entries are upper bounds by design).
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import subprocess
import sys
import tomllib
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from measure import load_libraries, source_of  # noqa: E402
from score import documented, read, verified  # noqa: E402

from impactscope.surface.build import build_for_drafts  # noqa: E402

IMPACTSCOPE = [sys.executable, "-c", "from impactscope.cli import main; main()"]


def _corpus_benchmark():
    spec = importlib.util.spec_from_file_location("realworld_run", HERE.parent / "run.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up there
    sys.path.append(str(HERE.parent))
    spec.loader.exec_module(module)
    return module


def roots_for(library: str, corpus: Path) -> list[Path]:
    projects = corpus / "projects"
    if library in ("pandas", "networkx"):
        return [projects / library]
    return sorted(p for p in projects.iterdir() if p.is_dir())  # numpy: every downstream set


def check(lib, work: Path, corpus: Path, what: str, reuse: bool = False) -> dict:
    draft = work / "drafts" / f"{lib.name}-{what}.toml"
    out = work / "scans" / f"{lib.name}-{what}.sqlite"
    out.parent.mkdir(parents=True, exist_ok=True)
    command = [*IMPACTSCOPE, "scan", str(draft), *map(str, roots_for(lib.name, corpus)), "--out", str(out),
               "--jobs", "1", "--fresh", "--quiet"]
    if not (reuse and out.exists() and out.stat().st_mtime > draft.stat().st_mtime):
        done = subprocess.run(command, capture_output=True, text=True)
        if done.returncode != 0:
            return {"scan_exit": done.returncode, "error": done.stderr.strip()[-600:]}
    report = json.loads(subprocess.run([*IMPACTSCOPE, "report", str(out), "--format", "json"],
                                       capture_output=True, text=True, check=True).stdout)
    entries = {c["id"]: c for c in tomllib.loads(draft.read_text(encoding="utf-8"))["change"]}
    old_pkg, new_pkg = source_of(work, lib, "old"), source_of(work, lib, "new")
    old, new = read(old_pkg), read(new_pkg)
    items = tomllib.loads(lib.documented.read_text(encoding="utf-8"))["item"]
    surface, _ = build_for_drafts(old_pkg, lib.name)

    def right(entry: dict) -> bool:
        return documented(entry, items, surface.canonical) or verified(entry, old, new)

    result = {"projects_using_library": report["totals"]["projects_using_library"]}
    for tier in ("sure", "low"):
        hit = [c for c in report["changes"] if c["projects"]["resolved"]
               and (entries[c["id"]].get("certainty") == "low") == (tier == "low")]
        unchanged = [c for c in hit if not right(entries[c["id"]])]
        result[tier] = {
            "entries_with_findings": len(hit),
            "projects_resolved": len({f["project"] for f in report["findings"] if f["confidence"] == "resolved"
                                      and f["change"] in {c["id"] for c in hit}}),
            "entries_on_unchanged_members": [f"{c['kind']} {c['member']}" for c in unchanged],
            "projects_on_unchanged_members": len({f["project"] for f in report["findings"] if f["confidence"] == "resolved"
                                                  and f["change"] in {c["id"] for c in unchanged}}),
        }
    return result


def scan_all(libraries, work: Path, reuse: bool = False) -> dict:
    corpus = work / "corpus"
    run = _corpus_benchmark()
    benchmark = run.load_corpus()
    if not (corpus / "projects").exists():
        run.cmd_fetch(benchmark, corpus)
        run.cmd_unpack(benchmark, corpus)
    figures = {}
    for lib in libraries:
        for what in ("compare", "harvest"):
            figures[f"{lib.name}-{what}"] = found = check(lib, work, corpus, what, reuse)
            if "error" in found:
                print(f"{lib.name:9} {what:8} scan failed ({found['scan_exit']}): {found['error']}")
                continue
            for tier in ("sure", "low"):
                t = found[tier]
                print(f"{lib.name:9} {what:8} {tier:4}: {t['entries_with_findings']} entries with resolved findings in "
                      f"{t['projects_resolved']} projects; on unchanged members: {len(t['entries_on_unchanged_members'])} "
                      f"entries, {t['projects_on_unchanged_members']} projects {t['entries_on_unchanged_members'][:6]}")
    (work / "drafts" / "scan_check.json").write_text(json.dumps(figures, indent=1) + "\n")
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--work", type=Path, required=True)
    parser.add_argument("--reuse", action="store_true", help="keep a scan's results when they are newer than its draft")
    args = parser.parse_args(argv)
    scan_all(load_libraries(), args.work.resolve(), args.reuse)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
