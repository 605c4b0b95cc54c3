"""Tests of exposure.setup_py: literal lists read with libcst, never run."""

from __future__ import annotations

from impactscope.exposure import Exposure, classify, read_manifests

from .helpers import PY312


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
