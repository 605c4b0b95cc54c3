"""Tests of exposure.pyproject: PEP 621 and PEP 735 tables of pyproject.toml."""

from __future__ import annotations

from impactscope.exposure import (
    Exposure,
    Manifests,
    classify,
    declared_requirements,
    environment_for_python,
    read_manifests,
)

from .helpers import PY312, one


# Source: PEP 621, `[project] dependencies` and `optional-dependencies` are PEP 508 strings.
def test_pep621_dependencies():
    pyproject = b"""
[project]
name = "tern-reports"
dependencies = ["heronframe>=2.1,<4", "numpy"]
[project.optional-dependencies]
plots = ["HeronFrame[plot]>=2.3; python_version >= '3.10'"]
"""
    declared = declared_requirements({"pyproject.toml": pyproject}, "heronframe")
    assert [d.source for d in declared] == [
        "pyproject.toml [project.dependencies]",
        "pyproject.toml [project.optional-dependencies.plots]",
    ]
    assert classify(declared, "3.0", PY312) is Exposure.EXPOSED
    assert classify(declared, "2.2", PY312) is Exposure.SHIELDED
    assert classify(declared, "2.2", environment_for_python("3.9")) is Exposure.EXPOSED


def test_pep621_dynamic_and_bad_toml_are_problems():
    result = read_manifests({"pyproject.toml": b'[project]\nname = "x"\ndynamic = ["dependencies"]\n'}, "heronframe")
    assert result == Manifests((), ("pyproject.toml [project]: dependencies are dynamic (filled in by the build backend); not read",))
    result = read_manifests({"pyproject.toml": b"[project\ndependencies = 1\n", "requirements.txt": b"heronframe\n"}, "heronframe")
    assert len(result.declared) == 1
    assert result.problems[0].startswith("pyproject.toml: invalid TOML")
    result = read_manifests({"pyproject.toml": b"[project]\ndependencies = 'heronframe'\n"}, "heronframe")
    assert result.problems == ("pyproject.toml [project.dependencies]: expected a list of requirement strings, got str",)
    result = read_manifests({"pyproject.toml": b"\xff\xfe[project]"}, "heronframe")
    assert result.problems[0].startswith("pyproject.toml: not valid UTF-8")


# Source: PEP 735, `[dependency-groups]` holds lists of PEP 508 strings and include tables.
def test_dependency_groups():
    pyproject = b'[dependency-groups]\ntest = ["heronframe<3", {include-group = "docs"}]\ndocs = ["sphinx"]\n'
    declared = one({"pyproject.toml": pyproject})
    assert declared.source == "pyproject.toml [dependency-groups.test]"
