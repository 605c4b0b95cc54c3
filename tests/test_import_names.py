"""Tests of import_names: module names and relative imports, checked against the import system."""

from __future__ import annotations

import importlib.util
import itertools

import pytest

from impactscope.import_names import module_name, package_of, resolve_relative

# The package layout of the Python Language Reference, 5.7 "Package Relative Imports".
LAYOUT = [
    "package/__init__.py",
    "package/subpackage1/__init__.py",
    "package/subpackage1/moduleX.py",
    "package/subpackage1/moduleY.py",
    "package/subpackage2/__init__.py",
    "package/subpackage2/moduleZ.py",
    "package/moduleA.py",
]


def test_file_names_are_module_names() -> None:
    # The Language Reference, 5.2 "Packages": a directory with __init__.py is a regular package;
    # its modules are named by dotted paths below it.
    assert [module_name(path) for path in LAYOUT] == [
        ("package", True),
        ("package.subpackage1", True),
        ("package.subpackage1.moduleX", False),
        ("package.subpackage1.moduleY", False),
        ("package.subpackage2", True),
        ("package.subpackage2.moduleZ", False),
        ("package.moduleA", False),
    ]


@pytest.mark.parametrize("path", ["package/subpackage1/moduleX.py", "package/subpackage1/__init__.py"])
def test_the_language_reference_examples(path: str) -> None:
    # The Language Reference, 5.7: "In either subpackage1/moduleX.py or subpackage1/__init__.py,
    # the following are valid relative imports" -- each `from <dots><name> import ...` below.
    package = package_of(*module_name(path))
    assert package == "package.subpackage1"
    assert resolve_relative(package, 1, "moduleY") == "package.subpackage1.moduleY"  # from .moduleY import spam
    assert resolve_relative(package, 1) == "package.subpackage1"  # from . import moduleY
    assert resolve_relative(package, 2, "subpackage1") == "package.subpackage1"  # from ..subpackage1 import moduleY
    assert resolve_relative(package, 2, "subpackage2.moduleZ") == "package.subpackage2.moduleZ"
    assert resolve_relative(package, 2, "moduleA") == "package.moduleA"  # from ..moduleA import foo


def test_no_package_and_beyond_the_top_are_refused() -> None:
    # The import system raises ImportError for both: a top-level module has no package, and
    # dots past the top-level package name nothing.
    assert package_of("script", False) == ""
    assert resolve_relative("", 1, "helpers") is None
    assert resolve_relative("package", 2, "other") is None
    assert resolve_relative("package.subpackage1", 3) is None
    assert resolve_relative("package", 0, "os.path") == "os.path"  # no dots: an absolute import


PACKAGES = ["", "a", "a.b", "a.b.c", "pkg.sub"]
NAMES = ["", "m", "m.n"]


@pytest.mark.parametrize(("package", "level", "name"), list(itertools.product(PACKAGES, range(1, 5), NAMES)))
def test_agrees_with_importlib(package: str, level: int, name: str) -> None:
    # The standard library's own resolution, importlib.util.resolve_name (pure name arithmetic:
    # nothing is imported), raises ImportError exactly where the import statement would.
    try:
        expected: str | None = importlib.util.resolve_name("." * level + name, package or None)
    except ImportError:
        expected = None
    assert resolve_relative(package, level, name) == expected
