"""The rewrite of a whole corpus: the demo corpus rewritten in place, scanned again and
rewritten again (idempotence); `--check`, `--apply` on archives, the command line."""

from __future__ import annotations

import ast
import json
import shutil
import tarfile
import zipfile
from collections import Counter
from pathlib import Path

import libcst as cst
import pytest
from typer.testing import CliRunner

from impactscope.changes import load_change_list
from impactscope.cli import app
from impactscope.corpus import read_notebook
from impactscope.demo.generate import generate_corpus
from impactscope.rewrite.run import RewriteOptionError, run_rewrite
from impactscope.scan.run import run_scan
from impactscope.store import ResultStore
from tests.rewrite.helpers import rewrite_changes, write_project

MECHANICAL = {"HF-1", "HF-2", "HF-3", "HF-4", "HF-5", "HF-6"}


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """A small demo corpus with its archives unpacked into folders (so `--apply` can edit it)."""
    base = tmp_path_factory.mktemp("rewrite-demo")
    root = base / "corpus"
    generate_corpus(root, projects=60, seed=3)
    for item in list(root.iterdir()):
        if item.name.endswith(".zip"):
            with zipfile.ZipFile(item) as z:
                z.extractall(root / item.name[: -len(".zip")])
            item.unlink()
        elif item.name.endswith(".tar.gz"):
            with tarfile.open(item) as t:
                t.extractall(root / item.name[: -len(".tar.gz")], filter="data")
            item.unlink()
    return root, rewrite_changes(base)


def _parses(code: str) -> bool:
    try:
        cst.parse_module(code)
    except cst.ParserSyntaxError:
        return False
    return True


def _resolved(changes: Path, root: Path, out: Path) -> Counter[str]:
    run_scan(changes, [root], out)
    store = ResultStore.open(out)
    try:
        return Counter(f.change for f in store.findings() if f.confidence.label == "resolved" and f.change in MECHANICAL)
    finally:
        store.close()


def test_apply_then_rescan_and_rewrite_again(demo: tuple[Path, Path], tmp_path: Path) -> None:
    source, changes = demo
    root = tmp_path / "corpus"
    shutil.copytree(source, root)
    first = run_rewrite(changes, [root], tmp_path / "patches")
    assert first.files > 0 and first.rewritten > 0
    left = json.loads((tmp_path / "patches" / "review.json").read_text(encoding="utf-8"))["sites"]
    applied = run_rewrite(changes, [root], tmp_path / "applied", apply=True)
    assert (applied.files, applied.rewritten) == (first.files, first.rewritten)
    assert not list((tmp_path / "applied").glob("*.patch"))
    # Every rewritten file still parses (each notebook cell that parsed before does).
    for patch in (tmp_path / "patches").glob("*.patch"):
        for line in patch.read_text(encoding="utf-8", errors="replace").splitlines():
            if line.startswith("+++ b/"):
                relative = line[len("+++ b/"):].rstrip("\t")
                path = root / patch.stem / relative
                if not path.exists():  # a loose file is its own project
                    path, relative = root / patch.stem, ""
                before = source / path.relative_to(root)
                if path.suffix == ".ipynb":
                    parsed_before = {c.index for c in read_notebook(before.read_bytes(), path.name).cells if _parses(c.code)}
                    parsed_after = {c.index for c in read_notebook(path.read_bytes(), path.name).cells if _parses(c.code)}
                    assert parsed_before <= parsed_after, path
                else:
                    ast.parse(path.read_bytes())
    # A rescan proves no site that the rewrite would still change: what stays resolved is
    # what the first run left for review or found needing no edit.
    after = _resolved(changes, root, tmp_path / "after.sqlite")
    kept = Counter(s["change"] for s in left if s["confidence"] == "resolved")
    for change in MECHANICAL:
        assert after[change] <= kept[change] + first.settled, change
    again = run_rewrite(changes, [root], tmp_path / "again")
    assert (again.files, again.rewritten) == (0, 0)
    assert not list((tmp_path / "again").glob("*.patch"))


def test_check_exits_1_when_work_is_pending_and_0_after(tmp_path: Path) -> None:
    changes = rewrite_changes(tmp_path)
    root = tmp_path / "corpus"
    write_project(root / "one", {"m.py": "import heronframe as hf\nt = hf.Table()\nt.stack_rows(t)\n"})
    runner = CliRunner()
    pending = runner.invoke(app, ["rewrite", str(changes), str(root), "--out", str(tmp_path / "o"), "--check", "--quiet"])
    assert pending.exit_code == 1, pending.output
    assert (tmp_path / "o" / "one.patch").exists()
    applied = runner.invoke(app, ["rewrite", str(changes), str(root), "--out", str(tmp_path / "o"), "--apply", "--quiet"])
    assert applied.exit_code == 0, applied.output
    assert b"append_rows" in (root / "one" / "m.py").read_bytes()
    clean = runner.invoke(app, ["rewrite", str(changes), str(root), "--out", str(tmp_path / "o"), "--check", "--quiet"])
    assert clean.exit_code == 0, clean.output
    assert not (tmp_path / "o" / "one.patch").exists()  # the earlier run's patch is gone


def test_apply_is_refused_for_archives(tmp_path: Path) -> None:
    changes = rewrite_changes(tmp_path)
    root = tmp_path / "corpus"
    root.mkdir()
    with zipfile.ZipFile(root / "zipped.zip", "w") as z:
        z.writestr("m.py", "import heronframe as hf\nt = hf.Table()\nt.stack_rows(t)\n")
    with pytest.raises(RewriteOptionError, match="archive"):
        run_rewrite(changes, [root], tmp_path / "o", apply=True)
    result = CliRunner().invoke(app, ["rewrite", str(changes), str(root), "--out", str(tmp_path / "o"), "--apply"])
    assert result.exit_code == 2
    assert "--apply edits folder projects only" in result.output
    # Without --apply the archive's patch is written, with paths relative to the project root.
    run_rewrite(changes, [root], tmp_path / "p")
    assert (tmp_path / "p" / "zipped.patch").read_bytes().startswith(b"diff --git a/m.py b/m.py\n")


def test_jobs_give_the_same_patches(demo: tuple[Path, Path], tmp_path: Path) -> None:
    source, changes = demo
    run_rewrite(changes, [source], tmp_path / "one")
    run_rewrite(changes, [source], tmp_path / "two", jobs=2)
    names = sorted(p.name for p in (tmp_path / "one").glob("*.patch"))
    assert names and names == sorted(p.name for p in (tmp_path / "two").glob("*.patch"))
    for name in names:
        assert (tmp_path / "one" / name).read_bytes() == (tmp_path / "two" / name).read_bytes()
    assert load_change_list(changes).by_id("HF-6").default == "','"
