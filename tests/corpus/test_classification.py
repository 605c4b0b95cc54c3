"""Tests of corpus.classification: the reason each file of a project is not read."""

from __future__ import annotations

import zipfile
from pathlib import Path

import pytest

from impactscope.corpus.classification import classify
from impactscope.corpus.limits import DEFAULT_LIMITS

from .helpers import Files, LIB, projects, write_tar, write_tree, write_zip


@pytest.mark.parametrize(
    "path, reason",
    [
        (".git/hooks/pre-commit.py", "version control"),
        ("sub/.hg/x.py", "version control"),
        (".svn/x.py", "version control"),
        ("pkg/__pycache__/m.py", "cache"),
        (".ipynb_checkpoints/n-checkpoint.ipynb", "cache"),
        (".mypy_cache/x.py", "cache"),
        (".pytest_cache/x.py", "cache"),
        (".tox/py311/x.py", "cache"),
        ("web/node_modules/x/setup.py", "node modules"),
        ("lib/python3.11/site-packages/heronframe/__init__.py", "virtual environment"),
        ("usr/lib/python3/dist-packages/x.py", "virtual environment"),
        ("docs/logo.png", "not source"),
        ("src/app.py", None),
        ("notebooks/a.ipynb", None),
    ],
)
def test_name_rules(tmp_path: Path, path: str, reason: str | None) -> None:
    assert classify(path, 10, library=LIB) == reason
    root = write_tree(tmp_path / "r", {path: "x = 1\n"})
    assert projects(root, single=True) == {"r": {path: reason}}


@pytest.mark.parametrize(
    "files, expected",
    [
        ({"myenv/pyvenv.cfg": "", "myenv/lib/x.py": "", "app.py": ""},
         {"myenv/pyvenv.cfg": "virtual environment", "myenv/lib/x.py": "virtual environment", "app.py": None}),
        ({"venv/bin/activate": "", "venv/bin/tool.py": ""},
         {"venv/bin/activate": "virtual environment", "venv/bin/tool.py": "virtual environment"}),
        ({"env/Scripts/activate": "", "env/Lib/x.py": ""},
         {"env/Scripts/activate": "virtual environment", "env/Lib/x.py": "virtual environment"}),
        ({".venv/x.py": ""}, {".venv/x.py": None}),  # no marker: an ordinary folder
        ({"env/__init__.py": "", "env/settings.py": ""}, {"env/__init__.py": None, "env/settings.py": None}),
    ],
    ids=["pyvenv.cfg", "bin/activate", "Scripts/activate", "bare .venv", "package named env"],
)
def test_virtual_environments_in_folders_and_zips(
    tmp_path: Path, files: Files, expected: dict[str, str | None]
) -> None:
    folder = write_tree(tmp_path / "f", files)
    zipped = write_zip(tmp_path / "z.zip", files)
    got = projects(folder, zipped, single=True)
    assert got == {"f": expected, "z": expected}


def test_virtual_environments_in_tar_use_names_only(tmp_path: Path) -> None:
    files = {"app.py": "", ".venv/x.py": "", "env/__init__.py": "", "myenv/pyvenv.cfg": "",
             "myenv/lib/x.py": "", "lib/site-packages/y.py": ""}
    got = projects(write_tar(tmp_path / "t.tgz", files), single=True)
    assert got == {"t": {"app.py": None, ".venv/x.py": "virtual environment",
                         "env/__init__.py": "virtual environment", "myenv/pyvenv.cfg": "not source",
                         "myenv/lib/x.py": None, "lib/site-packages/y.py": "virtual environment"}}


def test_vendored_library_needs_init(tmp_path: Path) -> None:
    files = {"third_party/heronframe/__init__.py": "", "third_party/heronframe/core.py": "",
             "examples/heronframe/demo.py": "", "heronframe.py": "", "heronframe_extra/x.py": ""}
    expected = {"third_party/heronframe/__init__.py": "vendored library",
                "third_party/heronframe/core.py": "vendored library",
                "examples/heronframe/demo.py": None, "heronframe.py": None, "heronframe_extra/x.py": None}
    got = projects(write_tree(tmp_path / "f", files), write_zip(tmp_path / "z.zip", files), single=True)
    assert got == {"f": expected, "z": expected}
    # A tar stream cannot look ahead for __init__.py: the directory name and where it sits decide.
    tarred = projects(write_tar(tmp_path / "t.tgz", files), single=True)["t"]
    assert tarred["third_party/heronframe/core.py"] == "vendored library"
    assert tarred["examples/heronframe/demo.py"] is None


