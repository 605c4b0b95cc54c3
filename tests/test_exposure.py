import pytest
from packaging.markers import Marker
from packaging.specifiers import SpecifierSet
from packaging.version import Version

from impactscope.exposure import (
    MANIFEST_PATTERNS,
    Declared,
    DeclaredPython,
    Exposure,
    ExposureError,
    Manifests,
    classify,
    declared_requirements,
    environment_for_python,
    is_manifest,
    read_manifests,
)

PY312 = environment_for_python("3.12")


def spec(text, source="requirements.txt:1", marker=None, direct=False):
    return Declared(source, text, SpecifierSet(text) if text else None, Marker(marker) if marker else None, direct)


def one(files, distribution="heronframe"):
    declared = declared_requirements(files, distribution)
    assert len(declared) == 1, declared
    return declared[0]


# --- classify: PEP 440 version specifiers -----------------------------------------------------


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


# --- PEP 508 requirement strings --------------------------------------------------------------


# Source: PEP 508, the test list of its "Complete Grammar" section ("name>=3,<2",
# "name [fred,bar] @ http://foo.com ; python_version=='2.7'", the os_name precedence examples).
def test_pep508_examples():
    files = {
        "requirements.txt": (
            b"name>=3,<2\n"
        )
    }
    declared = one(files, "name")
    assert classify([declared], "3", PY312) is Exposure.SHIELDED  # nothing satisfies >=3,<2

    url = one({"requirements.txt": b"name [fred,bar] @ http://foo.com ; python_version=='2.7'\n"}, "name")
    assert url.direct_reference and url.specifier is None
    assert classify([url], "1.0", environment_for_python("2.7")) is Exposure.UNCONSTRAINED

    # Should parse as (a and b) or c.
    grouped = one({"requirements.txt": b"name>=1; os_name=='a' and os_name=='b' or os_name=='c'\n"}, "name")
    assert grouped.marker.evaluate({"os_name": "c"}) is True
    assert grouped.marker.evaluate({"os_name": "a"}) is False
    either = one({"requirements.txt": b"name<2; os_name=='a' or os_name=='b'\n"}, "name")
    assert classify([either], "2.0", {"os_name": "b"}) is Exposure.SHIELDED
    assert classify([either], "2.0", {"os_name": "posix"}) is Exposure.UNCONSTRAINED


# Source: pip's "Requirements File Format" documentation, its example file
# (https://pip.pypa.io/en/stable/reference/requirements-file-format/).
PIP_EXAMPLE = b"""\
# This is a comment, to show how #-prefixed lines are ignored.
# It is possible to specify requirements as plain names.
pytest
pytest-cov
beautifulsoup4

# The syntax supported here is the same as that of requirement specifiers.
docopt == 0.6.1
requests [security] >= 2.8.1, == 2.8.* ; python_version < "2.7"
urllib3 @ https://github.com/urllib3/urllib3/archive/refs/tags/1.26.8.zip

# It is possible to refer to other requirement files or constraints files.
-r other-requirements.txt
-c constraints.txt

# It is possible to refer to specific local distribution paths.
./downloads/numpy-1.9.2-cp34-none-win32.whl

# It is possible to refer to URLs.
http://wxpython.org/Phoenix/snapshot-builds/wxPython_Phoenix-3.0.3.dev1820+49a8884-cp34-none-win_amd64.whl
"""


def test_pip_documentation_example():
    files = {
        "requirements.txt": PIP_EXAMPLE,
        "other-requirements.txt": b"docopt<0.7\n",
        "constraints.txt": b"requests<2.9\n",
    }
    requests = declared_requirements(files, "requests")
    assert [(d.source, d.constraint) for d in requests] == [
        ("requirements.txt:9", False),
        ("constraints.txt:1", True),
    ]
    assert requests[0].specifier == SpecifierSet(">=2.8.1,==2.8.*")
    assert str(requests[0].marker) == 'python_version < "2.7"'
    # The marker drops the requirement on Python 3.12; the constraint alone still limits it.
    assert classify(requests, "2.9", PY312) is Exposure.SHIELDED
    assert classify(requests, "2.8.5", environment_for_python("2.6")) is Exposure.EXPOSED

    docopt = declared_requirements(files, "docopt")
    assert sorted(d.source for d in docopt) == ["other-requirements.txt:1", "requirements.txt:8"]
    assert classify(docopt, "0.6.1", PY312) is Exposure.EXPOSED
    assert classify(docopt, "0.6.2", PY312) is Exposure.SHIELDED

    urllib3 = one(files, "urllib3")
    assert urllib3.direct_reference and urllib3.specifier is None
    numpy = one(files, "numpy")
    assert numpy.direct_reference and numpy.source == "requirements.txt:17"
    wx = one(files, "wxPython-Phoenix")
    assert wx.direct_reference and classify([wx], "4.0", PY312) is Exposure.UNCONSTRAINED
    assert one(files, "pytest").specifier is None
    assert read_manifests(files, "requests").problems == ()


