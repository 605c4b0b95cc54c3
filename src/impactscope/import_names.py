"""Module names as the import system gives them, for code that is read and never imported.

The Python Language Reference, 5 "The import system" and 7.11 "The import statement": a file
`a/b.py` is imported as `a.b`, and `a/__init__.py` as the package `a`; a module's relative
imports start from its package (`__package__`: a package's own name, else the name of the
package that holds the module); one leading dot names that package, each further dot its parent.
A relative import is refused (ImportError) when the module has no package, or when the dots
climb past the top-level package. The one rule serves the library's surface and downstream
projects alike.
"""

from __future__ import annotations

__all__ = ["module_name", "package_of", "resolve_relative"]


def module_name(path: str) -> tuple[str, bool]:
    """The dotted name a file at POSIX `path` (relative to its root) is imported by, and whether
    it is a package (an `__init__` file)."""
    stem = path.rsplit(".", 1)[0]
    parts = stem.split("/")
    is_package = parts[-1] == "__init__"
    if is_package:
        parts = parts[:-1]
    return ".".join(parts), is_package


def package_of(module: str, is_package: bool) -> str:
    """The package a module's relative imports start from ("" for a top-level module)."""
    return module if is_package else module.rpartition(".")[0]


def resolve_relative(package: str, level: int, name: str = "") -> str | None:
    """The absolute name that `level` leading dots and then `name` stand for in a module of
    `package`; None where the import system raises ImportError (no package, or more dots than
    the package has levels). `level` 0 is an absolute import: `name` itself."""
    if level == 0:
        return name
    if not package:
        return None  # "attempted relative import with no known parent package"
    bits = package.rsplit(".", level - 1)
    if len(bits) < level:
        return None  # "attempted relative import beyond top-level package"
    return f"{bits[0]}.{name}" if name else bits[0]
