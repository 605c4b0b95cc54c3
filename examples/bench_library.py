"""What a library source costs a scan: cold and warm scans with and without --library-source.

Not a test. Each scan is `impactscope scan` in its own process, timed from outside (wall clock,
interpreter start included), the median of --repeats runs:

  cold     an empty results folder: no results file, no surface file beside it
  warm     a rescan onto the results of a cold scan after 3 files changed (one line appended to
           each of 3 source files that import the library, in 3 different projects), so those
           3 projects are scanned again and the rest reused; every run edits the files afresh

each without a library source (the change list's [types] only) and with one (the surface read
from the source, kept beside the results file). It prints the medians and the two ratios that
matter: with / without, cold and warm.

    python examples/bench_library.py --demo                     # the demo corpus and heronframe
    python examples/bench_library.py --corpus DIR --changes FILE --library-source PKG
"""

from __future__ import annotations

import argparse
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

TOUCHED = 3


def _scan(changes: Path, corpus: Path, out: Path, source: Path | None, jobs: int) -> float:
    command = [sys.executable, "-m", "impactscope.cli", "scan", str(changes), str(corpus), "--out", str(out),
               "--jobs", str(jobs), "--quiet"]
    if source is not None:
        command += ["--library-source", str(source)]
    started = time.perf_counter()
    subprocess.run(command, check=True)
    return time.perf_counter() - started


def _clear(folder: Path) -> None:
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)


def _users(corpus: Path, library: str) -> list[Path]:
    """One source file that imports the library from each of the first 3 projects that have one."""
    pattern = re.compile(rf"^\s*(import|from)\s+{re.escape(library)}\b", re.MULTILINE)
    chosen: list[Path] = []
    for project in sorted(p for p in corpus.iterdir() if p.is_dir()):
        for path in sorted(project.rglob("*.py")):
            try:
                text = path.read_text(encoding="utf-8")
            except (OSError, UnicodeDecodeError):
                continue
            if pattern.search(text):
                chosen.append(path)
                break
        if len(chosen) == TOUCHED:
            return chosen
    raise SystemExit(f"{corpus}: fewer than {TOUCHED} projects import {library}")


def _edit(files: list[Path], run: int) -> None:
    for path in files:
        with open(path, "a", encoding="utf-8") as out:
            out.write(f"\n# bench_library edit {run}\n")


def measure(changes: Path, corpus: Path, source: Path | None, repeats: int, jobs: int, work: Path, users: list[Path]) -> dict[str, float]:
    cold: list[float] = []
    warm: list[float] = []
    for run in range(repeats):
        folder = work / f"{'with' if source else 'without'}-{run}"
        _clear(folder)
        out = folder / "results.sqlite"
        cold.append(_scan(changes, corpus, out, source, jobs))
        _edit(users, run)
        warm.append(_scan(changes, corpus, out, source, jobs))
    return {"cold": statistics.median(cold), "warm": statistics.median(warm),
            "cold_runs": cold, "warm_runs": warm}  # type: ignore[dict-item]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--demo", action="store_true", help="generate the demo corpus and use heronframe's source")
    parser.add_argument("--projects", type=int, default=240, help="demo corpus size")
    parser.add_argument("--corpus", type=Path, help="a folder of projects (copied; the copy is edited)")
    parser.add_argument("--changes", type=Path, help="the change list, without a [library] source")
    parser.add_argument("--library-source", type=Path, help="the library's package folder")
    parser.add_argument("--library", help="import name, to pick the files to edit (default: from the change list)")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--work", type=Path, help="scratch folder (default: a temporary one)")
    args = parser.parse_args()

    work = args.work or Path(tempfile.mkdtemp(prefix="impactscope-bench-library-"))
    work.mkdir(parents=True, exist_ok=True)
    corpus = work / "corpus"
    if args.demo:
        from importlib import resources

        from impactscope.demo import generate_corpus

        if not corpus.is_dir():
            generate_corpus(corpus, projects=args.projects, seed=7)
        text = (resources.files("impactscope.demo") / "changes.toml").read_text(encoding="utf-8")
        changes = work / "changes.toml"
        # The demo change list names its source; the "without" runs must not have one.
        changes.write_text(re.sub(r"(?m)^source\s*=.*\n", "", text), encoding="utf-8")
        source = Path(str(resources.files("impactscope.demo") / "heronframe"))
        library = "heronframe"
    else:
        if not (args.corpus and args.changes and args.library_source):
            parser.error("give --demo, or --corpus, --changes and --library-source")
        if not corpus.is_dir():
            shutil.copytree(args.corpus, corpus, symlinks=True)
        changes, source = args.changes.resolve(), args.library_source.resolve()
        library = args.library or re.search(r'(?m)^name\s*=\s*"([^"]+)"', changes.read_text(encoding="utf-8")).group(1)  # type: ignore[union-attr]
    users = _users(corpus, library)
    print(f"corpus {corpus} ({sum(1 for _ in corpus.iterdir())} projects); edited per warm run: "
          + ", ".join(str(p.relative_to(corpus)) for p in users))
    without = measure(changes, corpus, None, args.repeats, args.jobs, work / "runs", users)
    with_source = measure(changes, corpus, source, args.repeats, args.jobs, work / "runs", users)
    for name, row in (("without source", without), ("with source", with_source)):
        print(f"{name:15s} cold {row['cold']:7.2f} s  warm {row['warm']:6.2f} s   "
              f"(runs: cold {', '.join(f'{t:.2f}' for t in row['cold_runs'])}; "  # type: ignore[union-attr]
              f"warm {', '.join(f'{t:.2f}' for t in row['warm_runs'])})")  # type: ignore[union-attr]
    print(f"with / without: cold {with_source['cold'] / without['cold']:.2f}x, warm {with_source['warm'] / without['warm']:.2f}x")
    return 0


if __name__ == "__main__":
    sys.exit(main())
