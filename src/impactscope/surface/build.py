"""Build a `Surface` from a library's source text or stubs, read with `ast` and never run.

Reading is two passes. The first reads each module on its own (`reader`): the members it defines
and an ordered list of the bindings it makes (definitions, imports, aliases, star imports,
`__all__`). The second links modules together (`linking`), lazily and with cycle guards: a name
is resolved only when something asks for it, so import order and import cycles inside the
library do not matter. The modules are found by `discovery` and parsed by `parsing`.
"""

from __future__ import annotations

from pathlib import Path

from .discovery import ModuleFile, discover_modules, sources_first
from .linking import surface_from_parsed
from .model import Problem, Surface, merge_surfaces
from .parsing import MODULE_BYTES, ParsedModule, iter_parsed, parse_modules
from .syntax import dotted_name

__all__ = [
    "MODULE_BYTES",
    "ModuleFile",
    "ParsedModule",
    "build_for_drafts",
    "build_surface",
    "discover_modules",
    "dotted_name",
    "iter_parsed",
    "parse_modules",
    "sources_first",
    "surface_from_parsed",
]


def build_surface(source: Path | str, library: str | None = None, *, include_tests: bool = False,
                  prefer_source: bool = False) -> Surface:
    """Read the surface of the library at `source` (a package, a module file, or their parent).

    The library's code is parsed, never imported or run. `tests` subpackages are read only
    with `include_tests` (see `discover_modules`). Stubs win over sources beside them (PEP 484)
    unless `prefer_source` (see `sources_first`).
    """
    name, files = discover_modules(Path(source), library, include_tests=include_tests)
    if prefer_source:
        files = tuple(sources_first(files))
    problems: list[Problem] = []
    return surface_from_parsed(name, iter_parsed(files, problems), problems)


def build_for_drafts(source: Path | str, library: str | None = None, *,
                     include_tests: bool = False) -> tuple[Surface, Surface]:
    """(the surface a draft reads, the surface a scan will check the draft against).

    A scan reads stubs first (PEP 484). A draft must also see what the sources beside them
    define and the stubs have dropped (deprecated names, most often: just what a draft is
    about), so it reads the union of both; where no stub stands for a source they are one.
    """
    name, files = discover_modules(Path(source), library, include_tests=include_tests)
    problems: list[Problem] = []
    scanned = surface_from_parsed(name, iter_parsed(files, problems), problems)
    if not any(f.is_stub and f.path is not None and f.path.with_suffix(".py").is_file() for f in files):
        return scanned, scanned
    problems = []
    # Names the sources bring from extension modules are in the stubs; take the rest they know.
    sources = surface_from_parsed(name, iter_parsed(sources_first(files), problems), problems, partial_stars=True)
    return merge_surfaces(scanned, sources), scanned
