"""Tests of exposure.files: which files are manifests."""

from __future__ import annotations

import pytest

from impactscope.exposure import MANIFEST_PATTERNS, Manifests, is_manifest, read_manifests


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
