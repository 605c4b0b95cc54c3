"""Which files of a project are manifests, and which of them start a reading."""

from __future__ import annotations

import fnmatch
from collections.abc import Iterable


# --- which files are manifests ---------------------------------------------------------------

#: Glob patterns (matched case-insensitively against the file name, or against
#: `parent/name` for patterns with a slash) of the files `read_manifests` reads. The core
#: metadata files (the last two) count only at the top of the project, where a wheel or an
#: sdist has them: deeper ones describe some other distribution (an install, a vendored copy).
MANIFEST_PATTERNS: tuple[str, ...] = (
    "*requirements*.txt",
    "requirements/*.txt",
    "*constraints*.txt",
    "pyproject.toml",
    "setup.cfg",
    "setup.py",
    "Pipfile",
    "PKG-INFO",
    "*.dist-info/METADATA",
)
_CORE_METADATA = ("PKG-INFO", "*.dist-info/METADATA")

# A requirement file of this shape is read on its own, unless it is named like a constraints file;
# other requirement-format files are read only when another file includes them with -r or -c.
REQUIREMENT_ROOTS = ("*requirements*.txt", "requirements/*.txt")

# Manifests of installed or bundled third-party packages say nothing about the project's own
# requirements.
_FOREIGN_DIRS = frozenset({"site-packages", "dist-packages", "node_modules", ".git", ".tox", ".nox"})


def matches(path: str, patterns: Iterable[str]) -> bool:
    parts = path.lower().split("/")
    for pattern in patterns:
        pattern = pattern.lower()
        subject = "/".join(parts[-2:]) if "/" in pattern else parts[-1]
        if fnmatch.fnmatchcase(subject, pattern):
            return True
    return False


# Every pattern's name ends in one of these (lowercase): a cheap first test, run on every file.
_ENDINGS = tuple(sorted({p.lower().rsplit("*", 1)[-1].rsplit("/", 1)[-1] for p in MANIFEST_PATTERNS}))


def is_manifest(path: str) -> bool:
    """Whether the scan should pass the file at POSIX `path` (relative to the project) here."""
    if not path.lower().endswith(_ENDINGS):
        return False
    parts = path.split("/")
    if any(part in _FOREIGN_DIRS for part in parts[:-1]):
        return False
    if matches(path, _CORE_METADATA):
        return is_core_metadata(path)
    return matches(path, MANIFEST_PATTERNS)


def is_core_metadata(path: str) -> bool:
    """An sdist's `PKG-INFO` or a wheel's `<name>-<version>.dist-info/METADATA`, at the top of
    the project (the file names are exact: the sdist and wheel specifications spell them so)."""
    parts = path.split("/")
    if parts == ["PKG-INFO"]:
        return True
    return len(parts) == 2 and parts[0].endswith(".dist-info") and parts[1] == "METADATA"
