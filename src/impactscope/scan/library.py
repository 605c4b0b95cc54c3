"""What a scan resolves against, prepared once per scan and handed to every worker.

When the change list names the library's source, its surface is read (ast, never importing) once,
by the process that drives the scan, and kept as JSON beside the results file under the content
hash of exactly the files the surface builder reads. A rescan with the same library finds it
there and reads no library file twice; workers receive the compiled query (inherited by forked
pool workers) or the surface JSON (spawned or cluster workers) and never read the source.
"""

from __future__ import annotations

import functools
import glob
import hashlib
import json
import os
import tempfile
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING

from impactscope import __version__
from impactscope.changes import ChangeList
from impactscope.resolve.model import SurfaceModel, TypesModel
from impactscope.resolve.query import Query

if TYPE_CHECKING:
    from impactscope.surface.model import Surface

SURFACE_SUFFIX = ".surface-"


def _builder_digest() -> str:
    """The surface builder's own code, so a changed builder never reuses an old surface file."""
    h = hashlib.sha256(__version__.encode())
    package = resources.files("impactscope.surface")
    for name in sorted(p.name for p in package.iterdir() if p.name.endswith(".py")):
        h.update(name.encode())
        h.update((package / name).read_bytes())
    return h.hexdigest()


def source_digest(source: Path, import_name: str) -> str:
    """sha256 over the names and bytes of the modules the surface builder would read at `source`."""
    from impactscope.corpus.files import FileRefused, read_regular
    from impactscope.surface.build import discover_modules
    from impactscope.surface.parsing import MODULE_BYTES

    name, modules = discover_modules(source, import_name)
    h = hashlib.sha256(_builder_digest().encode())
    h.update(name.encode())
    for module in modules:
        h.update(f"\0{module.name}\0{int(module.is_package)}{int(module.is_stub)}\0".encode())
        if module.path is not None:
            # Read as the surface builder reads it: a FIFO would block a plain read, and what the
            # builder refuses (special file, link out, too large) counts by its reason alone.
            try:
                h.update(read_regular(str(module.path), MODULE_BYTES, reason="module too large"))
            except (FileRefused, OSError) as exc:
                h.update(f"\0not read: {getattr(exc, 'reason', type(exc).__name__)}".encode())
    return h.hexdigest()


@dataclass(frozen=True)
class ScanLibrary:
    """The change list, and the library surface as JSON text when the change list names a source.

    Picklable and self-contained: a worker that receives it compiles the query without touching
    the library's files. `digest` is the source's content hash ("" without a source).
    """

    changes: ChangeList
    surface_json: str | None = None
    digest: str = ""
    where: str = ""  # the surface file, for messages

    @functools.cached_property
    def query(self) -> Query:
        """The compiled query, made on first use and then kept by this object (one per process)."""
        if self.surface_json is None:
            return Query(self.changes, TypesModel(self.changes))
        from impactscope.surface.model import Surface, SurfaceError

        try:
            surface = Surface.from_json(json.loads(self.surface_json))
        except (ValueError, SurfaceError) as exc:
            raise SurfaceError(f"{self.where}: damaged library surface file ({exc}); delete it and scan again") from None
        return Query(self.changes, SurfaceModel(surface, self.changes))

    def __getstate__(self) -> dict[str, object]:
        # The compiled query stays behind: a receiver compiles its own, from the JSON.
        state = dict(self.__dict__)
        state.pop("query", None)
        return state

    def __setstate__(self, state: dict[str, object]) -> None:
        self.__dict__.update(state)


def surface_file(out: Path, digest: str) -> Path:
    return out.with_name(f"{out.name}{SURFACE_SUFFIX}{digest[:24]}.json")


def library_digest(changes: ChangeList) -> str:
    """The digest of what the surface is built from: the source, the stubs, or both ("" for
    neither: the change list's `[types]` alone)."""
    parts = [source_digest(p, changes.import_name) for p in (changes.source, changes.stubs) if p is not None]
    if len(parts) < 2:
        return parts[0] if parts else ""
    return hashlib.sha256(("stubs+source\0" + "\0".join(parts)).encode()).hexdigest()


def build_library_surface(changes: ChangeList) -> "Surface":
    """The surface of the library the change list names: its source, its stubs, or both merged
    (PEP 561: the stubs describe the types; the source keeps the names the stubs left out)."""
    from impactscope.surface import build_surface
    from impactscope.surface.model import merge_surfaces

    if changes.stubs is None:
        assert changes.source is not None
        return build_surface(changes.source, changes.import_name)
    stubs = build_surface(changes.stubs, changes.import_name)
    if changes.source is None:
        return stubs
    return merge_surfaces(stubs, build_surface(changes.source, changes.import_name))


def prepare_library(changes: ChangeList, out: Path, digest: str | None = None) -> ScanLibrary:
    """The library for a scan into `out`: the surface file beside it is reused when its content
    hash matches, else the surface is built from the source and written there (older surface
    files of the same results file are removed). `digest`: the source's digest, if known."""
    if changes.source is None and changes.stubs is None:
        return ScanLibrary(changes)
    if not digest:
        digest = library_digest(changes)
    cache = surface_file(out, digest)
    from impactscope.surface.check import check_members

    try:
        # Written by an atomic rename, so a file that is there is whole.
        cached = ScanLibrary(changes, cache.read_text(encoding="utf-8"), digest, str(cache))
    except (OSError, UnicodeDecodeError):
        pass
    else:
        # The change list may differ from the one the file was built for: check it (exit 2 on a
        # typo). `query` reads the surface from the JSON once; it is then kept for this process.
        check_members(changes, cached.query.model.surface, changes.stubs or changes.source)  # type: ignore[attr-defined,arg-type]
        return cached
    built = build_library_surface(changes)
    check_members(changes, built, changes.stubs or changes.source)
    text = json.dumps(built.to_json(), separators=(",", ":"))
    _write_atomically(cache, text)
    for stale in out.parent.glob(f"{glob.escape(out.name)}{SURFACE_SUFFIX}*.json"):
        if stale != cache:
            stale.unlink(missing_ok=True)
    library = ScanLibrary(changes, text, digest, str(cache))
    # The surface at hand is compiled directly rather than read back from its JSON.
    library.__dict__["query"] = Query(changes, SurfaceModel(built, changes))
    return library


def _write_atomically(path: Path, text: str) -> None:
    handle, temporary = tempfile.mkstemp(prefix=path.name, suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as stream:
            stream.write(text)
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


__all__ = ["ScanLibrary", "build_library_surface", "library_digest", "prepare_library", "source_digest", "surface_file"]
