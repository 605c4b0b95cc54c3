"""Which files of a project are read, and the reason each other file is not (`classify`)."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Collection, Iterable, Iterator
from dataclasses import dataclass

from impactscope.corpus.entries import Entry, add_note, unique_paths
from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.corpus.names import is_source_name, join
from impactscope.reasons import Reason

_VERSION_CONTROL = frozenset({".git", ".hg", ".svn"})
_CACHES = frozenset({"__pycache__", ".ipynb_checkpoints", ".mypy_cache", ".pytest_cache", ".tox"})
_INSTALL_DIRS = frozenset({"site-packages", "dist-packages"})
_VENV_NAMES = frozenset({".venv", "venv", "env"})
_ACTIVATE_SCRIPTS = ("bin/activate", "Scripts/activate")
# Folders projects keep other packages' code in (common practice: pip's `_vendor`, setuptools'
# `extern`, `third_party`). A package named like the library inside one of these is a copy of it.
_VENDOR_DIRS = frozenset({"_vendor", "vendor", "vendored", "_vendored", "extern", "externals", "_extern",
                          "third_party", "thirdparty", "3rdparty"})

@dataclass(frozen=True)
class Layout:
    """Directory facts that need a project's full file list ("" is the project root)."""

    venvs: frozenset[str]  # directories holding a virtual environment
    vendored: frozenset[str]  # directories holding a copy of the target library

    @classmethod
    def of(cls, paths: Iterable[str], library: str) -> Layout:
        files = set(paths)
        dirs = {""}
        for path in files:
            parts = path.split("/")
            dirs.update("/".join(parts[:depth]) for depth in range(1, len(parts)))
        venvs = {
            d
            for d in dirs
            if join(d, "pyvenv.cfg") in files
            or (
                d.rpartition("/")[2] in _VENV_NAMES
                and any(join(d, script) in files for script in _ACTIVATE_SCRIPTS)
            )
        }
        vendored = {
            d for d in dirs
            if d.rpartition("/")[2] == library and join(d, "__init__.py") in files and not _subpackage(d, files)
        }
        return cls(frozenset(venvs), frozenset(vendored))


def _subpackage(directory: str, files: set[str]) -> bool:
    """Whether a package is a subpackage of the project's own (`mlflow/sklearn/`, imported as
    `mlflow.sklearn`, never as the library: Python 3 imports are absolute) rather than a copy of
    the library: its parent is a package and not a folder of other packages' code."""
    parent = directory.rpartition("/")[0]
    return bool(parent) and join(parent, "__init__.py") in files and parent.rpartition("/")[2] not in _VENDOR_DIRS


def classify(
    path: str,
    size: int,
    *,
    library: str,
    siblings: Collection[str] | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> Reason | None:
    """The reason not to read the file at `path` (POSIX, relative to its project), or None.

    `siblings` are the paths of all files in the project. The rules, first
    match wins: "version control", "cache", "node modules", "virtual
    environment", "vendored library", "not source", then the size bounds of
    `limits`: "notebook too large" for a notebook over `notebook_bytes`, "too
    large" for another file over `file_bytes`. (A notebook's size is mostly
    outputs, so `sources` bounds the code it holds separately.)

    Without `siblings` (as in a tar stream, where later members are not known
    yet) only names count: a virtual environment is any directory named
    `.venv`, `venv` or `env` or under `site-packages` / `dist-packages`, and
    any directory named `library` is a vendored copy, without looking for
    `pyvenv.cfg`, activate scripts or `__init__.py`.

    A folder named like the library is a vendored copy when it holds an `__init__.py` and is not
    a subpackage of the project's own (its parent a package, not named as a vendor folder).
    Without `siblings`, the folder is one when it is at the project's root or under `src/` or a
    vendor folder (`_vendor`, `third_party`, ...).
    """
    layout = None if siblings is None else Layout.of(siblings, library)
    return classify_path(path, size, library, layout, limits)


def classify_path(
    path: str, size: int, library: str, layout: Layout | None, limits: Limits = DEFAULT_LIMITS
) -> Reason | None:
    parts = path.split("/")
    segments = set(parts)
    if segments & _VERSION_CONTROL:
        return Reason.VERSION_CONTROL
    if segments & _CACHES:
        return Reason.CACHE
    if "node_modules" in segments:
        return Reason.NODE_MODULES
    directories = set(parts[:-1])
    if layout is None:
        venv = bool(directories & (_INSTALL_DIRS | _VENV_NAMES))
        vendored = any(
            name == library and (i == 0 or parts[i - 1] in _VENDOR_DIRS or parts[i - 1] == "src")
            for i, name in enumerate(parts[:-1])
        )
    elif not layout.venvs and not layout.vendored:  # the usual project: no ancestor to look up
        venv, vendored = bool(directories & _INSTALL_DIRS), False
    else:
        ancestors = ["/".join(parts[:depth]) for depth in range(len(parts))]
        venv = bool(directories & _INSTALL_DIRS) or any(d in layout.venvs for d in ancestors)
        vendored = any(d in layout.vendored for d in ancestors)
    if venv:
        return Reason.VIRTUAL_ENVIRONMENT
    if vendored:
        return Reason.VENDORED_LIBRARY
    if not is_source_name(parts[-1]):
        return Reason.NOT_SOURCE
    return _size_reason(parts[-1], size, limits)


def _size_reason(name: str, size: int, limits: Limits) -> Reason | None:
    limit, reason = read_limit(name, limits)
    return reason if size > limit else None


def read_limit(path: str, limits: Limits) -> tuple[int, Reason]:
    """The most bytes `Entry.read` returns for the file at `path`, and the reason beyond it."""
    name_limit = "notebook_bytes" if path.endswith(".ipynb") else "file_bytes"
    return getattr(limits, name_limit), limits.reason(name_limit)


def classified(
    entries: Iterable[Entry],
    library: str,
    limits: Limits,
    late: Callable[[Entry], tuple[Reason, str] | None] | None = None,
) -> Iterator[Entry]:
    """Entries in path order, each readable one given its skip reason: the classification's,
    else `late`'s (a reason and a note known without reading, such as a declared ratio)."""
    listed = sorted(entries, key=lambda entry: entry.path)
    # `late` is asked of each entry as listed: a renamed duplicate below is another object.
    lateness = [late(entry) if late is not None else None for entry in listed]
    ordered = list(unique_paths(listed, reserved={entry.path for entry in listed}))
    readable = [entry for entry in ordered if entry.skip is None and entry.error is None]
    layout = Layout.of((entry.path for entry in readable), library)
    for entry, found in zip(ordered, lateness):
        if entry.skip is None and entry.error is None:
            reason = classify_path(entry.path, entry.size, library, layout, limits)
            if reason is not None:
                entry = dataclasses.replace(entry, skip=reason)
            elif found is not None:
                entry = dataclasses.replace(entry, skip=found[0], note=add_note(entry.note, found[1]))
        yield entry
