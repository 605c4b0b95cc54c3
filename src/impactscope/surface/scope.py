"""Which paths of a library a draft change list covers: its public API, not its own scaffolding.

A draft is for the maintainer to review and for downstream code to be scanned against, so by
default it names only what downstream code may use. Out are private paths (PEP 8: a leading
underscore on the name or on any module, class or package that contains it, unless a public
module re-exports it; a name a static `__all__` leaves out) and, by common practice, the
library's own scaffolding: test packages and modules (`tests`, `test`, `test_*`, `*_tests`),
pytest's `conftest` modules, and `examples` and `benchmarks` folders. `testing` is kept: in many
libraries (`numpy.testing`, `pandas.testing`) it is public API for downstream test suites.
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import Surface

_SCAFFOLDING = frozenset({"tests", "test", "conftest", "examples", "example", "benchmarks", "benchmark", "asv_bench"})


def is_scaffolding(segment: str) -> bool:
    """A module or package name that holds the library's tests, examples or benchmarks."""
    return (segment in _SCAFFOLDING or segment.startswith("test_") or segment.endswith(("_test", "_tests"))
            or segment.startswith("conftest"))


def is_private_path(path: str) -> bool:
    """A dotted path with a private segment (dunder names such as `__init__` are protocol, not private)."""
    return any(seg.startswith("_") and not (seg.startswith("__") and seg.endswith("__")) for seg in path.split("."))


@dataclass(frozen=True)
class Scope:
    """What a draft may name. `include_private` lets in private paths and scaffolding too."""

    include_private: bool = False

    def covers(self, surface: Surface, path: str) -> bool:
        """Whether `path` (a dotted path the surface knows) is one a draft may name."""
        module = surface.module_of(surface.canonical(path)) or path
        if any(is_scaffolding(seg) for seg in path.split(".")) or any(is_scaffolding(seg) for seg in module.split(".")):
            return self.include_private
        if self.include_private:
            return True
        return not is_private_path(path)

    def paths(self, surface: Surface, canonical: str) -> tuple[str, ...]:
        """The paths a draft may use for a canonical member, most natural first."""
        found = tuple(p for p in surface.public_paths(canonical) if self.covers(surface, p))
        if found or not self.include_private:
            return found
        return (canonical,)
