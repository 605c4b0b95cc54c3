"""Tests of exposure.verdict: declarations against a release, markers, Pythons (PEP 440, PEP 508)."""

from __future__ import annotations

import pytest
from packaging.specifiers import SpecifierSet
from packaging.version import Version

from impactscope.exposure import (
    Declared,
    DeclaredPython,
    Exposure,
    ExposureError,
    classify,
    environment_for_python,
)

from .helpers import PY312, spec


# Source: PEP 440, "Compatible release": `~= 2.2` is `>= 2.2, == 2.*` and `~= 1.4.5` is
# `>= 1.4.5, == 1.4.*` (the equivalences are the PEP's own examples, from memory).
@pytest.mark.parametrize(
    ("specifier", "release", "expected"),
    [
        ("~=2.2", "2.3", Exposure.EXPOSED),
        ("~=2.2", "2.2", Exposure.EXPOSED),
        ("~=2.2", "3.0", Exposure.SHIELDED),
        ("~=1.4.5", "1.4.9", Exposure.EXPOSED),
        ("~=1.4.5", "1.5.0", Exposure.SHIELDED),
    ],
)
def test_compatible_release(specifier, release, expected):
    assert classify([spec(specifier)], release, PY312) is expected


# Source: PEP 440, "Version matching": given 1.1.post1, `== 1.1` does not match, `== 1.1.post1`
# and `== 1.1.*` match; `!= 1.1` matches and `!= 1.1.*` does not ("Version exclusion").
# Given 1.1, `== 1.1.0` matches by zero padding.
@pytest.mark.parametrize(
    ("specifier", "release", "expected"),
    [
        ("==1.1", "1.1.post1", Exposure.SHIELDED),
        ("==1.1.post1", "1.1.post1", Exposure.EXPOSED),
        ("==1.1.*", "1.1.post1", Exposure.EXPOSED),
        ("!=1.1", "1.1.post1", Exposure.EXPOSED),
        ("!=1.1.*", "1.1.post1", Exposure.SHIELDED),
        ("==1.1.0", "1.1", Exposure.EXPOSED),
    ],
)
def test_version_matching_and_exclusion(specifier, release, expected):
    assert classify([spec(specifier)], release, PY312) is expected


# Source: PEP 440, "Local version identifiers" and "Exclusive ordered comparison" (from memory):
# a public specifier ignores the local label of a candidate, and `> V` does not match a local
# version of V.
def test_local_versions():
    assert classify([spec("==3.0")], "3.0+downstream.1", PY312) is Exposure.EXPOSED
    assert classify([spec(">3.0")], "3.0+downstream.1", PY312) is Exposure.SHIELDED
    assert classify([spec("<=3.0")], "3.0+downstream.1", PY312) is Exposure.EXPOSED


# Source: PEP 440, "Handling of pre-releases": installers exclude pre-releases unless the
# specifier names one or pre-releases are requested; and "Version matching": given 1.1a1,
# `== 1.1.*` matches "if pre-releases are requested".
def test_prereleases_need_explicit_permission():
    assert classify([spec(">=1.0")], "3.0rc1", PY312) is Exposure.SHIELDED
    assert classify([spec(">=1.0")], "3.0", PY312) is Exposure.EXPOSED
    assert classify([spec(">=3.0rc1")], "3.0rc1", PY312) is Exposure.EXPOSED
    assert classify([spec("==1.1.*")], "1.1a1", PY312) is Exposure.SHIELDED
    allowing = Declared("x", "heronframe>=1.0", SpecifierSet(">=1.0", prereleases=True), None, False)
    assert classify([allowing], "3.0rc1", PY312) is Exposure.EXPOSED
    # One declaration that names a pre-release lets the combined set admit one.
    assert classify([spec(">=3.0b1"), spec("<4")], "3.0rc1", PY312) is Exposure.EXPOSED


