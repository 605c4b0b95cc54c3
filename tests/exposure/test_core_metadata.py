"""Tests of exposure.core_metadata: a wheel's METADATA and an sdist's PKG-INFO."""

from __future__ import annotations

from packaging.specifiers import SpecifierSet

from impactscope.exposure import (
    DeclaredPython,
    Exposure,
    Manifests,
    classify,
    environment_for_python,
    read_manifests,
)

from .helpers import PY312, WHEEL_METADATA, metadata, one


# Source: the core metadata specification, "Requires-Dist" and "Requires-Python" (its own
# examples: pkginfo, PasteDeploy, `zope.interface (>3.5.0)` with the parentheses tools must
# accept, `pywin32 >1.0; sys_platform == 'win32'`, `Requires-Python: >=3.6`).
def test_core_metadata_specification_examples():
    data = metadata(
        "Requires-Dist: pkginfo",
        "Requires-Dist: PasteDeploy",
        "Requires-Dist: zope.interface (>3.5.0)",
        "Requires-Dist: pywin32 >1.0; sys_platform == 'win32'",
        "Requires-Python: >=3.6",
    )
    files = {WHEEL_METADATA: data}
    zope = one(files, "zope.interface")
    assert zope.source == f"{WHEEL_METADATA}:6" and zope.specifier == SpecifierSet(">3.5.0")
    assert classify([zope], "3.5.0", PY312) is Exposure.SHIELDED
    assert classify([zope], "3.6", PY312) is Exposure.EXPOSED
    pywin32 = one(files, "pywin32")
    assert classify([pywin32], "1.0", PY312 | {"sys_platform": "linux"}) is Exposure.UNCONSTRAINED
    assert classify([pywin32], "1.0", PY312 | {"sys_platform": "win32"}) is Exposure.SHIELDED
    assert one(files, "pkginfo").specifier is None
    read = read_manifests(files, "pastedeploy")  # PEP 503 names
    assert read.python == (DeclaredPython(f"{WHEEL_METADATA}:8", ">=3.6", SpecifierSet(">=3.6")),)
    assert read.problems == ()


# Source: PEP 508, its first examples ("All features of the language shown with a name based
# lookup", "A minimal URL based lookup"), given as Requires-Dist values.
def test_pep508_examples_in_metadata():
    files = {"PKG-INFO": metadata(
        'Requires-Dist: requests [security,tests] >= 2.8.1, == 2.8.* ; python_version < "2.7"',
        "Requires-Dist: pip @ https://github.com/pypa/pip/archive/1.3.1.zip"
        "#sha1=da9234ee9982d4bbb3c72346a6de940a148ea686",
    )}
    requests = one(files, "requests")
    assert requests.specifier == SpecifierSet(">=2.8.1,==2.8.*")
    assert classify([requests], "2.9", PY312) is Exposure.UNCONSTRAINED  # the marker is false
    assert classify([requests], "2.9", environment_for_python("2.6")) is Exposure.SHIELDED
    assert classify([requests], "2.8.5", environment_for_python("2.6")) is Exposure.EXPOSED
    pip = one(files, "pip")
    assert pip.direct_reference and classify([pip], "1.3.1", PY312) is Exposure.UNCONSTRAINED


