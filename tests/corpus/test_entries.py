"""Tests of corpus.entries: unique paths in a listing, stamps, a listing held and replayed."""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import pytest

from impactscope.corpus.roots import discover

from .helpers import LIB, contents, tar_members, write_tar, write_tree, write_zip, zip_members


def test_entry_bytes_and_stamps(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    write_tree(root / "f", {"a.py": "x = 1\n"})
    write_zip(root / "z.zip", {"a.py": "x = 1\n"})
    write_tar(root / "t.tar", {"a.py": "x = 1\n"}, "w")
    entries = {p.name: next(iter(p.entries())) for p in discover([root], library=LIB)}
    stat = (root / "f" / "a.py").stat()
    crc = zipfile.ZipFile(root / "z.zip").getinfo("a.py").CRC  # reference: zipfile's own header
    assert entries["f"].stamp == f"m{stat.st_mtime_ns}:6"
    assert entries["z"].stamp == f"c{crc}:6"
    assert entries["t"].stamp == "t1700000000:6"
    for name in ("f", "z", "t"):
        assert entries[name].size == 6


# Names that normalise alike: the same name twice, `./` in front, a backslash for a slash.
ALIKE = [("pkg/a.py", b"first = 1\n"), ("pkg/a.py", b"second = 2\n"), ("./pkg/a.py", b"third = 3\n"),
         ("pkg\\a.py", b"fourth = 4\n"), ("pkg/a~2.py", b"real = 5\n")]


@pytest.mark.parametrize("kind", ["zip", "tar", "tar.gz"])
def test_names_that_normalise_alike_are_all_kept(tmp_path: Path, kind: str) -> None:
    path = tmp_path / f"dups.{kind}"
    if kind == "zip":
        zip_members(path, ALIKE)
    else:
        tar_members(path, ALIKE, "w:gz" if kind == "tar.gz" else "w")
    (project,) = discover([path], single=True, library=LIB)
    got = contents(project)
    # Every member is there, under a path of its own, with its own bytes; the first in archive
    # order keeps the path.
    assert sorted(data for data, _ in got.values()) == sorted(data for _, data in ALIKE)
    assert got["pkg/a.py"] == (b"first = 1\n", "")
    assert {data for path, (data, _) in got.items() if path != "pkg/a.py"} == {
        b"second = 2\n", b"third = 3\n", b"fourth = 4\n", b"real = 5\n"}
    suffixed = {path: note for path, (_, note) in got.items() if note}
    if kind == "zip":  # listed in full first: the member really named a~2.py keeps its name
        assert got["pkg/a~2.py"] == (b"real = 5\n", "")
        assert sorted(suffixed) == ["pkg/a~3.py", "pkg/a~4.py", "pkg/a~5.py"]
    else:  # streamed: a~2.py was handed out before the member of that name came
        assert sorted(suffixed) == ["pkg/a~2.py", "pkg/a~2~2.py", "pkg/a~3.py", "pkg/a~4.py"]
    assert all("'pkg/a.py'" in note or "'pkg/a~2.py'" in note for note in suffixed.values())
    # Stable: the same archive lists the same way again.
    assert contents(next(discover([path], single=True, library=LIB))) == got


def test_suffixes_are_stable_and_free() -> None:
    from impactscope.corpus.entries import _free_path

    assert _free_path("a.py", {"a.py"}) == "a~2.py"
    assert _free_path("d/a.py", {"d/a.py", "d/a~2.py"}) == "d/a~3.py"
    assert _free_path("Makefile", {"Makefile"}) == "Makefile~2"
    assert _free_path(".env", {".env"}) == ".env~2"
    assert _free_path("x.tar.gz", {"x.tar.gz"}) == "x.tar~2.gz"


def test_a_scan_accounts_for_every_member_of_names_that_normalise_alike(tmp_path: Path) -> None:
    # End to end: the results file keys files by (project, path), so two equal paths used to
    # abort the scan with a UNIQUE-constraint error.
    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    root = tmp_path / "corpus"
    root.mkdir()
    uses = b"import heronframe\nheronframe.stack()\n"
    zip_members(root / "zipped.zip", ALIKE + [("pkg/use.py", uses), ("pkg/use.py", uses)])
    tar_members(root / "tarred.tar.gz", ALIKE + [("pkg/use.py", uses), ("./pkg/use.py", uses)], "w:gz")
    tar_members(tmp_path / "root.tar", [(f"proj/{n}", d) for n, d in ALIKE] + [("other/x.py", b""), ("proj/use.py", uses)])
    runner = CliRunner()
    out = tmp_path / "r.sqlite"
    scanned = runner.invoke(app, ["scan", str(changes), str(root), str(tmp_path / "root.tar"), "--out", str(out), "--jobs", "1"])
    assert scanned.exit_code == 0, scanned.output
    report = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    assert report["totals"]["projects"] == 4  # zipped, tarred, proj, other: no phantom
    assert report["totals"]["files"] == 7 + 7 + 6 + 1
    sites = sorted((f["project"], f["file"]) for f in report["findings"])
    assert sites == [("proj", "use.py"), ("tarred", "pkg/use.py"), ("tarred", "pkg/use~2.py"),
                     ("zipped", "pkg/use.py"), ("zipped", "pkg/use~2.py")]
