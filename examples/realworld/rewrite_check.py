"""Check `impactscope rewrite` on the real-world corpora: the patches apply, the rewritten files
parse, and a second rewrite of the patched code finds nothing left to do.

    python examples/realworld/rewrite_check.py --work /tmp/rwl [--library pandas] [--jobs 1]

Reads the unpacked projects of `run.py unpack` (WORK/projects/<library>) and the old library
source (WORK/library/<library>-<old>/<library>). For each library it:

1. runs `impactscope rewrite CHANGES ROOT --out WORK/rewrite/<library>/patches` with the
   library's source;
2. copies each patched project to WORK/rewrite/<library>/applied/<project>, makes it a git
   repository (`git init`, nothing committed) and runs `git apply --check`, then `git apply`;
3. parses every file a patch touched (`ast.parse` for modules; each notebook cell that parsed
   before through the scan's own notebook reader and libcst);
4. runs the rewrite again on the applied copies: it must write no patch;
5. prints the figures (and WORK/rewrite/<library>/figures.json).

Nothing downloaded is imported or run; the check parses text only.
"""

from __future__ import annotations

import argparse
import ast
import json
import shutil
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import libcst as cst

HERE = Path(__file__).resolve().parent
IMPACTSCOPE = [sys.executable, "-c", "from impactscope.cli import main; main()"]


def _libraries() -> dict[str, tuple[str, Path, str]]:
    """Library name -> (its old version, its change list, its import name), from corpus.toml."""
    corpus = tomllib.loads((HERE / "corpus.toml").read_text(encoding="utf-8"))
    return {lib["name"]: (lib["old"]["version"], HERE / lib["changes"], lib.get("module", lib["name"]))
            for lib in corpus["library"]}


def _cells_that_parse(data: bytes, name: str) -> set[int | None]:
    from impactscope.corpus import SourceError, read_notebook

    try:
        cells = read_notebook(data, name).cells
    except SourceError:
        return set()
    good = set()
    for cell in cells:
        try:
            cst.parse_module(cell.code)
        except (cst.ParserSyntaxError, RecursionError):
            continue
        good.add(cell.index)
    return good


def _patched_paths(patch: Path) -> list[str]:
    """The files a patch changes (its `diff --git` lines name them; quoted names unquoted by git)."""
    listed = subprocess.run(["git", "apply", "--numstat", "-z", str(patch)], capture_output=True, check=True)
    return [entry.split(b"\t", 2)[2].decode("utf-8", "surrogateescape")
            for entry in listed.stdout.split(b"\0") if entry.count(b"\t") >= 2]


def check(work: Path, library: str, version: str, changes: Path, jobs: int, module: str) -> dict[str, object]:
    source = work / "library" / f"{library}-{version}" / module
    root = work / "projects" / library
    base = work / "rewrite" / library
    shutil.rmtree(base, ignore_errors=True)
    patches, again = base / "patches", base / "again"
    started = time.perf_counter()
    first = subprocess.run([*IMPACTSCOPE, "rewrite", str(changes), str(root), "--out", str(patches),
                            "--library-source", str(source), "--jobs", str(jobs), "--quiet"],
                           capture_output=True, text=True)
    seconds = time.perf_counter() - started
    if first.returncode != 0:
        raise SystemExit(f"rewrite of {library} failed ({first.returncode}): {first.stderr[-2000:]}")
    review = json.loads((patches / "review.json").read_text(encoding="utf-8"))
    applied = base / "applied"
    checked = failed = files = parse_failures = 0
    for name in review["patches"]:
        patch = patches / name
        project = name[: -len(".patch")]
        target = applied / project
        shutil.copytree(root / project, target, symlinks=True)
        subprocess.run(["git", "init", "-q", str(target)], check=True)
        ok = subprocess.run(["git", "apply", "--check", str(patch)], cwd=target, capture_output=True, text=True)
        if ok.returncode != 0:
            failed += 1
            print(f"  {library}/{project}: git apply --check refused: {ok.stderr.strip()[:300]}")
            continue
        checked += 1
        subprocess.run(["git", "apply", str(patch)], cwd=target, check=True)
        for path in _patched_paths(patch):
            files += 1
            after = (target / path).read_bytes()
            before = (root / project / path).read_bytes()
            if path.endswith(".ipynb"):
                lost = _cells_that_parse(before, path) - _cells_that_parse(after, path)
                if lost:
                    parse_failures += 1
                    print(f"  {library}/{project}/{path}: cells {sorted(lost)} no longer parse")
            else:
                try:
                    ast.parse(after)
                except SyntaxError as exc:
                    parse_failures += 1
                    print(f"  {library}/{project}/{path}: does not parse: {exc}")
    second = subprocess.run([*IMPACTSCOPE, "rewrite", str(changes), str(applied), "--out", str(again),
                             "--library-source", str(source), "--jobs", str(jobs), "--check", "--quiet"],
                            capture_output=True, text=True) if checked else None
    left = json.loads((again / "review.json").read_text(encoding="utf-8"))["patches"] if second else []
    sites = review["sites"]
    figures = {
        "library": library,
        "projects": len([p for p in root.iterdir()]),
        "patched_projects": len(review["patches"]),
        "apply_check_ok": checked,
        "apply_check_refused": failed,
        "files_rewritten": files,
        "files_not_parsing": parse_failures,
        "second_rewrite_patches": len(left),
        "second_rewrite_exit": None if second is None else second.returncode,
        "review_sites": len(sites),
        "review_resolved": sum(1 for s in sites if s["confidence"] == "resolved"),
        "rewrite_seconds": round(seconds, 1),
    }
    (base / "figures.json").write_text(json.dumps(figures, indent=2) + "\n", encoding="utf-8")
    return figures


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--work", type=Path, required=True, help="the folder run.py unpacked into")
    parser.add_argument("--library", help="only this library")
    parser.add_argument("--jobs", type=int, default=1)
    args = parser.parse_args()
    for library, (version, changes, module) in _libraries().items():
        if args.library and library != args.library:
            continue
        figures = check(args.work, library, version, changes, args.jobs, module)
        print(json.dumps(figures))


if __name__ == "__main__":
    main()
