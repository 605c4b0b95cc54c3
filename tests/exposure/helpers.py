"""Declarations and manifests for the exposure tests (invented data, fictional library)."""

from __future__ import annotations

from packaging.markers import Marker
from packaging.specifiers import SpecifierSet

from impactscope.exposure import Declared, declared_requirements, environment_for_python


PY312 = environment_for_python("3.12")


def spec(text, source="requirements.txt:1", marker=None, direct=False):
    return Declared(source, text, SpecifierSet(text) if text else None, Marker(marker) if marker else None, direct)


def one(files, distribution="heronframe"):
    declared = declared_requirements(files, distribution)
    assert len(declared) == 1, declared
    return declared[0]


WHEEL_METADATA = "wpkg-1.0.dist-info/METADATA"


def metadata(*headers: str, body: str = "") -> bytes:
    head = "Metadata-Version: 2.1\nName: wpkg\nVersion: 1.0\n" + "".join(h + "\n" for h in headers)
    return (head + ("\n" + body if body else "")).encode()
