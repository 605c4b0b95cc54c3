"""Side-by-side timing of impactscope against simpler ways of looking at the same corpus.

Not a test. It generates a corpus with the demo generator (or takes yours with --corpus), then,
each variant in its own subprocess so its peak memory is its own, takes the median of --repeats
runs of:

  a  read   read the bytes of every source file (archive members decompressed)
  b  ast    ast.parse + ast.walk every source file (notebooks: each code cell)
  c  naive  libcst on every file: MetadataWrapper resolving QualifiedNameProvider and
            PositionProvider, qualified names matched against the changed members
  d  cold1  impactscope scan, empty results file, one job
  e  cold2  impactscope scan, empty results file, two jobs
  f  warm   impactscope scan again onto the results of d (nothing changed)

then a worst case (c and d with changed members named `append` and `copy`, words most files
contain) and a scaling check (peak memory of d on a quarter of the corpus). It prints MB/s,
files/s, peak RSS and the ratios d/c, d/b, e/d, f/a (as speed-ups: how many times faster).

    python examples/benchmark.py --quick                  # a 5 MB smoke run
    python examples/benchmark.py --size-mb 20 --repeats 3
    python examples/benchmark.py --corpus DIR [DIR...] --changes FILE
"""

from __future__ import annotations

import argparse
import ast
import json
import os
import re
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any, Callable, Iterator

# The built-in change lists are demo data, shared with the tests of the shortcuts.
TYPICAL = (resources.files("impactscope.demo") / "bench-typical.toml").read_text(encoding="utf-8")
WORST = (resources.files("impactscope.demo") / "bench-common-names.toml").read_text(encoding="utf-8")

CHUNK_PROJECTS = 600  # the demo generator draws names from a pool of 640
FILLER_FILES = 3  # keeps about 30% of the files using the library


# ------------------------------------------------------------------ corpus


def generate(base: Path, size_mb: float, seed: int, chunk_projects: int = CHUNK_PROJECTS) -> list[Path]:
    """Corpus roots from the demo generator, one per seed, until they hold `size_mb` of source."""
    from impactscope.demo.generate import generate_corpus

    # A corpus generated before into the same folder with the same settings is reused.
    stamp = base / "generated.json"
    settings = {"size_mb": size_mb, "seed": seed, "chunk_projects": chunk_projects}
    if stamp.exists():
        recorded = json.loads(stamp.read_text(encoding="utf-8"))
        if recorded.get("settings") == settings:
            print(f"  reusing the corpus generated before in {base}", file=sys.stderr)
            return [base / name for name in recorded["roots"]]
        raise SystemExit(f"{base} holds a corpus generated with {recorded.get('settings')}; use another --work")
    roots: list[Path] = []
    total = 0
    while total < size_mb * 1e6:
        root = base / f"root{len(roots):02d}"
        generate_corpus(root, projects=chunk_projects, seed=seed + len(roots), filler_files=FILLER_FILES)
        roots.append(root)
        total += census(roots[-1:], [])["bytes"]
        print(f"  generated {root.name}: {total / 1e6:.1f} MB of source so far", file=sys.stderr)
    stamp.write_text(json.dumps({"settings": settings, "roots": [r.name for r in roots]}), encoding="utf-8")
    return roots


def sources(roots: list[Path]) -> Iterator[tuple[str, bytes]]:
    from impactscope.corpus.roots import discover

    for project in discover(roots, library="heronframe"):
        for entry in project.entries():
            if entry.skip is None and entry.error is None:
                try:
                    yield entry.path, entry.read()
                except Exception:  # noqa: BLE001 - a damaged member is not source to measure
                    continue


def census(roots: list[Path], names: list[str]) -> dict[str, Any]:
    word = re.compile(rb"(?<![\w])(?:" + b"|".join(re.escape(n.encode()) for n in names) + rb")(?![\w])") if names else None
    files = size = library = touching = notebooks = archives = 0
    for path, data in sources(roots):
        files += 1
        size += len(data)
        notebooks += path.endswith(".ipynb")
        if b"heronframe" in data:
            library += 1
            touching += bool(word and word.search(data))
    for root in roots:
        archives += sum(1 for p in root.iterdir() if p.name.endswith((".zip", ".tar.gz", ".tgz", ".tar")))
    return {"files": files, "bytes": size, "library": library, "touching": touching,
            "notebooks": notebooks, "archives": archives}


