"""Tests of exposure.setup_cfg."""

from __future__ import annotations

from impactscope.exposure import Exposure, classify, declared_requirements, read_manifests

from .helpers import PY312


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
