"""Low-certainty draft entries in every report format: marked, and counted apart (issue 10).

docs/change-list.md (`certainty`) and docs/report-json.md (`by_certainty`): a change may carry certainty = "high"|"medium"|"low"
(drafts write it); reports show low-certainty changes apart.
"""

from __future__ import annotations

import json
from pathlib import Path

from typer.testing import CliRunner

from impactscope.cli import app

from tests.surface.helpers import write_tree

CHANGES = """
[library]
name = "heronframe"
release = "3.0"

[[change]]
id = "C-1"
member = "heronframe.stack"
kind = "removed"
certainty = "high"

[[change]]
id = "C-2"
member = "heronframe.merge_tables"
kind = "removed"
certainty = "low"

[[change]]
id = "C-3"
member = "heronframe.read_table"
kind = "removed"
"""


def test_low_certainty_entries_are_counted_apart_in_every_format(tmp_path: Path) -> None:
    corpus = write_tree(tmp_path / "corpus", {
        "a/main.py": "import heronframe\nheronframe.stack([])\nheronframe.merge_tables(1, 2)\n",
        "b/main.py": "import heronframe\nheronframe.merge_tables(1, 2)\n",
        "c/main.py": "import heronframe\nheronframe.read_table('x')\n",
    })
    changes = tmp_path / "changes.toml"
    changes.write_text(CHANGES, encoding="utf-8")
    results = tmp_path / "r.sqlite"
    runner = CliRunner()
    scanned = runner.invoke(app, ["scan", str(changes), str(corpus), "--out", str(results), "--jobs", "1", "--quiet"])
    assert scanned.exit_code == 0, scanned.output

    as_json = runner.invoke(app, ["report", str(results), "--format", "json"])
    assert as_json.exit_code == 0, as_json.output
    document = json.loads(as_json.stdout)
    assert {c["id"]: c["certainty"] for c in document["changes"]} == {"C-1": "high", "C-2": "low", "C-3": None}
    assert document["by_certainty"] == {"low": {"changes": 1, "projects_affected": 2},
                                        "other": {"changes": 2, "projects_affected": 2}}

    markdown = runner.invoke(app, ["report", str(results), "--format", "markdown"]).stdout
    head, _, apart = markdown.partition("## Low-certainty draft entries (1 changes, 2 projects hit at most)")
    assert apart, markdown
    assert "| C-2 |" in apart.split("\n## ")[0] and "| C-2 |" not in head
    assert "| C-1 |" in head and "| C-3 |" in head

    table = runner.invoke(app, ["report", str(results)]).stdout
    head, _, apart = " ".join(table.split()).partition("Low-certainty draft entries (1 change, 2 projects hit at most)")
    assert apart, table
    hits_apart = apart.split("Proven projects by what")[0]
    assert " C-2 " in hits_apart and " C-1 " not in hits_apart and " C-3 " not in hits_apart
    assert " C-1 " in head and " C-3 " in head and " C-2 " not in head