def text_cells(path: str, data: bytes) -> list[str]:
    """The Python text of a source file, cell by cell, as impactscope's reader sees it."""
    from impactscope.corpus.sources import read_notebook, read_python

    try:
        source = read_notebook(data, path) if path.endswith(".ipynb") else read_python(data, path)
    except ValueError:
        return []
    return [cell.code for cell in source.cells]


# ------------------------------------------------------------------ variants (run in a subprocess)


def v_read(roots: list[Path], changes: Path, work: Path) -> int:
    files = 0
    for _ in sources(roots):
        files += 1
    return files


def v_ast(roots: list[Path], changes: Path, work: Path) -> int:
    files = 0
    for path, data in sources(roots):
        files += 1
        for code in text_cells(path, data):
            try:
                tree = ast.parse(code)
            except (SyntaxError, ValueError):
                continue
            for _node in ast.walk(tree):
                pass
    return files


def v_naive(roots: list[Path], changes: Path, work: Path, also: Path | None = None) -> int:
    import libcst as cst
    from libcst.metadata import MetadataWrapper, PositionProvider, QualifiedNameProvider

    from impactscope.changes import load_change_list

    # `also` (from --also-changes): a second list matched in the same pass. The naive cost is
    # parsing and resolving every file, which does not depend on the list, so one pass serves two.
    lists = [changes] if also is None else [changes, also]
    member_lists = [[c.member for c in load_change_list(path).changes] for path in lists]
    files = 0
    hits = [0] * len(lists)
    for path, data in sources(roots):
        files += 1
        for code in text_cells(path, data):
            try:
                wrapper = MetadataWrapper(cst.parse_module(code))
            except Exception:  # noqa: BLE001 - libcst's parser errors
                continue
            names = wrapper.resolve(QualifiedNameProvider)
            positions = wrapper.resolve(PositionProvider)
            for node, qualified in names.items():
                if callable(qualified):  # libcst computes qualified names lazily
                    qualified = qualified()
                for q in qualified:
                    for k, members in enumerate(member_lists):
                        if any(q.name == m or q.name.startswith(m + ".") for m in members):
                            hits[k] += 1
                            _ = positions.get(node)
    print(f"naive matches: {hits}", file=sys.stderr)
    return files


def _scan(roots: list[Path], changes: Path, out: Path, jobs: int, fresh: bool) -> int:
    from impactscope.scan.run import run_scan

    return run_scan(changes, roots, out, jobs=jobs, fresh=fresh).files


def v_cold1(roots: list[Path], changes: Path, work: Path) -> int:
    return _scan(roots, changes, work / "cold1.sqlite", 1, True)


def v_cold2(roots: list[Path], changes: Path, work: Path) -> int:
    return _scan(roots, changes, work / "cold2.sqlite", 2, True)


def v_warm(roots: list[Path], changes: Path, work: Path) -> int:
    out = work / "warm.sqlite"
    if not out.exists():
        raise SystemExit("warm needs warm.sqlite prepared by the driver")
    return _scan(roots, changes, out, 1, False)


VARIANTS: dict[str, Callable[[list[Path], Path, Path], int]] = {
    "read": v_read, "ast": v_ast, "naive": v_naive, "cold1": v_cold1, "cold2": v_cold2, "warm": v_warm,
}


def run_variant(name: str, roots: list[Path], changes: Path, work: Path, also: Path | None = None) -> None:
    started = time.perf_counter()
    files = v_naive(roots, changes, work, also) if name == "naive" else VARIANTS[name](roots, changes, work)
    seconds = time.perf_counter() - started
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    print(json.dumps({"seconds": seconds, "files": files, "rss_kb": max(own, children)}))


# ------------------------------------------------------------------ driver


@dataclass(frozen=True)
class Timing:
    name: str
    seconds: float  # median
    runs: tuple[float, ...]
    files: int
    rss_mb: float  # peak over the runs


