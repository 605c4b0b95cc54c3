"""Fuzzing programs: hypothesmith's programs (from the Lark grammar of Python and from libcst's node
types), with uses of the library around them, scanned the way a corpus is (prefilter, narrowing,
the nesting guard, the time budget), where tests/scan/test_grammar_sweep.py resolves them whole.

The scan finishes, meets none of its own faults, and accounts for the one file; when the program
parses, the uses before and after it are found, whatever it holds in between (unless a statement
of its own may rebind the library's name, which the resolver rightly follows).
"""

from __future__ import annotations

import ast
import tempfile
from pathlib import Path

import hypothesmith
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from .helpers import scan_root

FUZZ = settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
BEFORE = "import heronframe as hf\nhf.stack([])\n"
AFTER = "\nimport heronframe as hf\nhf.stack([])\n"


def _scan(code: str) -> None:
    text = BEFORE + code + AFTER
    with tempfile.TemporaryDirectory(prefix="fuzz-program-") as folder:
        (Path(folder) / "p").mkdir()
        (Path(folder) / "p" / "program.py").write_text(text, encoding="utf-8", errors="surrogatepass")
        scan = scan_root(Path(folder))
    assert scan.bugs() == []
    (outcome,) = [f for _, f in scan.files]
    try:
        tree = ast.parse(text)
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return  # unparsed (a generated `from __future__` import now comes too late, ...): counted
    if outcome.status == "parsed":
        # CPython's own line of the last statement, AFTER's call ("\r" ends a line too).
        last = tree.body[-1].lineno
        assert last in {f.line for f in scan.findings}, (outcome, scan.findings)


@FUZZ
@given(code=st.deferred(hypothesmith.from_grammar))  # its parser is built when the test runs, not on import
def test_programs_from_the_grammar(code: str) -> None:
    _scan(code)


@settings(FUZZ, max_examples=10)  # libcst's node generator is the slow part: about 1 s a program here
@given(code=hypothesmith.from_node())
def test_programs_from_libcst_nodes(code: str) -> None:
    _scan(code)
