"""Statement-level narrowing changes no finding: examples, a property over generated programs."""

from __future__ import annotations

import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.changes import load_change_list
from impactscope.corpus.sources import CodeCell, Source
from impactscope.demo.run import demo_changes_path
from impactscope.resolve.project import ProjectResolver
from impactscope.resolve.query import Query
from impactscope.scan.slicing import narrow

QUERY = Query(load_change_list(demo_changes_path("bench-typical.toml")))  # pivot, merge_tables
HELPERS = "from heronframe import merge_tables as relay\nimport heronframe as hf\n"


def _module(code: str) -> Source:
    return Source("main.py", "module", (CodeCell(None, code),))


def _findings(main: Source) -> tuple[list, bool]:
    sources = {"main.py": main, "helpers.py": Source("helpers.py", "module", (CodeCell(None, HELPERS),))}
    resolver = ProjectResolver("p", QUERY, sources)
    resolver.analyse("main.py")
    resolver.finish()
    fa = resolver.files["main.py"]
    return fa.findings, bool(fa.result and fa.result.uses_library)


def _same(main: Source) -> Source:
    narrowed = narrow(main, QUERY.names, frozenset({"helpers"}))
    assert _findings(narrowed) == _findings(main)
    return narrowed


def test_unrelated_statements_become_blank_lines_in_place() -> None:
    code = (
        "import heronframe as hf\n"
        "import os\n"
        "\n"
        "def unrelated(path):\n"
        "    return os.path.join(path, 'x')\n"
        "\n"
        "t = hf.read_table('a.csv')\n"
        "t.describe()\n"
        "wide = t.pivot('a', 'b', 'c', 0)\n"
    )
    narrowed = _same(_module(code)).cells[0]
    assert narrowed.code.splitlines() == [
        "import heronframe as hf", "import os", "", "", "", "", "t = hf.read_table('a.csv')", "",
        "wide = t.pivot('a', 'b', 'c', 0)",
    ]
    assert narrowed.statement_lines == (1, 2, 7, 9)
    findings, _ = _findings(narrow(_module(code), QUERY.names, frozenset()))
    assert [(f.line, f.column) for f in findings] == [(9, 9)]  # at the member name


CASES = {
    "alias used later": "import heronframe as hf\nt = hf.read_table('x')\np = t.pivot\nq = p\nq(1, 2, fill=0)\n",
    "global bound by a call": (
        "import heronframe as hf\nT = None\ndef init():\n    global T\n    T = hf.read_table('y')\n"
        "init()\nT.pivot(1, 2, fill=0)\n"
    ),
    "attribute stored by a call": (
        "import heronframe as hf\nclass Box:\n    pass\ncfg = Box()\ndef setup():\n    cfg.v = hf.read_table('z')\n"
        "setup()\ncfg.v.pivot(1, 2, fill=0)\n"
    ),
    "rebinding in between": "import heronframe as hf\nt = hf.read_table('x')\nt = [1]\nt.pivot(1, 2, fill=0)\n",
    "relay from a project module": "from helpers import relay\nimport helpers\nrelay(1)\nhelpers.relay(2)\nx = relay\nx(3)\n",
    "star import from a relay": "from helpers import *\nrelay(1)\n",
    "dynamic import": "import importlib\nhf = importlib.import_module('heronframe')\nt = hf.Table()\nt.pivot(1, 2, fill=0)\n",
    "self attributes": (
        "import heronframe as hf\nclass C:\n    def __init__(self):\n        self.v = hf.read_table('z')\n"
        "    def run(self):\n        return self.v.pivot(1, 2, fill=0)\nc = C()\nc.run()\n"
    ),
    "semicolons and decorators": (
        "import heronframe as hf\nx = 1; t = hf.read_table('a')\n@staticmethod\n"
        "def f(u=t):\n    return u.pivot(1, 2, fill=0)\nf()\n"
    ),
    "string annotation": "import heronframe as hf\ndef f(t: 'hf.Table'):\n    return t.pivot(1, 2, fill=0)\n",
    "call-time argument": "import heronframe as hf\ndef f(x):\n    return x.pivot(1, 2, fill=0)\nt = hf.read_table('a')\nf(t)\n",
    "unknown receiver in a user of the library": "import heronframe\ndef g(x):\n    return x.pivot(1, 2, fill=0)\n",
    "library used only through a dropped statement": "import heronframe as hf\nprint(hf.__version__)\nthing.pivot(1, 2, fill=0)\n",
}


# Cases whose whole file holds no finding: narrowing must keep the statement that rules it out.
NO_FINDING = {"rebinding in between"}


