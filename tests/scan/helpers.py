"""A tiny downstream corpus and change list for the scan tests (invented data, fictional library)."""

from __future__ import annotations

import io
import json
import tarfile
import zipfile
from pathlib import Path

from impactscope.store import ResultStore

CHANGES = """\
[library]
name = "heronframe"
release = "3.0"

[types]
"heronframe.read_table" = "heronframe.Table"
"heronframe.Table" = "heronframe.Table"

[[change]]
id = "HF-1"
member = "heronframe.Table.stack_rows"
kind = "renamed"
replacement = "heronframe.Table.append_rows"

[[change]]
id = "HF-2"
member = "heronframe.stack"
kind = "removed"
"""


def write_changes(directory: Path, text: str = CHANGES) -> Path:
    path = directory / "changes.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _notebook(*cells: str) -> str:
    return json.dumps({
        "nbformat": 4, "nbformat_minor": 5, "metadata": {},
        "cells": [{"cell_type": "code", "metadata": {}, "execution_count": None, "outputs": [],
                   "source": c} for c in cells],
    })


def project_files(i: int, bulk: int = 0) -> dict[str, str]:
    """Files of project number `i`: a mix of direct use, aliases, re-exports and unrelated code."""
    files = {
        "README.md": f"project {i}\n",
        "requirements.txt": "heronframe>=2.0\n",
        f"pkg{i}/__init__.py": "",
        f"pkg{i}/util.py": "def helper(x):\n    return [y for y in x]\n" * (1 + i % 3),
    }
    if i % 4 != 3:  # most projects use the library
        files[f"pkg{i}/io.py"] = (
            "import heronframe as hf\n"
            "from heronframe import read_table\n\n"
            "def load(path):\n"
            "    t = read_table(path)\n"
            "    t.stack_rows(t)\n"
            "    return hf.stack([t, t])\n"
        ) + "".join(f"\ndef extra{k}(p):\n    u = hf.read_table(p)\n    return u.stack_rows(u).sort_by('a')\n" for k in range(bulk))
        files[f"pkg{i}/helpers.py"] = "from heronframe import stack as glue\n"
        files[f"pkg{i}/main.py"] = (
            f"from pkg{i}.helpers import glue\n\n"
            "def run(a, b):\n"
            "    return glue([a, b])\n"
        )
        files[f"notebooks/explore{i}.ipynb"] = _notebook(
            "import heronframe as hf", "%matplotlib inline\nt = hf.read_table('x.csv')\nt.stack_rows(t)"
        )
    else:
        files[f"pkg{i}/other.py"] = "def stack(x):\n    return x\n\nstack([1])\n"
    if i % 5 == 0:
        files["legacy.py"] = "import heronframe\nprint 'python 2', heronframe.stack([])\n"
        files["broken.py"] = "import heronframe\nheronframe.stack(\ndef f(:\n"
    return files


def _zip_bytes(files: dict[str, str], prefix: str = "") -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as archive:
        for path, text in sorted(files.items()):
            archive.writestr(prefix + path, text)
    return buf.getvalue()


def _tar_bytes(files: dict[str, str], prefix: str = "", mode: str = "w:gz") -> bytes:
    buf = io.BytesIO()
    with tarfile.open(fileobj=buf, mode=mode) as archive:
        for path, text in sorted(files.items()):
            data = text.encode()
            info = tarfile.TarInfo(prefix + path)
            info.size = len(data)
            info.mtime = 1_700_000_000
            archive.addfile(info, io.BytesIO(data))
    return buf.getvalue()


def build_corpus(root: Path, projects: int = 8, bulk: int = 0) -> Path:
    """A folder root: folder projects, a zip project, a tar.gz project and a loose notebook."""
    root.mkdir(parents=True, exist_ok=True)
    for i in range(projects):
        files = project_files(i, bulk)
        if i % 6 == 1:
            (root / f"proj{i:03d}.zip").write_bytes(_zip_bytes(files))
        elif i % 6 == 2:
            (root / f"proj{i:03d}.tar.gz").write_bytes(_tar_bytes(files))
        else:
            for path, text in files.items():
                target = root / f"proj{i:03d}" / path
                target.parent.mkdir(parents=True, exist_ok=True)
                target.write_text(text, encoding="utf-8")
    (root / "loose.ipynb").write_text(_notebook("import heronframe\nheronframe.stack([])"), encoding="utf-8")
    return root


def build_archive_roots(base: Path, projects: int = 3) -> tuple[Path, Path]:
    """A zip root and a tar root, each holding `projects` projects (streamed / borrowed reads)."""
    zip_files: dict[str, str] = {}
    tar_files: dict[str, str] = {}
    for i in range(projects):
        for path, text in project_files(i).items():
            zip_files[f"zp{i}/{path}"] = text
            tar_files[f"tp{i}/{path}"] = text
    zip_root = base / "zroot.zip"
    tar_root = base / "troot.tar"
    zip_root.write_bytes(_zip_bytes(zip_files))
    tar_root.write_bytes(_tar_bytes(tar_files, mode="w"))
    return zip_root, tar_root


def snapshot(results: Path) -> dict[str, object]:
    """Everything a report can see, in a form to compare with ==."""
    store = ResultStore.open(results)
    try:
        projects = store.projects()
        return {
            "projects": projects,
            "files": list(store.files()),
            "findings": store.findings(),
            "manifests": {p.name: store.manifests(p.name) for p in projects},
            "complete": store.meta().get("complete"),
        }
    finally:
        store.close()