# Source: pip's "Requirements File Format" documentation: line continuations, comments
# (`#` at line start or after whitespace), per-requirement `--hash` options, `-e`, global options.
def test_pip_continuations_hashes_and_comments():
    text = (
        b"--index-url https://example.org/simple\n"
        b"--require-hashes\n"
        b"heronframe==2.4.1 \\\n"
        b"    --hash=sha256:0f3a \\\n"
        b"    --hash=sha256:9b1c\n"
        b"    # via tern-reports\n"
        b"numpy==1.26 #pinned for the old ABI\n"
        b"-e ./vendor/gullkit\n"
    )
    declared = one({"requirements.txt": text})
    assert declared.source == "requirements.txt:3"
    assert declared.text == "heronframe==2.4.1"
    assert declared.specifier == SpecifierSet("==2.4.1")
    assert classify([declared], "3.0", PY312) is Exposure.SHIELDED
    assert one({"requirements.txt": text}, "numpy").specifier == SpecifierSet("==1.26")


def test_pip_continuation_after_hash_then_comment_line():
    # pip-compile writes `\` before a `# via` comment line; the comment ends the requirement.
    text = b"heronframe==2.4 \\\n    --hash=sha256:ab \\\n    # via tern\nnumpy\n"
    assert one({"requirements.txt": text}).text == "heronframe==2.4"
    assert one({"requirements.txt": text}, "numpy").source == "requirements.txt:4"


def test_pip_hash_sign_without_whitespace_is_not_a_comment():
    declared = one({"requirements.txt": b"heronframe @ https://example.org/h.zip#sha256=ab12\n"})
    assert declared.direct_reference
    assert declared.text == "heronframe @ https://example.org/h.zip#sha256=ab12"


def test_pip_editable_and_vcs_lines():
    files = {
        "requirements-dev.txt": (
            b"-e git+https://example.org/heron/heronframe.git@main#egg=heronframe\n"
            b"--editable=git+https://example.org/x/gullkit.git#egg=gullkit\n"
            b"git+https://example.org/heron/heronframe.git@v2#egg=heronframe[io] ; python_version >= '3.9'\n"
            b"-e .\n"
        )
    }
    declared = declared_requirements(files, "heronframe")
    assert [d.source for d in declared] == ["requirements-dev.txt:1", "requirements-dev.txt:3"]
    assert all(d.direct_reference and d.specifier is None for d in declared)
    assert str(declared[1].marker) == 'python_version >= "3.9"'
    assert classify(declared, "3.0", PY312) is Exposure.UNCONSTRAINED


def test_pip_includes_resolve_relative_to_including_file_and_survive_cycles():
    files = {
        "requirements/dev.txt": b"-r base.txt\n--requirement=../constraints/pins.txt\n",
        "requirements/base.txt": b"-r dev.txt\nheronframe>=2\n-rmissing.txt\n",
        "constraints/pins.txt": b"heronframe<2.9\n",
        "requirements.txt": b"--constraint requirements/extra-constraints.txt\n",
        "requirements/extra-constraints.txt": b"heronframe!=2.5\n",
    }
    result = read_manifests(files, "heronframe")
    assert [(d.source, d.constraint) for d in result.declared] == [
        ("requirements/extra-constraints.txt:1", True),
        ("constraints/pins.txt:1", False),
        ("requirements/base.txt:2", False),
    ]
    assert result.problems == (
        "requirements/base.txt:3: included file 'missing.txt' is not among the project's manifest files; not read",
    )
    assert classify(result.declared, "2.8", PY312) is Exposure.EXPOSED
    assert classify(result.declared, "2.5", PY312) is Exposure.SHIELDED
    assert classify(result.declared, "3.0", PY312) is Exposure.SHIELDED


