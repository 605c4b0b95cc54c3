"""Fuzzing notebooks: the shapes of the Jupyter notebook format (nbformat 4's schema: `cells`, each
with `cell_type`, `source` as a string or a list of strings, `outputs`, `metadata`; nbformat 3's
`worksheets`), values of the wrong type in each place, and JSON cut short or with a byte changed.

Every notebook is scanned as a file of a project: the scan finishes, meets none of its own faults,
and the notebook has exactly one outcome; a notebook that reads well keeps its uses.
"""

from __future__ import annotations

import json
import tempfile
from pathlib import Path
from typing import Any

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from .helpers import USES, scan_root

FUZZ = settings(max_examples=40, deadline=None, suppress_health_check=list(HealthCheck))

junk = st.one_of(st.none(), st.booleans(), st.integers(-2, 2**70), st.floats(allow_nan=True), st.text(max_size=8),
                 st.lists(st.integers(), max_size=2), st.dictionaries(st.text(max_size=3), st.integers(), max_size=2))
code = st.sampled_from([USES.decode(), "%matplotlib inline\n!ls\nimport heronframe\nheronframe.stack()\n",
                        "x = (", "print 'py2'\n", "", "\x00", "??heronframe.stack\n", "def f(:\n",
                        "import heronframe\n" + "(" * 300 + ")" * 300 + "\n"])
source = st.one_of(code, code.map(lambda text: text.splitlines(keepends=True)), junk)
cell = st.fixed_dictionaries(
    {"cell_type": st.sampled_from(["code", "code", "markdown", "raw", "heading", ""]) | junk},
    optional={"source": source, "input": source, "outputs": st.lists(junk, max_size=2) | junk,
              "metadata": st.just({}) | junk, "execution_count": st.none() | junk, "id": st.text(max_size=4) | junk},
)
notebook = st.fixed_dictionaries(
    {"nbformat": st.sampled_from([4, 4, 3, 5, "4", None, 4.0])},
    optional={"nbformat_minor": st.integers(0, 6) | junk, "metadata": st.just({}) | junk,
              "cells": st.lists(cell, max_size=5) | junk,
              "worksheets": st.lists(st.fixed_dictionaries({"cells": st.lists(cell, max_size=3)}), max_size=2) | junk},
)


def _scan_notebook(data: bytes) -> list[Any]:
    with tempfile.TemporaryDirectory(prefix="fuzz-notebook-") as folder:
        project = Path(folder) / "corpus" / "p"
        project.mkdir(parents=True)
        (project / "explore.ipynb").write_bytes(data)
        (project / "use.py").write_bytes(USES)
        scan = scan_root(project.parent)
    assert scan.bugs() == []
    outcomes = [f for _, f in scan.files if f.path == "explore.ipynb"]
    assert len(outcomes) == 1 and len(scan.files) == 2
    assert {f.line for f in scan.findings if f.file == "use.py"} == {3, 4}  # the other file is untouched
    return outcomes


@FUZZ
@given(document=notebook)
def test_notebook_shapes_are_accounted(document: dict[str, Any]) -> None:
    (outcome,) = _scan_notebook(json.dumps(document).encode())
    assert outcome.status in ("parsed", "skipped", "unparsed")


@FUZZ
@given(cells=st.lists(code, min_size=1, max_size=4), cut=st.integers(0, 10_000), flip=st.integers(0, 10_000),
       byte=st.integers(0, 255))
def test_broken_json_is_accounted(cells: list[str], cut: int, flip: int, byte: int) -> None:
    document = {"nbformat": 4, "nbformat_minor": 5, "metadata": {}, "cells": [
        {"cell_type": "code", "metadata": {}, "execution_count": None, "outputs": [], "source": c} for c in cells]}
    data = bytearray(json.dumps(document).encode())
    data[flip % len(data)] = byte
    (outcome,) = _scan_notebook(bytes(data[: max(1, cut % (len(data) + 1))]))
    assert outcome.status in ("parsed", "skipped", "unparsed")


def test_a_well_formed_notebook_keeps_its_uses() -> None:
    """The fuzzed property's other side: the same scan does find uses in a notebook that reads."""
    document = {"nbformat": 4, "nbformat_minor": 5, "metadata": {}, "cells": [
        {"cell_type": "code", "metadata": {}, "execution_count": None, "outputs": [], "source": USES.decode()}]}
    with tempfile.TemporaryDirectory(prefix="fuzz-notebook-") as folder:
        project = Path(folder) / "corpus" / "p"
        project.mkdir(parents=True)
        (project / "explore.ipynb").write_text(json.dumps(document), encoding="utf-8")
        scan = scan_root(project.parent)
    assert {(f.file, f.cell, f.line) for f in scan.findings} == {("explore.ipynb", 0, 3), ("explore.ipynb", 0, 4)}