@pytest.mark.parametrize("name", CASES)
def test_narrowing_keeps_findings(name: str) -> None:
    code = CASES[name]
    assert bool(_findings(_module(code))[0]) is (name not in NO_FINDING)
    _same(_module(code))


def test_notebook_cells_are_narrowed_together() -> None:
    cells = (
        CodeCell(0, "import heronframe as hf\nimport math\n"),
        CodeCell(2, "t = hf.read_table('a')\nmath.sqrt(2)\n"),
        CodeCell(3, "print('nothing')\n"),
        CodeCell(5, "t.pivot(1, 2, fill=0)\n"),
    )
    notebook = Source("n.ipynb", "notebook", cells)
    narrowed = narrow(notebook, QUERY.names, frozenset())
    assert [c.code for c in narrowed.cells] == [
        "import heronframe as hf\nimport math\n", "t = hf.read_table('a')\n\n", "\n", "t.pivot(1, 2, fill=0)\n"
    ]
    sources = {"n.ipynb": notebook}
    whole = ProjectResolver("p", QUERY, sources)
    whole.analyse("n.ipynb")
    cut = ProjectResolver("p", QUERY, {"n.ipynb": narrowed})
    cut.analyse("n.ipynb")
    assert whole.files["n.ipynb"].findings == cut.files["n.ipynb"].findings != []


@pytest.mark.parametrize("code", ["print 'python 2'\nt.pivot(1, 2, 3)\n", "x = (\n"])
def test_files_ast_cannot_read_stay_whole(code: str) -> None:
    source = _module(code)
    assert narrow(source, QUERY.names, frozenset()) is source


# Statements over a few shared names, so that aliases, rebinding, calls and stores interact.
POOL = [
    "import heronframe as hf",
    "from heronframe import merge_tables as mt",
    "from helpers import relay",
    "import helpers",
    "t = hf.read_table('x')",
    "u = t",
    "t = [1, 2]",
    "p = t.pivot",
    "p(1, 2, 3)",
    "p(1, 2, 3, 4)",
    "p(fill=1)",
    "t.pivot('a', 'b', 'c', 0)",
    "mt([t, u])",
    "relay(t)",
    "helpers.relay(1)",
    "r = relay",
    "r(2)",
    "def f(x):\n    return x.pivot(1, 2, 3)",
    "def g():\n    global t\n    t = hf.read_table('y')",
    "g()",
    "f(t)",
    "f(u)",
    "class C:\n    def __init__(self):\n        self.v = hf.read_table('z')\n    def run(self):\n        return self.v.pivot(1, 2, 3)",
    "c = C()",
    "c.run()",
    "def setup():\n    c.v = t",
    "setup()",
    "c.v.pivot(1, 2, 3)",
    "w = u.copy()",
    "w.pivot(fill=0)",
    "del u",
    "if t:\n    u = hf.Table()",
    "for q in [t]:\n    q.pivot(1, 2, 3)",
    "print(len([1]))",
    "x = 1; y = t",
    "y.pivot(1, 2, 3)",
    "h = lambda z: z.pivot(1, 2, 3)",
    "h(t)",
    "'''t.pivot(1, 2, 3)'''",
    "# t.pivot(1, 2, 3)",
    "",
]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(POOL), min_size=1, max_size=14))
def test_property_narrowed_programs_find_what_whole_ones_find(statements: list[str]) -> None:
    _same(_module("\n".join(statements) + "\n"))


@settings(max_examples=100, deadline=None)
@given(st.lists(st.lists(st.sampled_from(POOL), min_size=1, max_size=4), min_size=1, max_size=5))
def test_property_narrowed_notebooks_find_what_whole_ones_find(cells: list[list[str]]) -> None:
    notebook = Source("n.ipynb", "notebook", tuple(CodeCell(i, "\n".join(c) + "\n") for i, c in enumerate(cells)))
    whole = ProjectResolver("p", QUERY, {"n.ipynb": notebook})
    whole.analyse("n.ipynb")
    cut = ProjectResolver("p", QUERY, {"n.ipynb": narrow(notebook, QUERY.names, frozenset())})
    cut.analyse("n.ipynb")
    assert whole.files["n.ipynb"].findings == cut.files["n.ipynb"].findings