def test_pip_include_outside_project_and_remote_are_problems():
    files = {"requirements.txt": b"-r ../../shared.txt\n-r https://example.org/reqs.txt\nheronframe\n"}
    result = read_manifests(files, "heronframe")
    assert len(result.declared) == 1
    assert result.problems[0].startswith("requirements.txt:1: included file '../../shared.txt'")
    assert result.problems[1].startswith("requirements.txt:2: remote requirements file")


def test_pip_pre_option_allows_prereleases():
    files = {"requirements.txt": b"--pre\nheronframe>=2\n"}
    assert classify(declared_requirements(files, "heronframe"), "3.0rc1", PY312) is Exposure.EXPOSED
    files = {"requirements.txt": b"heronframe>=2\n"}
    assert classify(declared_requirements(files, "heronframe"), "3.0rc1", PY312) is Exposure.SHIELDED


def test_pip_invalid_line_about_the_library_is_a_problem():
    result = read_manifests({"requirements.txt": b"heronframe>>2\nnot a (valid) line\n"}, "heronframe")
    assert result.declared == ()
    assert len(result.problems) == 1
    assert result.problems[0].startswith("requirements.txt:1: invalid requirement 'heronframe>>2'")


def test_pip_coding_cookie_and_bad_encoding():
    # Source: pip's "Requirements File Format": PEP 263 style comments set the encoding.
    latin = "# -*- coding: latin-1 -*-\nheronframe<3 # caf\u00e9\n".encode("latin-1")
    assert one({"requirements.txt": latin}).specifier == SpecifierSet("<3")
    result = read_manifests({"requirements.txt": b"heronframe<3 # caf\xe9\n"}, "heronframe")
    assert result.declared == ()
    assert result.problems[0].startswith("requirements.txt: not valid UTF-8")


# --- PEP 503 names ----------------------------------------------------------------------------


# Source: PEP 503, "Normalized Names": runs of -, _ and . become one -, then lowercase.
def test_names_compare_after_pep503_normalisation():
    files = {
        "requirements.txt": b"HeronFrame>=1\nheron_frame>=2\nHeron.Frame>=3\nHERON--frame>=4\n",
    }
    assert [d.text for d in declared_requirements(files, "heronframe")] == ["HeronFrame>=1"]
    assert [d.text for d in declared_requirements(files, "heron-frame")] == [
        "heron_frame>=2",
        "Heron.Frame>=3",
        "HERON--frame>=4",
    ]


# --- pyproject.toml ---------------------------------------------------------------------------


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


# --- setup.cfg --------------------------------------------------------------------------------


# Source: setuptools' "Configuring setuptools using setup.cfg files": install_requires is a
# dangling list (one requirement a line) or a `;`-separated single line (from memory).
def test_setup_cfg_dangling_list():
    cfg = b"""
[metadata]
name = gull-etl
[options]
install_requires =
    numpy>=1.20
    # the table library
    heronframe>=2.2,<3.1 ; python_version >= "3.8"
[options.extras_require]
excel =
    heronframe[excel]>=2.5
"""
    declared = declared_requirements({"setup.cfg": cfg}, "heronframe")
    assert [d.source for d in declared] == [
        "setup.cfg [options.install_requires]",
        "setup.cfg [options.extras_require.excel]",
    ]
    assert classify(declared, "3.0", PY312) is Exposure.EXPOSED
    assert classify(declared, "3.1", PY312) is Exposure.SHIELDED


def test_setup_cfg_single_line_and_problems():
    declared = declared_requirements({"setup.cfg": b"[options]\ninstall_requires = numpy; heronframe<3\n"}, "heronframe")
    assert [d.text for d in declared] == ["heronframe<3"]
    result = read_manifests({"setup.cfg": b"install_requires = heronframe\n"}, "heronframe")
    assert result.declared == ()
    assert result.problems[0].startswith("setup.cfg: invalid setup.cfg")


# --- setup.py (read with libcst, never run) ---------------------------------------------------


