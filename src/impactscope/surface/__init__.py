"""The library's public API, read statically from its source or stubs (never imported or run)."""

from .build import build_surface
from .compare import DraftChange, compare_surfaces, draft_changes, render_draft
from .harvest import HarvestedChange, harvest_deprecations
from .locate import locate_installed
from .model import Member, Parameter, Problem, Surface, SurfaceError

__all__ = [
    "DraftChange",
    "HarvestedChange",
    "Member",
    "Parameter",
    "Problem",
    "Surface",
    "SurfaceError",
    "build_surface",
    "compare_surfaces",
    "draft_changes",
    "harvest_deprecations",
    "locate_installed",
    "render_draft",
]
