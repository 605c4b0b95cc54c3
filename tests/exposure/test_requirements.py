"""Tests of exposure.requirements: pip requirement and constraints files."""

from __future__ import annotations

from packaging.specifiers import SpecifierSet

from impactscope.exposure import (
    Exposure,
    classify,
    declared_requirements,
    environment_for_python,
    read_manifests,
)

from .helpers import PY312, one


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