def measure(name: str, roots: list[Path], changes: Path, work: Path, repeats: int,
            before: Callable[[], None] | None = None, also: Path | None = None) -> Timing:
    runs, rss, files = [], 0.0, 0
    for _ in range(repeats):
        if before is not None:
            before()
        cmd = [sys.executable, os.path.abspath(__file__), "--variant", name, "--changes", str(changes),
               "--work", str(work), "--corpus", *map(str, roots)]
        if also is not None:
            cmd += ["--also-changes", str(also)]
        done = subprocess.run(cmd, capture_output=True, text=True)
        if done.returncode != 0:
            raise SystemExit(f"variant {name} failed:\n{done.stderr}")
        result = json.loads(done.stdout.strip().splitlines()[-1])
        runs.append(result["seconds"])
        rss = max(rss, result["rss_kb"] / 1024)
        files = result["files"]
    timing = Timing(name, statistics.median(runs), tuple(runs), files, rss)
    print(f"  {name:7} median {timing.seconds:8.2f} s  of {', '.join(f'{r:.2f}' for r in runs)}  "
          f"peak RSS {rss:6.0f} MB", file=sys.stderr)
    return timing


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--corpus", nargs="+", type=Path, help="corpus root(s) to use instead of generating one")
    parser.add_argument("--changes", type=Path, help="change list for the typical case (default: a built-in one)")
    parser.add_argument("--worst-changes", type=Path, help="change list for the worst case (default: append, copy)")
    parser.add_argument("--size-mb", type=float, default=50.0, help="source size of the generated corpus")
    parser.add_argument("--quick", action="store_true", help="a 5 MB smoke run with one repeat")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--seed", type=int, default=11)
    parser.add_argument("--chunk-projects", type=int, default=CHUNK_PROJECTS,
                        help="projects per generated root (the corpus is several roots, one seed each)")
    parser.add_argument("--work", type=Path, help="working folder (default: a temporary one, removed after)")
    parser.add_argument("--shared-naive", action="store_true",
                        help="one naive pass per repeat matches both change lists and serves as c and c' "
                             "(halves the slowest part of a large run)")
    parser.add_argument("--also-changes", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--no-worst", action="store_true", help="skip the worst case")
    parser.add_argument("--no-scaling", action="store_true", help="skip the quarter-corpus memory check")
    parser.add_argument("--only", default="a,b,c,d,e,f,worst,scaling",
                        help="comma-separated subset of a,b,c,d,e,f,worst,worst-d,scaling to run (default: all; "
                             "worst-d: the worst case without its slow naive baseline)")
    parser.add_argument("--variant", choices=sorted(VARIANTS), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.variant:
        run_variant(args.variant, args.corpus, args.changes, args.work, args.also_changes)
        return 0

    if args.quick:
        args.size_mb, args.repeats = 5.0, 1
    work = args.work or Path(tempfile.mkdtemp(prefix="impactscope-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    try:
        return drive(args, work)
    finally:
        if args.work is None:
            shutil.rmtree(work, ignore_errors=True)


def drive(args: argparse.Namespace, work: Path) -> int:
    from impactscope.changes import load_change_list

    if args.corpus:
        roots = list(args.corpus)
    else:
        print(f"generating about {args.size_mb:g} MB of source in {work} ...", file=sys.stderr)
        roots = generate(work / "corpus", args.size_mb, args.seed, args.chunk_projects)
    typical = args.changes or work / "typical.toml"
    worst = args.worst_changes or work / "worst.toml"
    if not args.changes:
        typical.write_text(TYPICAL, encoding="utf-8")
    if not args.worst_changes:
        worst.write_text(WORST, encoding="utf-8")
    names = sorted({c.name for c in load_change_list(typical).changes})
    worst_names = sorted({c.name for c in load_change_list(worst).changes})
    facts = census(roots, names)
    worst_facts = census(roots, worst_names)
    mb = facts["bytes"] / 1e6
    print(
        f"corpus: {len(roots)} root(s), {facts['files']} source files ({facts['notebooks']} notebooks, "
        f"{facts['archives']} archive projects), {mb:.1f} MB; {facts['library'] / facts['files']:.0%} of files "
        f"name the library, {facts['touching'] / facts['files']:.1%} of files also name a changed member "
        f"({', '.join(names)}); worst case names ({', '.join(worst_names)}): "
        f"{worst_facts['touching'] / facts['files']:.0%} of files",
        file=sys.stderr,
    )
    print(f"median of {args.repeats} run(s), each in its own process:", file=sys.stderr)
    r = args.repeats
    only = {part.strip() for part in args.only.split(",") if part.strip()}
    if "f" in only:
        only.add("d")  # the warm rescan starts from d's results
    t: dict[str, Timing] = {}
    shared = args.shared_naive and "worst" in only and not args.no_worst
    for key, variant in (("a", "read"), ("b", "ast"), ("c", "naive"), ("d", "cold1"), ("e", "cold2")):
        if key in only:
            t[key] = measure(variant, roots, typical, work, r, also=worst if key == "c" and shared else None)
    if "f" in only:
        prepared = work / "warm.sqlite"
        shutil.copyfile(work / "cold1.sqlite", prepared)
        for suffix in ("-wal", "-shm"):
            Path(str(prepared) + suffix).unlink(missing_ok=True)
        t["f"] = measure("warm", roots, typical, work, r)
    worst_t: dict[str, Timing] = {}
    if ("worst" in only or "worst-d" in only) and not args.no_worst:
        print("worst case:", file=sys.stderr)
        if "worst" in only and shared and "c" in t:
            worst_t["c"] = t["c"]
            print("  naive   (the typical case's pass, which matched both lists)", file=sys.stderr)
        elif "worst" in only:
            worst_t["c"] = measure("naive", roots, worst, work, r)
        worst_t["d"] = measure("cold1", roots, worst, work, r)
    quarter: Timing | None = None
    quarter_mb = 0.0
    if "scaling" in only and not args.no_scaling and len(roots) >= 2:
        if "d" not in t:
            t["d"] = measure("cold1", roots, typical, work, r)
        part = roots[: max(1, len(roots) // 4)]
        quarter_mb = census(part, [])["bytes"] / 1e6
        print(f"scaling: cold1 on {len(part)} of {len(roots)} roots ({quarter_mb:.1f} MB):", file=sys.stderr)
        quarter = measure("cold1", part, typical, work, 1)

    labels = {"a": "read bytes", "b": "ast parse+walk", "c": "naive libcst", "d": "impactscope cold, 1 job",
              "e": "impactscope cold, 2 jobs", "f": "impactscope warm rescan"}
    print(f"\n{'variant':32} {'seconds':>9} {'MB/s':>8} {'files/s':>9} {'peak RSS MB':>12}")
    for key, timing in t.items():
        print(f"{key}  {labels[key]:29} {timing.seconds:9.2f} {mb / timing.seconds:8.2f} "
              f"{facts['files'] / timing.seconds:9.0f} {timing.rss_mb:12.0f}")
    for key, timing in worst_t.items():
        print(f"{key}' {labels[key] + ' (worst)':29} {timing.seconds:9.2f} {mb / timing.seconds:8.2f} "
              f"{facts['files'] / timing.seconds:9.0f} {timing.rss_mb:12.0f}")

    def ratio(slow: str, fast: str, table: dict[str, Timing] = t) -> str:
        if slow not in table or fast not in table:
            return "    n/a"
        return f"{table[slow].seconds / table[fast].seconds:7.2f}x"

    print("\nratios (how many times faster):")
    print(f"  d vs c  (target >= 50x):  {ratio('c', 'd')}")
    print(f"  d vs b  (target >= 2x):   {ratio('b', 'd')}")
    print(f"  e vs d  (target >= 1.7x): {ratio('d', 'e')}")
    print(f"  f vs a  (target: f within 3x of a, i.e. >= 0.33x): {ratio('a', 'f')}")
    if worst_t:
        print(f"  worst d vs worst c (target >= 5x): {ratio('c', 'd', worst_t)}")
    peak = max(x.rss_mb for x in [*t.values(), *worst_t.values()])
    print(f"  peak RSS over all variants (target < 500 MB): {peak:.0f} MB")
    if quarter is not None:
        growth = t["d"].rss_mb / quarter.rss_mb - 1
        print(f"  RSS of d at {mb:.1f} MB vs {quarter_mb:.1f} MB ({mb / quarter_mb:.1f}x the corpus): "
              f"{t['d'].rss_mb:.0f} vs {quarter.rss_mb:.0f} MB, {growth:+.0%} (target <= +20% for 4x)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
