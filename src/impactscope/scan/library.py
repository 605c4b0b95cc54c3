"""Choose the library model a scan resolves against: the change list's `[types]` alone, or the
library's own source read statically (from `[library] source`, a path, or an installed copy)."""

from __future__ import annotations

from pathlib import Path

from impactscope.changes import ChangeList
from impactscope.resolve.model import LibraryModel, SurfaceModel, TypesModel


def library_model(
    changes: ChangeList, *, source: Path | None = None, installed: str | None = None
) -> LibraryModel:
    """`source` (a path) or `installed` (a distribution or import name) override `[library] source`."""
    from impactscope.surface import build_surface, locate_installed

    if installed is not None:
        where: Path | None = locate_installed(installed)
    else:
        where = source if source is not None else changes.source
    if where is None:
        return TypesModel(changes)
    if not Path(where).exists():
        raise FileNotFoundError(2, "library source not found; fix [library] source or --library-source", str(where))
    return SurfaceModel(build_surface(where, changes.import_name), changes)
