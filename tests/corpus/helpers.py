"""Corpus trees, zips and tars for the corpus tests (invented data, fictional library)."""

from __future__ import annotations

import io
import os
import random
import tarfile
import warnings
import zipfile
from collections.abc import Mapping
from pathlib import Path

from impactscope.corpus.roots import Limits, NotAProject, Project, survey


LIB = "heronframe"


NOISE = random.Random(0).randbytes(300)  # not any archive format (fixed seed: no gzip magic)


Files = Mapping[str, bytes | str]


# A small project that exercises most classification rules at once.
PROJECT: dict[str, bytes | str] = {
    "app/main.py": "import heronframe\n",
    "app/analysis.ipynb": "{}",
    "README.md": "# readme\n",
    ".git/config": "[core]\n",
    "app/__pycache__/main.cpython-311.pyc": b"\x00\x01",
    "node_modules/pkg/index.py": "x = 1\n",
    "heronframe/__init__.py": "",
    "heronframe/table.py": "class Table: ...\n",
}


EXPECTED_SKIPS = {
    ".git/config": "version control",
    "README.md": "not source",
    "app/__pycache__/main.cpython-311.pyc": "cache",
    "app/analysis.ipynb": None,
    "app/main.py": None,
    "heronframe/__init__.py": "vendored library",
    "heronframe/table.py": "vendored library",
    "node_modules/pkg/index.py": "node modules",
}


def _bytes(content: bytes | str) -> bytes:
    return content if isinstance(content, bytes) else content.encode()


def write_tree(base: Path, files: Files) -> Path:
    for name, content in files.items():
        path = base / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(_bytes(content))
    return base


def write_zip(path: Path, files: Files, method: int = zipfile.ZIP_DEFLATED) -> Path:
    with zipfile.ZipFile(path, "w", method) as archive:
        for name, content in files.items():
            archive.writestr(name, _bytes(content))
    return path


def tar_bytes(files: Files, mode: str = "w:gz") -> bytes:
    buffer = io.BytesIO()
    with tarfile.open(fileobj=buffer, mode=mode) as archive:
        for name, content in files.items():
            data = _bytes(content)
            info = tarfile.TarInfo(name)
            info.size = len(data)
            info.mtime = 1_700_000_000
            archive.addfile(info, io.BytesIO(data))
    return buffer.getvalue()


def write_tar(path: Path, files: Files, mode: str = "w:gz") -> Path:
    path.write_bytes(tar_bytes(files, mode))
    return path


def prefixed(prefix: str, files: Files) -> dict[str, bytes | str]:
    return {f"{prefix}/{name}": content for name, content in files.items()}


def listing(project: Project) -> dict[str, str | None]:
    """path -> skip (or 'error: ...') for every entry, reading each readable one."""
    result: dict[str, str | None] = {}
    for entry in project.entries():
        if entry.error is not None:
            result[entry.path] = f"error: {entry.error}"
            continue
        if entry.skip is None:
            assert isinstance(entry.read(), bytes)
        result[entry.path] = entry.skip
    return result


def projects(
    *roots: os.PathLike[str] | str, single: bool = False, limits: Limits = Limits()
) -> dict[str, dict[str, str | None]]:
    return surveyed(*roots, single=single, limits=limits)[0]


def surveyed(
    *roots: os.PathLike[str] | str, single: bool = False, limits: Limits = Limits()
) -> tuple[dict[str, dict[str, str | None]], list[NotAProject]]:
    """What `survey` finds, read as a scan reads it: each project's listing while it is current
    (a tar root's entries can be read only then), and the items that are not projects."""
    found: dict[str, dict[str, str | None]] = {}
    others: list[NotAProject] = []
    for item in survey(list(roots), single=single, library=LIB, limits=limits):
        if isinstance(item, NotAProject):
            others.append(item)
        else:
            found[item.name] = listing(item)
    return found, others


def snapshot(base: Path) -> list[tuple[str, int]]:
    return sorted((str(p.relative_to(base)), p.stat().st_size) for p in base.rglob("*"))


# A wheel is a zip archive holding its packages and `{name}-{version}.dist-info/` (PEP 427, the
# binary distribution format); the wheel's own file name says {name}-{version}-{tags}.whl.
WHEEL_FILES: dict[str, bytes | str] = {
    "wpkg/__init__.py": "import heronframe\n",
    "wpkg/plot.py": "from wpkg import heronframe\n",
    "wpkg-1.0.dist-info/METADATA": "Metadata-Version: 2.1\nName: wpkg\nVersion: 1.0\n",
    "wpkg-1.0.dist-info/RECORD": "",
}


WHEEL_NAME = "wpkg-1.0-py3-none-any.whl"


WHEEL_LISTING = {
    "wpkg-1.0.dist-info/METADATA": "not source",
    "wpkg-1.0.dist-info/RECORD": "not source",
    "wpkg/__init__.py": None,
    "wpkg/plot.py": None,
}


# An sdist `{name}-{version}.tar.gz` holds one top folder `{name}-{version}/` (the source
# distribution format); paths are relative to it.
SDIST_FILES: dict[str, bytes | str] = {
    "spkg-2.1/PKG-INFO": "Metadata-Version: 2.2\nName: spkg\nVersion: 2.1\n",
    "spkg-2.1/setup.py": "from setuptools import setup\nsetup(name='spkg')\n",
    "spkg-2.1/spkg/__init__.py": "import heronframe\n",
}


SDIST_LISTING = {"PKG-INFO": "not source", "setup.py": None, "spkg/__init__.py": None}


def zip_members(path: Path, members: list[tuple[str, bytes]]) -> Path:
    """A zip with members in this order, duplicates kept (zipfile warns, and writes them)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        with zipfile.ZipFile(path, "w") as archive:
            for name, data in members:
                archive.writestr(zipfile.ZipInfo(name), data)
    return path


def tar_members(path: Path, members: list[tuple[str, bytes]], mode: str = "w") -> Path:
    with tarfile.open(path, mode, encoding="utf-8", errors="surrogateescape") as archive:
        for name, data in members:
            info = tarfile.TarInfo(name)
            info.size = len(data)
            archive.addfile(info, io.BytesIO(data))
    return path


def contents(project: Project) -> dict[str, tuple[bytes | None, str]]:
    return {e.path: (None if e.skip or e.error else e.read(), e.note) for e in project.entries()}