def test_a_subpackage_named_like_the_library_is_the_projects_own(tmp_path: Path) -> None:
    # The Language Reference, 5.4 ("Packages") and 5.7 (absolute imports, PEP 328): `hfkit/heronframe/`
    # with `hfkit/__init__.py` is the module `hfkit.heronframe`; an `import heronframe` never finds
    # it. A vendor folder (pip's `_vendor`, common practice) keeps copies even when a package.
    files = {"hfkit/__init__.py": "", "hfkit/heronframe/__init__.py": "", "hfkit/heronframe/utils.py": "",
             "hfkit/_vendor/__init__.py": "", "hfkit/_vendor/heronframe/__init__.py": "",
             "heronframe/__init__.py": "", "src/heronframe/__init__.py": ""}
    expected = {"hfkit/__init__.py": None, "hfkit/heronframe/__init__.py": None, "hfkit/heronframe/utils.py": None,
                "hfkit/_vendor/__init__.py": None, "hfkit/_vendor/heronframe/__init__.py": "vendored library",
                "heronframe/__init__.py": "vendored library", "src/heronframe/__init__.py": "vendored library"}
    got = projects(write_tree(tmp_path / "f", files), write_zip(tmp_path / "z.zip", files),
                   write_tar(tmp_path / "t.tgz", files), single=True)
    assert got == {"f": expected, "z": expected, "t": expected}


def test_too_large(tmp_path: Path) -> None:
    # A notebook's size is mostly outputs: its reader applies the limit to its code (see sources).
    files = {"big.py": b"#" * (DEFAULT_LIMITS.file_bytes + 1), "edge.py": b"#" * DEFAULT_LIMITS.file_bytes,
             "big.csv": b"," * (DEFAULT_LIMITS.file_bytes + 1), "big.ipynb": b" " * (DEFAULT_LIMITS.file_bytes + 1)}
    expected = {"big.py": "too large", "edge.py": None, "big.csv": "not source", "big.ipynb": None}
    # Stored, not deflated: a run of one byte deflates past the compression ratio bound.
    got = projects(write_tree(tmp_path / "f", files), write_zip(tmp_path / "z.zip", files, zipfile.ZIP_STORED),
                   write_tar(tmp_path / "t.tar", files, "w"), single=True)
    assert got == {"f": expected, "z": expected, "t": expected}


@pytest.mark.parametrize(
    "path, reason",
    [
        ("node_modules/.git/x.py", "version control"),
        ("node_modules/__pycache__/x.py", "cache"),
        ("site-packages/node_modules/x.py", "node modules"),
        ("lib/site-packages/heronframe/__init__.py", "virtual environment"),
        ("heronframe/readme.txt", "vendored library"),
    ],
)
def test_rule_order(path: str, reason: str) -> None:
    assert classify(path, DEFAULT_LIMITS.file_bytes + 1, library=LIB) == reason


def test_classify_with_layout_order(tmp_path: Path) -> None:
    files = {"e/pyvenv.cfg": "", "e/heronframe/__init__.py": "", "heronframe/__init__.py": "",
             "heronframe/data.bin": b"\0" * (DEFAULT_LIMITS.file_bytes + 1)}
    assert projects(write_tree(tmp_path / "f", files), single=True)["f"] == {
        "e/heronframe/__init__.py": "virtual environment", "e/pyvenv.cfg": "virtual environment",
        "heronframe/__init__.py": "vendored library", "heronframe/data.bin": "vendored library"}


def test_classify_with_siblings() -> None:
    siblings = ["env/bin/activate", "env/x.py", "pkg/heronframe/__init__.py", "pkg/heronframe/a.py"]
    assert classify("env/x.py", 1, library=LIB, siblings=siblings) == "virtual environment"
    assert classify("pkg/heronframe/a.py", 1, library=LIB, siblings=siblings) == "vendored library"
    assert classify("env/x.py", 1, library=LIB, siblings=["env/x.py"]) is None