def test_setup_py_literal_list_and_module_name():
    setup_py = b"""\
import os
from setuptools import setup, find_packages

REQUIRES = [
    "numpy",
    "heronframe>=2.0,<3",
]

os.system("echo this must never run")

setup(
    name="plover",
    packages=find_packages(),
    install_requires=REQUIRES,
    extras_require={"io": ["heronframe[io]>=2.3"]},
)
"""
    result = read_manifests({"setup.py": setup_py}, "heronframe")
    assert [(d.source, d.text) for d in result.declared] == [
        ("setup.py:6", "heronframe>=2.0,<3"),
        ("setup.py:15", "heronframe[io]>=2.3"),
    ]
    assert result.problems == ()
    assert classify(result.declared, "3.0", PY312) is Exposure.SHIELDED


def test_setup_py_dynamic_values_are_problems():
    setup_py = b"""\
import setuptools
with open("requirements.txt") as f:
    REQS = f.read().splitlines()
EXTRA = ["heronframe<3"]
EXTRA.append(f"numpy>={1}")
setuptools.setup(install_requires=REQS, extras_require={"x": EXTRA})
"""
    result = read_manifests({"setup.py": setup_py}, "heronframe")
    assert result.declared == ()
    assert result.problems == (
        "setup.py:6: install_requires is dynamic; not read",
        "setup.py:6: extras_require['x'] is dynamic; not read",
    )


def test_setup_py_partly_dynamic_and_kwargs():
    setup_py = b"""\
from setuptools import setup
base = ["heronframe>=2"]
setup(install_requires=base + ["numpy", version_pin(), *others])
setup(**config)
"""
    result = read_manifests({"setup.py": setup_py}, "heronframe")
    assert [d.text for d in result.declared] == ["heronframe>=2"]
    assert result.problems == (
        "setup.py:3: install_requires is partly dynamic; only its literal strings were read",
        "setup.py:4: setup() takes **keyword arguments; install_requires is dynamic; not read",
    )


def test_setup_py_python2_is_a_problem_not_an_exception():
    setup_py = b'from distutils.core import setup\nprint "building"\nsetup(install_requires=["heronframe"])\n'
    result = read_manifests({"setup.py": setup_py}, "heronframe")
    assert result.declared == ()
    assert result.problems[0].startswith("setup.py:")
    assert "cannot parse (syntax error or Python 2); not read" in result.problems[0]


# --- Pipfile ----------------------------------------------------------------------------------


# Source: the Pipfile format (pypa/pipfile README and pipenv's documentation, from memory):
# `"*"` means any version, tables carry `version`, `markers` and marker-variable keys.
def test_pipfile():
    pipfile = b"""
[[source]]
url = "https://pypi.org/simple"
name = "pypi"

[packages]
heronframe = {version = ">=2.0", markers = "python_version >= '3.8'"}
numpy = "*"

[dev-packages]
heronframe = {version = "<2.8", sys_platform = "== 'win32'"}
"""
    declared = declared_requirements({"Pipfile": pipfile}, "heronframe")
    assert [d.source for d in declared] == ["Pipfile [packages]", "Pipfile [dev-packages]"]
    assert classify(declared, "3.0", dict(PY312, sys_platform="linux")) is Exposure.EXPOSED
    assert classify(declared, "3.0", dict(PY312, sys_platform="win32")) is Exposure.SHIELDED
    star = one({"Pipfile": b'[packages]\nheronframe = "*"\n'})
    assert star.specifier is None
    path = one({"Pipfile": b'[packages]\nheronframe = {path = "../heronframe", editable = true}\n'})
    assert path.direct_reference


# --- which files are manifests ----------------------------------------------------------------


@pytest.mark.parametrize(
    ("path", "expected"),
    [
        ("requirements.txt", True),
        ("requirements-dev.txt", True),
        ("dev-requirements.txt", True),
        ("docs/requirements.txt", True),
        ("requirements/base.txt", True),
        ("constraints.txt", True),
        ("pyproject.toml", True),
        ("sub/pkg/pyproject.toml", True),
        ("setup.cfg", True),
        ("setup.py", True),
        ("Pipfile", True),
        ("Pipfile.lock", False),
        ("README.txt", False),
        ("src/setup_helpers.py", False),
        (".venv/lib/python3.12/site-packages/x/requirements.txt", False),
        ("node_modules/x/setup.py", False),
        # Core metadata counts at the top of the project only (a wheel's dist-info, an sdist's
        # PKG-INFO); the file names are exact (the wheel and sdist format specifications).
        ("PKG-INFO", True),
        ("wpkg-1.0.dist-info/METADATA", True),
        ("src/wpkg.egg-info/PKG-INFO", False),
        ("vendor/other-2.0.dist-info/METADATA", False),
        ("wpkg-1.0.dist-info/metadata", False),
        ("METADATA", False),
    ],
)
def test_is_manifest(path, expected):
    assert is_manifest(path) is expected
    assert "pyproject.toml" in MANIFEST_PATTERNS


