"""Tests of exposure.poetry: Poetry's dependency tables and constraints."""

from __future__ import annotations

import pytest
from packaging.specifiers import SpecifierSet

from impactscope.exposure import (
    Exposure,
    classify,
    declared_requirements,
    environment_for_python,
    read_manifests,
)

from .helpers import PY312, one


# Source: Poetry's documentation, "Dependency specification" (caret, tilde and wildcard tables);
# values recalled from memory, and they match the published tables.
@pytest.mark.parametrize(
    ("constraint", "equivalent"),
    [
        ("^1.2.3", ">=1.2.3,<2.0.0"),
        ("^1.2", ">=1.2.0,<2.0.0"),
        ("^1", ">=1.0.0,<2.0.0"),
        ("^0.2.3", ">=0.2.3,<0.3.0"),
        ("^0.0.3", ">=0.0.3,<0.0.4"),
        ("^0.0", ">=0.0.0,<0.1.0"),
        ("^0", ">=0.0.0,<1.0.0"),
        ("~1.2.3", ">=1.2.3,<1.3.0"),
        ("~1.2", ">=1.2.0,<1.3.0"),
        ("~1", ">=1.0.0,<2.0.0"),
        ("1.*", ">=1.0.0,<2.0.0"),
        ("1.2.*", ">=1.2.0,<1.3.0"),
        (">= 1.2, < 1.5", ">=1.2,<1.5"),
        (">=1.2 <1.5", ">=1.2,<1.5"),
        ("1.2.3", "==1.2.3"),
        ("==1.2.3", "==1.2.3"),
        ("!= 1.2.3", "!=1.2.3"),
        ("~=1.4.5", "~=1.4.5"),
    ],
)
def test_poetry_constraints(constraint, equivalent):
    pyproject = f'[tool.poetry.dependencies]\npython = "^3.9"\nheronframe = "{constraint}"\n'.encode()
    declared = one({"pyproject.toml": pyproject})
    assert declared.source == "pyproject.toml [tool.poetry.dependencies]"
    reference = SpecifierSet(equivalent)
    for probe in ("0.0.0", "0.0.3", "0.0.4", "0.1.0", "0.2.3", "0.2.9", "0.3.0", "0.9", "1.0.0", "1.2.0",
                  "1.2.3", "1.2.9", "1.3.0", "1.4.5", "1.4.9", "1.5", "1.9", "2.0.0", "3.0"):
        assert declared.specifier.contains(probe) == reference.contains(probe), (constraint, probe)


def test_poetry_star_and_tables():
    pyproject = b"""
[tool.poetry.dependencies]
python = "^3.9"
HeronFrame = "*"
[tool.poetry.group.test.dependencies]
heronframe = {version = "^2.1", python = "^3.8 || ~2.7", extras = ["io"]}
[tool.poetry.dev-dependencies]
heronframe = [
    {version = "<2", python = "<3.8"},
    {version = "^2.4", markers = "sys_platform == 'linux'"},
]
"""
    by_source = {}
    for d in declared_requirements({"pyproject.toml": pyproject}, "heronframe"):
        by_source.setdefault(d.source.split("[")[1].rstrip("]"), []).append(d)
    declared = (
        by_source["tool.poetry.dependencies"]
        + by_source["tool.poetry.group.test.dependencies"]
        + by_source["tool.poetry.dev-dependencies"]
    )
    assert len(declared) == 4
    assert declared[0].specifier is None
    assert declared[1].specifier == SpecifierSet(">=2.1,<3")
    assert declared[1].marker.evaluate(environment_for_python("3.12")) is True
    assert declared[1].marker.evaluate(environment_for_python("2.7.18")) is True
    assert declared[1].marker.evaluate(environment_for_python("3.7")) is False
    assert declared[1].marker.evaluate(environment_for_python("4.0")) is False
    assert declared[2].marker.evaluate(environment_for_python("3.7")) is True
    assert declared[3].source == "pyproject.toml [tool.poetry.dev-dependencies]"
    linux = dict(PY312, sys_platform="linux")
    assert classify(declared, "2.9", linux) is Exposure.EXPOSED
    assert classify(declared, "3.0", linux) is Exposure.SHIELDED
    assert classify(declared, "3.0", environment_for_python("3.7")) is Exposure.SHIELDED
    assert classify(declared[:1], "3.0", linux) is Exposure.UNCONSTRAINED


def test_poetry_direct_references_prereleases_and_unions():
    pyproject = b"""
[tool.poetry.dependencies]
heronframe = {git = "https://example.org/heron/heronframe.git", branch = "next"}
[tool.poetry.group.a.dependencies]
heronframe = {version = "^2.0", allow-prereleases = true}
[tool.poetry.group.b.dependencies]
heronframe = "^1.0 || ^2.0"
"""
    result = read_manifests({"pyproject.toml": pyproject}, "heronframe")
    assert result.declared[0].direct_reference
    assert classify(result.declared, "2.9rc1", PY312) is Exposure.EXPOSED
    assert result.problems == (
        'pyproject.toml [tool.poetry.group.b.dependencies]: union constraint in heronframe = "^1.0 || ^2.0"'
        " is not supported; not read",
    )
