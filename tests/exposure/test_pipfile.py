"""Tests of exposure.pipfile."""

from __future__ import annotations

from impactscope.exposure import Exposure, classify, declared_requirements

from .helpers import PY312, one


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