# A module other files import: what it binds for them stays, with what that depends on.
HELPER_POOL = [
    "import heronframe as hf",
    "from heronframe import merge_tables",
    "glue = merge_tables",
    "loader = hf.read_table",
    "def load(p):\n    return hf.read_table(p)",
    "def reshape(t):\n    return t.pivot(1, 2, fill=0)",
    "unused = [1, 2, 3]",
    "def local_only():\n    return 42",
    "glue = None",
    "class Box:\n    pass",
    "cfg = Box()",
    "def setup():\n    cfg.table = hf.read_table('z')",
    "setup()",
    "shared = loader('a')",
    "__all__ = ['glue', 'load']",
    "def init():\n    global late\n    late = hf.read_table('q')",
    "init()",
]
IMPORTER_POOL = [
    "from helpers import glue",
    "from helpers import load, reshape",
    "from helpers import cfg, shared",
    "import helpers",
    "glue([1])",
    "load('x').pivot(1, 2, fill=0)",
    "reshape(load('y'))",
    "cfg.table.pivot(1, 2, fill=0)",
    "shared.pivot(1, 2, 3, 4)",
    "helpers.glue([2])",
    "helpers.late.pivot(fill=1)",
    "helpers.loader('b').pivot(1, 2, fill=0)",
]


def _project_findings(helpers: Source, main: Source) -> list:
    resolver = ProjectResolver("p", QUERY, {"helpers.py": helpers, "main.py": main})
    for path in ("helpers.py", "main.py"):
        resolver.analyse(path)
    resolver.finish()
    return sorted(f for fa in resolver.files.values() for f in fa.findings)


def _narrow_both(helpers: Source, main: Source) -> tuple[Source, Source]:
    text = main.cells[0].code
    relays = frozenset({"helpers", "main"})
    spelled = lambda name: re.search(rf"(?<!\w){re.escape(name)}(?!\w)", text) is not None  # noqa: E731
    return narrow(helpers, QUERY.names, relays, spelled), narrow(main, QUERY.names, relays)


def test_an_imported_module_keeps_what_importers_name() -> None:
    helpers = Source("helpers.py", "module", (CodeCell(None, "\n".join(HELPER_POOL) + "\n"),))
    main = _module("from helpers import glue, cfg\nimport helpers\nglue([1])\ncfg.table.pivot(1, 2, fill=0)\nhelpers.late.pivot(fill=1)\n")
    cut_helpers, cut_main = _narrow_both(helpers, main)
    kept = [line for line in cut_helpers.cells[0].code.splitlines() if line]
    assert "unused = [1, 2, 3]" not in kept and "    return 42" not in kept
    assert "glue = None" in kept and "setup()" in kept and "init()" in kept
    assert _project_findings(cut_helpers, cut_main) == _project_findings(helpers, main) != []


def _most_of(pool: list[str]) -> st.SearchStrategy[list[str]]:
    """Most of the pool, in any order: dependencies between statements come up often."""
    return st.tuples(st.permutations(pool), st.lists(st.booleans(), min_size=len(pool), max_size=len(pool))).map(
        lambda drawn: [s for s, dropped in zip(*drawn) if not dropped or s.startswith("import")]
    )


@settings(max_examples=200, deadline=None)
@given(_most_of(HELPER_POOL), _most_of(IMPORTER_POOL))
def test_property_imported_modules_narrowed_by_what_importers_spell(helper: list[str], importer: list[str]) -> None:
    helpers = Source("helpers.py", "module", (CodeCell(None, "\n".join(helper) + "\n"),))
    main = _module("\n".join(importer) + "\n")
    assert _project_findings(*_narrow_both(helpers, main)) == _project_findings(helpers, main)


@settings(max_examples=150, deadline=None)
@given(_most_of(POOL))
def test_property_large_programs_in_any_order(statements: list[str]) -> None:
    _same(_module("\n".join(statements) + "\n"))


@settings(max_examples=150, deadline=None)
@given(_most_of(POOL), st.sampled_from(["\n", "\r\n", "\r"]), st.booleans())
def test_property_lines_stay_in_place_whatever_the_line_ends(statements: list[str], end: str, trailing: bool) -> None:
    # Python counts lines at \n, \r\n and \r (the Language Reference, 2.1.2 "Physical lines").
    code = end.join("\n".join(statements).split("\n")) + (end if trailing else "")
    narrowed = narrow(_module(code), QUERY.names, frozenset()).cells[0].code
    before, after = re.split(r"\r\n|\r|\n", code), re.split(r"\r\n|\r|\n", narrowed)
    assert len(before) == len(after)
    assert all(b == a or a == "" for b, a in zip(before, after))
    assert re.findall(r"\r\n|\r|\n", code) == re.findall(r"\r\n|\r|\n", narrowed)
    _same(_module(code))
