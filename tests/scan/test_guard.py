"""The guard in front of libcst: code too large for it is read at token level, uses kept at `possible`.

(Code nested too deeply is tested with a real crash of libcst in tests/scan/test_faults.py.)
"""

from __future__ import annotations

from pathlib import Path

from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.findings import Confidence
from impactscope.reasons import Reason
from impactscope.scan.guard import code_size
from impactscope.scan.run import run_scan

from .helpers import _notebook, snapshot, write_changes

USE = "hf.stack([])\n"  # 12 characters of code: one use of the removed member on each line
MANY = DEFAULT_LIMITS.parse_chars // 12 + 100  # just past the bound


def test_blank_lines_and_indentation_cost_nothing() -> None:
    code = "x = 1\n" + "\n" * 10_000 + " \t" * 10_000
    assert code_size(code) == 3


def test_the_bound_is_limits_parse_chars_of_code(tmp_path: Path) -> None:
    # A file with exactly parse_chars of code is parsed; one more character is over the bound
    # (in a statement that uses the library: narrowing would blank any other).
    at = "import heronframe as hf\n" + USE
    root = tmp_path / "corpus" / "p"
    root.mkdir(parents=True)
    (root / "at.py").write_text(at + "\n  \n", encoding="utf-8")
    (root / "over.py").write_text(at.replace("([])", "([1])"), encoding="utf-8")
    out = tmp_path / "r.sqlite"
    run_scan(write_changes(tmp_path), [root.parent], out, jobs=1, limits=Limits(parse_chars=code_size(at)))
    files = {f.path: f for _, f in snapshot(out)["files"]}  # type: ignore[union-attr]
    assert files["at.py"].status == "parsed"
    assert files["over.py"].status == "unparsed" and "parse_chars" in files["over.py"].detail


def test_a_file_too_large_for_libcst_is_read_at_token_level(tmp_path: Path) -> None:
    root = tmp_path / "corpus" / "p"
    root.mkdir(parents=True)
    (root / "big.py").write_text("import heronframe as hf\n" + USE * MANY, encoding="utf-8")
    (root / "small.py").write_text("import heronframe as hf\n" + USE, encoding="utf-8")
    # A notebook: the cells past the bound (counted together) are skipped, the first ones parsed.
    (root / "cells.ipynb").write_text(_notebook("import heronframe as hf\n" + USE, USE * MANY), encoding="utf-8")
    out = tmp_path / "r.sqlite"
    summary = run_scan(write_changes(tmp_path), [root.parent], out, jobs=1)
    assert summary.faults == {}
    shot = snapshot(out)
    files = {f.path: f for _, f in shot["files"]}  # type: ignore[union-attr]
    assert (files["big.py"].status, files["big.py"].reason) == ("unparsed", Reason.TOO_LARGE_TO_PARSE)
    assert "read at token level" in files["big.py"].detail
    assert files["small.py"].status == files["cells.ipynb"].status == "parsed"
    found = [(f.file, f.cell, f.confidence) for f in shot["findings"]]  # type: ignore[union-attr]
    # Every use of the large file is still found, at the level a token-level reading can give.
    assert found.count(("big.py", None, Confidence.POSSIBLE)) == MANY and len([f for f in found if f[0] == "big.py"]) == MANY
    assert ("small.py", None, Confidence.RESOLVED) in found
    assert [f for f in found if f[0] == "cells.ipynb"] == [("cells.ipynb", 0, Confidence.RESOLVED)]
