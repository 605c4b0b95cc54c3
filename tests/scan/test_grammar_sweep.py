"""The resolver against the grammar's own worked examples: it raises on nothing.

Two sources of programs nobody wrote for this tool:

- the running interpreter's standard library and its regression tests (Lib/test: test_grammar,
  test_patma, test_syntax, test_fstring, test_exception_group, ...), which exercise every
  construct of the Python Language Reference's grammar, its corner cases included;
- programs generated from the grammar by hypothesmith (from the Lark grammar of Python, and from
  libcst's node types).

Files are resolved whole (no prefilter, no narrowing), against a change list whose members are
named like the commonest attributes (`append`, `get`, `join`, `path`, `match`, `read`) of a library
the standard library imports everywhere (`os`), so the resolver runs, and matches, on most files.
A file the analysis fails on is counted as "analysis error" by the fault isolation; here that
count must be zero.
"""

from __future__ import annotations

import json
import sysconfig
import tempfile
from pathlib import Path

import hypothesmith
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from impactscope.changes import parse_change_list
from impactscope.corpus.limits import Limits
from impactscope.corpus.roots import discover
from impactscope.reasons import Reason
from impactscope.scan.cache import ScanSettings
from impactscope.scan.executor import run_pool
from impactscope.scan.job import ScanJob
from impactscope.scan.library import ScanLibrary
from impactscope.scan.project import scan_project

CHANGES = b"""
[library]
name = "os"

[types]
"os.scandir" = "os.DirEntry"
"os.DirEntry" = "os.DirEntry"
"os.popen" = "os._wrap_close"
"os._wrap_close" = "os._wrap_close"

[[change]]
member = "os.path.join"
kind = "renamed"
replacement = "os.path.joinpath"

[[change]]
member = "os.environ.get"
kind = "removed"

[[change]]
member = "os.read"
kind = "parameter-removed"
parameter = "n"
position = 1

[[change]]
member = "os.DirEntry.path"
kind = "renamed"
replacement = "os.DirEntry.location"

[[change]]
member = "os._wrap_close.read"
kind = "behaviour-changed"

[[change]]
member = "os.match"
kind = "removed"

[[change]]
member = "os.append"
kind = "removed"

[[change]]
member = "os.get"
kind = "default-changed"
parameter = "default"
"""

pytestmark = pytest.mark.filterwarnings("ignore::SyntaxWarning")  # generated code calls literals

LIBRARY = ScanLibrary(parse_change_list(CHANGES, Path("sweep.toml")))
STDLIB = Path(sysconfig.get_paths()["stdlib"])
# The worked examples of the grammar this sweep is for; without them it would prove little.
GRAMMAR_TESTS = ("test_grammar.py", "test_patma.py", "test_syntax.py", "test_fstring.py", "test_exception_group.py")


# The sweep is cut into slices of the project list that xdist's workers share; the slices
# together hold every project, and the last slice to finish checks the sums.
SLICES = 8


@pytest.mark.slow
@pytest.mark.parametrize("part", range(SLICES))
def test_the_standard_library_and_its_test_suite_raise_nothing(part: int, run_folder) -> None:
    missing = [name for name in GRAMMAR_TESTS if not (STDLIB / "test" / name).is_file()]
    assert not missing, (
        f"{STDLIB / 'test'} lacks {missing}: this interpreter ships without its test suite "
        "(on Debian, install libpython3.X-testsuite)"
    )
    # Each child of Lib/ and of Lib/test/ is a project, dealt in turn to the slices so that they
    # take about as long. Every file whole through libcst: the bound that reads a very large
    # file at token level instead (a hostile-input guard) is raised to the largest module read.
    whole = Limits(parse_chars=Limits().file_bytes)
    projects = [p for p in discover([STDLIB], library="os", limits=whole) if p.name not in ("site-packages", "test")]
    projects += list(discover([STDLIB / "test"], library="os", limits=whole))
    failed: list[str] = []
    outcomes: dict[str, int] = {}
    findings = 0
    job = ScanJob(LIBRARY, ScanSettings.of(LIBRARY.changes, prefilter=False))
    for scanned in run_pool(((p,) for p in projects[part::SLICES]), job, 1):
        findings += len(scanned.result.findings)
        for f in scanned.result.files:
            if not f.path.endswith(".py"):
                continue
            key = f.reason or "parsed"
            outcomes[key] = outcomes.get(key, 0) + 1
            if f.status == "unparsed" and f.reason not in ("syntax error", "python 2", "encoding"):
                failed.append(f"{scanned.result.name}/{f.path}: {f.reason}: {f.detail}")
    assert not failed, "\n".join(failed)
    with run_folder.locked("grammar-sweep.json") as tally_file:  # the slices of every worker
        tally = json.loads(tally_file.read_text()) if tally_file.exists() else {}
        tally[str(part)] = {"findings": findings, **outcomes}
        tally_file.write_text(json.dumps(tally))
    if len(tally) < SLICES:
        return
    sums: dict[str, int] = {}
    for counts in tally.values():
        for key, n in counts.items():
            sums[key] = sums.get(key, 0) + n
    findings = sums.pop("findings")
    # The sweep really ran the resolver: nearly every file parsed (the rest are the test suite's
    # deliberately broken files and lib2to3's Python 2 data), and the common names matched.
    parsed = sums.get("parsed", 0)
    assert parsed >= 1700 and parsed >= 0.98 * sum(sums.values()), sums
    assert findings >= 4_000, findings  # 4,898 on CPython 3.11.7 (measured)