def test_non_manifest_files_are_ignored_and_constraints_need_an_include():
    files = {"notes.txt": b"heronframe<2\n", "constraints.txt": b"heronframe<2\n"}
    assert read_manifests(files, "heronframe") == Manifests((), ())


# --- core metadata: wheel METADATA and sdist PKG-INFO ---------------------------------------

WHEEL_METADATA = "wpkg-1.0.dist-info/METADATA"


def metadata(*headers: str, body: str = "") -> bytes:
    head = "Metadata-Version: 2.1\nName: wpkg\nVersion: 1.0\n" + "".join(h + "\n" for h in headers)
    return (head + ("\n" + body if body else "")).encode()


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


# --- Requires-Python ----------------------------------------------------------------------------


def test_python_declarations_in_every_format():
    files = {
        "pyproject.toml": b'[project]\nname = "p"\nrequires-python = ">=3.8"\n'
                          b'[tool.poetry.dependencies]\npython = "^3.9"\n',
        "setup.cfg": b"[options]\npython_requires = >=3.7\n",
        "setup.py": b"from setuptools import setup\nsetup(\n    python_requires='>=3.6',\n)\n",
    }
    read = read_manifests(files, "heronframe")
    assert [(d.source, d.specifier) for d in read.python] == [
        ("pyproject.toml [project.requires-python]", SpecifierSet(">=3.8")),
        ("pyproject.toml [tool.poetry.dependencies]", SpecifierSet(">=3.9,<4")),  # Poetry's caret (above)
        ("setup.cfg [options.python_requires]", SpecifierSet(">=3.7")),
        ("setup.py:3", SpecifierSet(">=3.6")),
    ]


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


# --- end to end: a wheel's METADATA decides its exposure in the report ----------------------


def test_a_wheel_that_pins_below_the_release_is_shielded(tmp_path):
    import json
    import zipfile

    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text(
        '[library]\nname = "heronframe"\nrelease = "2.0"\nrequires_python = ">=3.9"\n\n'
        '[types]\n"heronframe.Table" = "heronframe.Table"\n\n'
        '[[change]]\nid = "HF-1"\nmember = "heronframe.Table.stack_rows"\nkind = "removed"\n'
    )
    code = "import heronframe\nt = heronframe.Table()\nt.stack_rows()\n"
    wheels = {
        "pinned-1.0-py3-none-any.whl": metadata("Requires-Dist: heronframe<2"),
        "open-1.0-py3-none-any.whl": metadata("Requires-Dist: heronframe>=1.5"),
        "plain-1.0-py3-none-any.whl": metadata("Requires-Dist: numpy"),
        "extra-1.0-py3-none-any.whl": metadata('Requires-Dist: heronframe<2; extra == "plot"'),
        "oldpy-1.0-py3-none-any.whl": metadata("Requires-Python: <3.8"),
    }
    root = tmp_path / "wheels"
    root.mkdir()
    for name, meta in wheels.items():
        stem = name.split("-py3")[0]
        with zipfile.ZipFile(root / name, "w") as archive:
            archive.writestr(f"{stem.split('-')[0]}/__init__.py", code)
            archive.writestr(f"{stem}.dist-info/METADATA", meta)
    runner = CliRunner()
    out = tmp_path / "r.sqlite"
    scanned = runner.invoke(app, ["scan", str(changes), str(root), "--out", str(out), "--jobs", "1"])
    assert scanned.exit_code == 0, scanned.output
    report = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    exposure = {p["project"]: p["exposure"] for p in report["projects"]}
    assert exposure == {
        "pinned-1.0-py3-none-any": "shielded",
        "open-1.0-py3-none-any": "exposed",
        "plain-1.0-py3-none-any": "unconstrained",
        "extra-1.0-py3-none-any": "shielded",
        "oldpy-1.0-py3-none-any": "shielded",
    }
    (change,) = report["changes"]
    assert change["exposure"] == {"exposed": 1, "shielded": 3, "unconstrained": 1}
