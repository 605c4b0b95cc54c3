"""A hostile library source: special files and links leading out are never read, a huge module is
not parsed, and each is named among the surface's problems (the scan goes on).

The library here is invented test data in the demo's scenario (the fictional heronframe).
"""

from __future__ import annotations

import os
import threading
from pathlib import Path

import pytest

from impactscope.surface import build_surface
from impactscope.surface.build import MODULE_BYTES


def _library(root: Path) -> Path:
    package = root / "heronframe"
    package.mkdir(parents=True)
    (package / "__init__.py").write_text("from heronframe.core import Table\n")
    (package / "core.py").write_text("class Table:\n    def stack_rows(self):\n        pass\n")
    return package


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_a_fifo_named_like_a_module_is_never_opened(tmp_path: Path) -> None:
    package = _library(tmp_path)
    os.mkfifo(package / "pipe.py")
    result: list[object] = []
    worker = threading.Thread(target=lambda: result.append(build_surface(package, "heronframe")), daemon=True)
    worker.start()
    worker.join(20)
    assert not worker.is_alive(), "building the surface blocked on a FIFO"
    surface = result[0]
    assert surface.is_class("heronframe.Table")  # type: ignore[attr-defined]
    assert any("pipe.py" in p.path for p in surface.problems)  # type: ignore[attr-defined]


def test_links_leading_out_of_the_source_are_not_followed(tmp_path: Path) -> None:
    package = _library(tmp_path / "lib")
    outside = tmp_path / "elsewhere"
    (outside / "secret").mkdir(parents=True)
    (outside / "secret" / "__init__.py").write_text("class Leaked:\n    pass\n")
    (outside / "leak.py").write_text("class AlsoLeaked:\n    pass\n")
    os.symlink(outside / "secret", package / "secret")
    os.symlink(outside / "leak.py", package / "leak.py")
    surface = build_surface(package, "heronframe")
    names = set(surface.members)
    assert not any("Leaked" in n for n in names), names
    assert any("leak.py" in p.path and "outside" in p.message for p in surface.problems)


def test_a_module_past_the_size_bound_is_a_problem_not_a_parse(tmp_path: Path) -> None:
    package = _library(tmp_path)
    (package / "generated.py").write_text("x = 1\n" * (MODULE_BYTES // 6 + 10))
    surface = build_surface(package, "heronframe")
    assert any("generated.py" in p.path and "too large" in p.message for p in surface.problems)
    assert surface.is_class("heronframe.Table")


def test_a_link_inside_the_source_is_read(tmp_path: Path) -> None:
    package = _library(tmp_path)
    (package / "_impl.py").write_text("def stack():\n    pass\n")
    os.symlink(package / "_impl.py", package / "ops.py")
    surface = build_surface(package, "heronframe")
    assert "heronframe.ops.stack" in surface.members
    assert not surface.problems
