"""Time build_surface on the largest pure-Python distribution installed next to this interpreter.

"Pure Python" here: the distribution's RECORD lists no compiled extension (.so, .pyd). Size is
counted in lines of the .py files it installs. Each of its top-level packages is read (parsed,
never imported) and the total lines, seconds and lines per second are printed.

    python examples/bench_surface.py [SITE_PACKAGES]
"""

from __future__ import annotations

import importlib.metadata
import sys
import sysconfig
import time
from pathlib import Path, PurePosixPath

from impactscope.surface import build_surface

COMPILED = (".so", ".pyd", ".dylib")


def largest_pure_distribution(site: Path) -> tuple[str, list[Path], int]:
    best: tuple[str, list[Path], int] = ("", [], 0)
    for dist in importlib.metadata.distributions(path=[str(site)]):
        files = [PurePosixPath(str(f)) for f in dist.files or ()]
        if not files or any(f.suffix in COMPILED for f in files):
            continue
        sources = [f for f in files if f.suffix == ".py" and f.parts[0] not in ("..", "__pycache__")]
        tops = sorted({f.parts[0] for f in sources if len(f.parts) > 1 and (site / f.parts[0] / "__init__.py").is_file()})
        lines = sum(_lines(site / f) for f in sources if f.parts[0] in tops)
        if lines > best[2]:
            best = (dist.metadata["Name"], [site / t for t in tops], lines)
    return best


def _lines(path: Path) -> int:
    try:
        return path.read_bytes().count(b"\n")
    except OSError:
        return 0


def main() -> None:
    site = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(sysconfig.get_paths()["purelib"])
    name, packages, lines = largest_pure_distribution(site)
    if not packages:
        raise SystemExit(f"no pure-Python distribution with packages found in {site}")
    start = time.perf_counter()
    members = problems = 0
    for package in packages:
        surface = build_surface(package)
        members += len(surface.members)
        problems += len(surface.problems)
    seconds = time.perf_counter() - start
    print(f"distribution: {name} ({', '.join(p.name for p in packages)}) in {site}")
    print(f"lines: {lines}")
    print(f"seconds: {seconds:.2f}")
    print(f"lines/s: {lines / seconds:,.0f}")
    print(f"members: {members}, unreadable modules: {problems}")


if __name__ == "__main__":
    main()
