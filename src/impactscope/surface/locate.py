"""Find an installed library's source or stubs through its distribution metadata, without importing it.

The order follows PEP 561, "Type Checker Module Resolution Order": a `NAME-stubs` stub package
first, then the package's own inline stubs (`.pyi`), then its `.py` sources. Inline stubs and
sources share a directory; `build_surface` prefers each module's `.pyi` over its `.py`, so both
cases return the package directory (or, for a single-module distribution, the file to read).
"""

from __future__ import annotations

import importlib.machinery
import importlib.metadata
import importlib.util
import os
from collections.abc import Iterable, Sequence
from pathlib import Path, PurePosixPath

from .model import SurfaceError


def _top_level(dist: importlib.metadata.Distribution) -> set[str]:
    """Top-level import names (and `x-stubs` folders) a distribution installs."""
    names: set[str] = set()
    for f in dist.files or ():
        parts = PurePosixPath(str(f)).parts
        if not parts or parts[0] in ("..", "/") or parts[0].endswith((".dist-info", ".egg-info", ".data")):
            continue
        if len(parts) > 1:
            names.add(parts[0])
        elif parts[0].endswith((".py", ".pyi")):
            names.add(parts[0].rsplit(".", 1)[0])
    text = dist.read_text("top_level.txt")
    if text:
        names.update(line.strip() for line in text.splitlines() if line.strip())
    return names


def _files(dist: importlib.metadata.Distribution) -> set[str]:
    return {PurePosixPath(str(f)).as_posix() for f in dist.files or ()}


def _import_names(name: str, dists: Sequence[importlib.metadata.Distribution]) -> list[str]:
    """Import names to look for: `name` itself, or what the distribution called `name` installs."""
    wanted = name.replace("-", "_").lower()
    for dist in dists:
        if (dist.metadata["Name"] or "").replace("-", "_").lower() == wanted:
            tops = sorted(t for t in _top_level(dist) if t.isidentifier() and not t.startswith("_"))
            if name in tops:
                return [name]
            if tops:
                return tops
    return [name]


def library_location(source: str | os.PathLike[str] | None = None, installed: str | None = None,
                     fallback: Path | None = None) -> Path | None:
    """Where the library is read from: the installed distribution `installed` (found by
    `locate_installed`) or the path `source`, at most one of the two, else `fallback` (a change
    list's `[library] source`); None when there is none. Raises SurfaceError when both are given
    or the path does not exist."""
    if source is not None and installed is not None:
        raise SurfaceError("give the library's source path or an installed distribution's name, not both")
    if installed is not None:
        return locate_installed(installed)
    where = Path(source) if source is not None else fallback
    if where is not None and not where.exists():
        raise SurfaceError(f"{where}: no such file or folder; pass the library's package folder")
    return where


def locate_installed(name: str, path: Sequence[str | Path] | None = None) -> Path:
    """The directory or file to read for installed library `name` (an import or distribution name).

    `path` restricts the search to those directories (default: sys.path). Raises SurfaceError
    when nothing installed provides the name.
    """
    search = None if path is None else [str(p) for p in path]
    dists = list(importlib.metadata.distributions(path=search) if search is not None else importlib.metadata.distributions())
    for module in _import_names(name, dists):
        found = _locate(module, dists, search)
        if found is not None:
            return found
    where = "sys.path" if search is None else ", ".join(search)
    raise SurfaceError(
        f"cannot find an installed library called {name!r}: looked in {len(dists)} distributions on {where} "
        f"for a stub package ({name}-stubs/), inline stubs ({name}/__init__.pyi or {name}.pyi) and sources "
        f"({name}/__init__.py or {name}.py); install it into this environment (pip install {name}) "
        "or pass the path of its source directory instead"
    )


def _locate(module: str, dists: Iterable[importlib.metadata.Distribution], search: list[str] | None) -> Path | None:
    listed = [(dist, _files(dist)) for dist in dists]  # each RECORD is read once
    # 1. A stub-only package, whichever distribution ships it (PEP 561: `foo-stubs`).
    for dist, files in listed:
        if any(f.startswith(f"{module}-stubs/") for f in files):
            found = Path(str(dist.locate_file(f"{module}-stubs")))
            if found.is_dir():
                return found
    # 2 and 3. The package itself: inline stubs or sources.
    for suffix in (".pyi", ".py"):
        for dist, files in listed:
            if f"{module}/__init__{suffix}" in files:
                found = Path(str(dist.locate_file(module)))
                if found.is_dir():
                    return found
            if f"{module}{suffix}" in files:
                found = Path(str(dist.locate_file(f"{module}{suffix}")))
                if found.is_file():
                    return found
    # Not in any RECORD (editable installs, the standard library): ask the path finders. For a
    # top-level name this only searches; it does not execute the package.
    try:
        spec = (importlib.machinery.PathFinder.find_spec(module, search) if search is not None
                else importlib.util.find_spec(module) if module.isidentifier() else None)
    except (ImportError, ValueError):
        spec = None
    if spec is None or spec.origin in (None, "built-in", "frozen"):
        if spec is not None and spec.submodule_search_locations:
            return Path(next(iter(spec.submodule_search_locations)))
        return None
    origin = Path(spec.origin)
    if origin.suffix not in (".py", ".pyi"):
        return None  # an extension module: no source to read
    if origin.name.startswith("__init__."):
        return origin.parent
    stub = origin.with_suffix(".pyi")
    return stub if stub.is_file() else origin
