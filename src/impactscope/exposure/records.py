"""What a project declares about the library and about Python, and how it meets a release."""

from __future__ import annotations

import enum
from dataclasses import dataclass, field

from packaging.markers import Marker
from packaging.specifiers import SpecifierSet

from impactscope.errors import InputError


class ExposureError(InputError):
    """A release version or Python version given to the exposure check is not valid."""


@dataclass(frozen=True)
class Declared:
    """One declaration of the library in one manifest.

    `source` locates it: `path:line` for line-based files (requirement files, setup.py),
    `path [table]` for TOML and INI files, whose parsers keep no line numbers. `text` is the
    declaration as written (for Poetry and Pipfile, the key and its value). `specifier` is None
    when the declaration does not limit the version. `direct_reference` marks URL, VCS and path
    references, which install whatever they point at. `constraint` marks entries of pip
    constraints files (`-c`), which limit the version without requiring the library.
    """

    source: str
    text: str
    specifier: SpecifierSet | None
    marker: Marker | None
    direct_reference: bool
    constraint: bool = False


@dataclass(frozen=True)
class DeclaredPython:
    """One declaration of the Python versions a project supports, e.g. `Requires-Python: >=3.8`.

    `source` and `text` are as in `Declared`.
    """

    source: str
    text: str
    specifier: SpecifierSet


@dataclass(frozen=True)
class Manifests:
    """What a project's manifests declare about the library and about Python, and what could
    not be read."""

    declared: tuple[Declared, ...]
    problems: tuple[str, ...] = field(default=())
    python: tuple[DeclaredPython, ...] = field(default=())


class Exposure(str, enum.Enum):
    """How a project's declared requirements meet a release."""

    EXPOSED = "exposed"
    SHIELDED = "shielded"
    UNCONSTRAINED = "unconstrained"