def _scan_text(code: str) -> list[str]:
    """Scan `code` as the one file of a project, whole; the failures it met."""
    with tempfile.TemporaryDirectory() as folder:
        (Path(folder) / "program.py").write_text(code, encoding="utf-8")
        (project,) = discover([folder], single=True, library="os")
        result = scan_project(project, LIBRARY.query, prefilter=False, narrowing=False)
    return [f"{f.path}: {f.detail}" for f in result.files if f.reason is Reason.ANALYSIS_ERROR]


# Imports first, so that generated names meet library values (a generated `from __future__`
# import then comes too late and the file is a syntax error: counted, not a failure).
PRELUDE = "import os\nfrom os import path, read, environ\nimport os.path as p\n"


@settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck))
@given(code=st.deferred(hypothesmith.from_grammar))  # its parser is built when the test runs, not on import
def test_property_programs_from_the_grammar_raise_nothing(code: str) -> None:
    assert _scan_text(PRELUDE + code) == []


# Fewer programs than from the grammar: hypothesmith's node generator, not the resolver, is the
# cost. 150 programs took 147 s of CPU, most of it in drawing them, and 478 draws were thrown
# away past its depth limit (--hypothesis-show-statistics, measured 2026-12-04); 25 took 40 s
# to 131 s in three runs. 10, as tests/fuzz/test_programs.py draws from the same generator; each
# run draws new programs (no fixed seed), so the runs add up.
@settings(max_examples=10, deadline=None, suppress_health_check=list(HealthCheck))
@given(code=hypothesmith.from_node())
def test_property_programs_from_libcst_nodes_raise_nothing(code: str) -> None:
    assert _scan_text(PRELUDE + code) == []


@settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck))
@given(
    statements=st.lists(
        st.sampled_from([
            "match x:\n    case os.DirEntry(path=q, name=n):\n        q.join(n)\n",
            "match x:\n    case [a, *rest] if a.read():\n        rest.append(a)\n",
            "match x:\n    case {'k': os.path as v, **kw}:\n        v.join(kw.get('a'))\n",
            "match x:\n    case p.join(a, b) | p.get(a, b):\n        a.match(b)\n",
            "entries = os.scandir('.')\nfor e in entries:\n    e.path.join('a')\n",
            "with os.popen('ls') as f:\n    f.read(3)\n",
            "try:\n    pass\nexcept* (OSError, os.error) as group:\n    group.match(OSError)\n",
            "x = 'a' 'b' f'{os.path.join(1)}' 'c'\n",
            "async def f():\n    async with os.popen('x') as g:\n        await g.read()\n",
            "type_ = lambda *a, **k: os.get(*a, **k)\nprint(type_(1))\n",
        ]),
        min_size=1,
        max_size=6,
    )
)
def test_property_mixed_constructs_raise_nothing(statements: list[str]) -> None:
    """Newer constructs (match, except*, f-strings) together with library values."""
    assert _scan_text(PRELUDE + "".join(statements)) == []
