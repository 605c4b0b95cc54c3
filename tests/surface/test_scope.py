"""scope: which paths a draft may name (issue 10: the public surface by default)."""

from __future__ import annotations

import pytest

from impactscope.surface import build_surface
from impactscope.surface.scope import Scope, is_private_path, is_scaffolding

from .helpers import write_tree


@pytest.mark.parametrize("segment", ["tests", "test", "conftest", "test_frame", "frame_tests", "io_test", "examples",
                                     "benchmarks", "asv_bench"])
def test_scaffolding(segment):
    assert is_scaffolding(segment)


@pytest.mark.parametrize("segment", ["testing", "frame", "contest", "attestation"])
def test_not_scaffolding(segment):
    # common practice: `numpy.testing` and `pandas.testing` are public API for downstream tests
    assert not is_scaffolding(segment)


def test_private_paths():
    # PEP 8, "Public and internal interfaces": a leading underscore on a name or on a module,
    # class or package that contains it makes it internal; dunders are protocol.
    assert is_private_path("lib._core.x") and is_private_path("lib.Box._peek")
    assert not is_private_path("lib.Box.__init__") and not is_private_path("lib.core.x")


def test_covers_and_paths(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "from ._impl import Box\n",
        "_impl.py": "class Box:\n    def _peek(self): ...\n    def open(self): ...\n",
        "tests/__init__.py": "",
        "conftest.py": "def fix(): ...\n",
    })
    s = build_surface(root, include_tests=True)
    public, everything = Scope(), Scope(include_private=True)
    assert public.paths(s, "lib._impl.Box.open") == ("lib.Box.open",)
    assert public.paths(s, "lib._impl.Box._peek") == () and everything.paths(s, "lib._impl.Box._peek") == ("lib._impl.Box._peek",)
    assert not public.covers(s, "lib.conftest.fix") and everything.covers(s, "lib.conftest.fix")