# Source: the core metadata specification, "Provides-Extra": its example `Provides-Extra: pdf`
# with `Requires-Dist: reportlab; extra == 'pdf'`. Our rule (module docstring): a requirement
# under an extra is a declaration, as optional-dependencies and extras_require are.
def test_requirements_under_an_extra_count():
    example = {WHEEL_METADATA: metadata("Provides-Extra: pdf", "Requires-Dist: reportlab; extra == 'pdf'")}
    assert classify([one(example, "reportlab")], "4.0", PY312) is Exposure.UNCONSTRAINED
    files = {WHEEL_METADATA: metadata("Provides-Extra: plot", 'Requires-Dist: heronframe<2; extra == "plot"')}
    assert classify([one(files)], "2.0", PY312) is Exposure.SHIELDED
    assert classify([one(files)], "1.5", PY312) is Exposure.EXPOSED
    both = {WHEEL_METADATA: metadata('Requires-Dist: heronframe<2; extra == "plot" and python_version < "3"')}
    assert classify([one(both)], "2.0", PY312) is Exposure.UNCONSTRAINED  # false for every extra
    reversed_test = {WHEEL_METADATA: metadata("Requires-Dist: heronframe<2; 'plot' == extra")}
    assert classify([one(reversed_test)], "2.0", PY312) is Exposure.SHIELDED
    # The same rule in PEP 621: an optional-dependencies entry limits the version too.
    pyproject = {"pyproject.toml": b'[project]\nname = "p"\n[project.optional-dependencies]\nplot = ["heronframe<2"]\n'}
    assert classify([one(pyproject)], "2.0", PY312) is Exposure.SHIELDED


def test_core_metadata_only_at_the_top_and_other_fields_ignored():
    files = {
        "sub/PKG-INFO": metadata("Requires-Dist: heronframe<2"),
        "vendor/x-1.dist-info/METADATA": metadata("Requires-Dist: heronframe<2"),
        WHEEL_METADATA: metadata("Requires-External: heronframe (<2)", "Obsoletes-Dist: heronframe (<1)",
                                 body="Requires-Dist: heronframe<2 is only prose in the description"),
    }
    assert read_manifests(files, "heronframe") == Manifests((), ())


def test_folded_headers_and_line_numbers():
    # Source: the core metadata specification: the format is email headers as the standard
    # library's email.parser reads them (compat32); a line starting with white space folds.
    data = metadata("Summary: one", "  folded", "Requires-Dist: other", "Requires-Dist: heronframe>=1.2")
    declared = one({"PKG-INFO": data})
    assert declared.source == "PKG-INFO:7" and declared.specifier == SpecifierSet(">=1.2")


def test_core_metadata_problems():
    bad_utf8 = b"Metadata-Version: 2.1\nName: w\nVersion: 1\nRequires-Dist: heronframe<2 # caf\xe9\n"
    read = read_manifests({"PKG-INFO": bad_utf8}, "heronframe")
    assert read.declared == () and read.problems == (
        "PKG-INFO: cannot read Requires-Dist (not valid UTF-8, or given more than once where once "
        "is allowed); not read",)
    twice = metadata("Requires-Python: >=3.8", "Requires-Python: <4")
    assert read_manifests({"PKG-INFO": twice}, "heronframe").problems[0].startswith(
        "PKG-INFO: cannot read Requires-Python")
    invalid = read_manifests({"PKG-INFO": metadata("Requires-Dist: heronframe <<2")}, "heronframe")
    assert invalid.declared == () and invalid.problems[0].startswith("PKG-INFO:4: invalid requirement")
    bad_python = read_manifests({"PKG-INFO": metadata("Requires-Python: three")}, "heronframe")
    assert bad_python.python == () and "invalid Python version specifier" in bad_python.problems[0]


# Source: the core metadata specification, "Dynamic" (2.2): in an sdist, a field marked Dynamic
# may hold any value in a wheel built from it.
def test_dynamic_requires_dist_in_an_sdist_is_read_with_a_problem():
    data = metadata("Dynamic: Requires-Dist", "Requires-Dist: heronframe<2").replace(b"2.1", b"2.2", 1)
    read = read_manifests({"PKG-INFO": data}, "heronframe")
    assert [d.text for d in read.declared] == ["heronframe<2"]
    assert read.problems == ("PKG-INFO: Requires-Dist is marked Dynamic, so a wheel built from this sdist "
                             "may declare other requirements (core metadata 2.2)",)
    # In a wheel, Dynamic is for information only.
    assert read_manifests({WHEEL_METADATA: data}, "heronframe").problems == ()
