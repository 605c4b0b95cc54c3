"""Patches as git reads them: git's own `git apply --check` (and `git apply`) is the reference."""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from impactscope.rewrite.patch import file_diff, project_patch, quote_path
from tests.rewrite.helpers import rewrite_files

pytestmark = pytest.mark.skipif(shutil.which("git") is None, reason="git is the reference and is not installed")

USE = "import heronframe as hf\nt = hf.Table()\nu = t.stack_rows(t)\n"


def _git(cwd: Path, *args: str) -> subprocess.CompletedProcess[bytes]:
    return subprocess.run(["git", "-c", "core.quotePath=true", *args], cwd=cwd, capture_output=True, timeout=60)


def _repo(tmp_path: Path, files: dict[str, bytes]) -> Path:
    repo = tmp_path / "repo"
    for name, data in files.items():
        target = repo.joinpath(*name.split("/"))
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(data)
    assert _git(repo, "init", "-q").returncode == 0
    return repo


def test_git_applies_the_project_patch(tmp_path: Path) -> None:
    notebook = json.dumps({
        "cells": [{"cell_type": "code", "execution_count": None, "id": "a", "metadata": {}, "outputs": [],
                   "source": USE.splitlines(keepends=True)}],
        "metadata": {}, "nbformat": 4, "nbformat_minor": 5}, indent=1) + "\n"
    files = {
        "crlf.py": USE.replace("\n", "\r\n").encode(),
        "no_newline.py": USE.rstrip("\n").encode(),
        "caf\u00e9/na\u00efve m\u00f6dule.py": USE.encode(),
        "with space/x.py": USE.encode(),
        'odd"quote.py': USE.encode(),
        "notebooks/look.ipynb": notebook.encode(),
        "untouched.py": b"print('hello')\r\n",
    }
    (tmp_path / "work").mkdir()
    result = rewrite_files(tmp_path / "work", files)
    changed = {f.path for f in result.files}
    assert changed == set(files) - {"untouched.py"}
    patch = tmp_path / "p.patch"
    patch.write_bytes(project_patch((f.path, f.old, f.new) for f in result.files))
    repo = _repo(tmp_path, files)
    check = _git(repo, "apply", "--check", str(patch))
    assert check.returncode == 0, check.stderr.decode()
    assert _git(repo, "apply", str(patch)).returncode == 0
    for f in result.files:
        assert repo.joinpath(*f.path.split("/")).read_bytes() == f.new
    assert (repo / "untouched.py").read_bytes() == files["untouched.py"]


@pytest.mark.parametrize("name", ["caf\u00e9.py", "tab\there.py", 'say"hi".py', "back\\slash.py", "plain.py"])
def test_paths_are_quoted_as_git_quotes_them(tmp_path: Path, name: str) -> None:
    repo = _repo(tmp_path, {name: b"x\n"})
    listed = _git(repo, "ls-files", "--others").stdout.rstrip(b"\n")
    assert quote_path(name.encode()) == listed


def test_no_newline_marker_and_equal_files() -> None:
    assert file_diff("a.py", b"x\n", b"x\n") == b""
    diff = file_diff("a.py", b"a\nold", b"a\nnew")
    assert diff.endswith(b"-old\n\\ No newline at end of file\n+new\n\\ No newline at end of file\n")