def test_intersection_of_all_live_declarations():
    declared = [spec(">=2"), spec("<3", source="pyproject.toml [project.dependencies]")]
    assert classify(declared, "2.9", PY312) is Exposure.EXPOSED
    assert classify(declared, "3.0", PY312) is Exposure.SHIELDED
    # A declaration without a specifier does not widen what another one constrains.
    assert classify([spec(""), spec("<3")], "3.0", PY312) is Exposure.SHIELDED
    assert classify([spec("")], "3.0", PY312) is Exposure.UNCONSTRAINED
    assert classify([], "3.0", PY312) is Exposure.UNCONSTRAINED
    assert classify([spec("", direct=True)], Version("3.0"), PY312) is Exposure.UNCONSTRAINED


def test_markers_select_declarations():
    declared = [
        spec("<3", marker='python_version < "3.8"'),
        spec(">=2.5", marker='python_version >= "3.8"'),
    ]
    assert classify(declared, "3.0", environment_for_python("3.7")) is Exposure.SHIELDED
    assert classify(declared, "3.0", environment_for_python("3.12")) is Exposure.EXPOSED
    only_old = [spec("<3", marker='python_version < "3.8"')]
    assert classify(only_old, "3.0", PY312) is Exposure.UNCONSTRAINED


def test_classify_rejects_bad_release():
    with pytest.raises(ExposureError, match="PEP 440"):
        classify([], "three")
    assert issubclass(ExposureError, ValueError)


def test_environment_for_python():
    env = environment_for_python("3.12")
    assert env["python_version"] == "3.12"
    assert env["python_full_version"] == "3.12.0"
    assert "sys_platform" in env and "os_name" in env  # packaging's defaults fill the platform
    assert environment_for_python("3.8.10")["python_full_version"] == "3.8.10"
    assert environment_for_python("2.7")["python_version"] == "2.7"
    for bad in ("3", "three", "3.12.1.4", ""):
        with pytest.raises(ExposureError, match="Python version"):
            environment_for_python(bad)


def python(text):
    return DeclaredPython("PKG-INFO:5", text, SpecifierSet(text))


# Source: PEP 440 comparison and exclusion operators; the Python releases 2.0-2.7 and 3.x are
# common knowledge.
@pytest.mark.parametrize(
    ("project", "release", "meet"),
    [
        ([">=3.6"], ">=3.9", True),
        (["<3.8"], ">=3.9", False),
        (["<3.9"], ">=3.9", False),
        (["<=3.9"], ">=3.9", True),
        (["==3.8.*"], ">=3.8.1", True),
        (["==3.8.*"], ">=3.9", False),
        (["!=3.0.*,!=3.1.*,>=2.7,<3.2"], ">=3", False),
        ([">=2.7,!=3.0.*,!=3.1.*"], ">=3.0", True),
        ([">3.8"], "<=3.8.0", False),
        ([">3.8"], "<3.9", True),  # 3.8.1 is greater than 3.8
        (["~=3.7"], "<3.7", False),
        (["~=3.7", "<3.10"], ">=3.9", True),
        (["~=3.7", "<3.9"], ">=3.9", False),
        (["==2.7.*"], ">=3.6", False),
    ],
)
def test_project_and_release_pythons(project, release, meet):
    declared = [spec("<5")]
    got = classify(declared, "2.0", PY312, python=[python(p) for p in project], release_python=SpecifierSet(release))
    assert got is (Exposure.EXPOSED if meet else Exposure.SHIELDED)


def test_python_without_release_python_changes_nothing():
    assert classify([], "2.0", PY312, python=[python("<3.8")]) is Exposure.UNCONSTRAINED
    assert classify([], "2.0", PY312, python=[python("<3.8")], release_python=SpecifierSet(">=3.9")) \
        is Exposure.SHIELDED
    assert classify([], "2.0", PY312, python=(), release_python=SpecifierSet(">=3.9")) is Exposure.UNCONSTRAINED
