"""compare and harvest on the command line: --output prints the counts, --include-private widens."""

from __future__ import annotations

import tomllib
from importlib import resources
from pathlib import Path

from typer.testing import CliRunner

from impactscope.cli import app

from tests.surface.helpers import write_tree

runner = CliRunner()
DEMO = Path(str(resources.files("impactscope.demo")))


def test_output_prints_how_many_entries_of_each_kind(tmp_path: Path) -> None:
    out = tmp_path / "draft.toml"
    result = runner.invoke(app, ["compare", str(DEMO / "heronframe"), str(DEMO / "heronframe_3_0" / "heronframe"),
                                 "--release", "3.0", "--output", str(out)])
    assert result.exit_code == 0, result.output
    entries = tomllib.loads(out.read_text())["change"]
    line = result.stdout.strip()
    assert line.startswith(f"wrote {out}: {len(entries)} entries (")
    removed = sum(1 for c in entries if c["kind"] == "removed")
    assert f"{removed} removed" in line and "certainty:" in line


def test_include_private_widens_the_draft(tmp_path: Path) -> None:
    old = write_tree(tmp_path / "a" / "lib", {"__init__.py": "def f(): ...\ndef _g(): ...\n", "conftest.py": "def fix(): ...\n"})
    new = write_tree(tmp_path / "b" / "lib", {"__init__.py": "def f(): ...\n"})
    members = {}
    for flag in ([], ["--include-private"]):
        out = tmp_path / f"d{len(flag)}.toml"
        result = runner.invoke(app, ["compare", str(old), str(new), "--output", str(out), *flag])
        assert result.exit_code == 0, result.output
        members[bool(flag)] = {c["member"] for c in tomllib.loads(out.read_text()).get("change", [])}
    assert members[False] == set() and members[True] == {"lib._g", "lib.conftest"}
    harvested = runner.invoke(app, ["harvest", str(old), "--output", str(tmp_path / "h.toml")])
    assert harvested.exit_code == 0 and "wrote" in harvested.stdout and "0 entries" in harvested.stdout
