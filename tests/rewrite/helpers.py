"""Shared by the rewrite tests: the demo change list with old defaults, and a one-call rewrite of
small projects written from dictionaries of files."""

from __future__ import annotations

from pathlib import Path
from typing import Mapping

from impactscope.changes import load_change_list
from impactscope.corpus import discover
from impactscope.demo.run import demo_changes_path
from impactscope.rewrite.project import ProjectRewrite, rewrite_project
from impactscope.scan.library import prepare_library

DEMO_DIR = demo_changes_path().parent
LIBRARY_2_4 = DEMO_DIR / "heronframe"
LIBRARY_3_0 = DEMO_DIR / "heronframe_3_0"


def rewrite_changes(folder: Path, extra: str = "") -> Path:
    """The demo change list (its library source made absolute) with the old defaults of HF-4
    (`inplace=False`) and HF-6 (`sep=","`), as the 2.4 source has them."""
    text = demo_changes_path().read_text(encoding="utf-8")
    text = text.replace('source = "heronframe"', f"source = {str(LIBRARY_2_4)!r}")
    text = text.replace('parameter = "inplace"\n', 'parameter = "inplace"\ndefault = false\n')
    text = text.replace('parameter = "sep"\n', 'parameter = "sep"\ndefault = ","\n')
    path = folder / "changes.toml"
    path.write_text(text + extra, encoding="utf-8")
    return path


def write_project(root: Path, files: Mapping[str, bytes | str]) -> Path:
    root.mkdir(parents=True, exist_ok=True)
    for name, data in files.items():
        target = root.joinpath(*name.split("/"))
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(data.encode("utf-8") if isinstance(data, str) else data)
    return root


def rewrite_files(tmp_path: Path, files: Mapping[str, bytes | str], extra: str = "") -> ProjectRewrite:
    """Rewrite one project holding `files`, with the demo change list (plus `extra` entries)
    and the 2.4 source."""
    changes = load_change_list(rewrite_changes(tmp_path, extra))
    project_dir = write_project(tmp_path / "proj", files)
    (project,) = discover([project_dir], single=True, library=changes.import_name)
    library = prepare_library(changes, tmp_path / "lib")
    return rewrite_project(project, library.query)


def rewritten(tmp_path: Path, files: Mapping[str, bytes | str], extra: str = "") -> dict[str, bytes]:
    """The new bytes of every file the rewrite changed."""
    return {f.path: f.new for f in rewrite_files(tmp_path, files, extra).files}
