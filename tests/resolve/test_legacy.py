import io
import tokenize

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.resolve.legacy import LegacyError, LegacyHit, legacy_hits

NAMES = {"stack_rows", "Table", "read_table", "scatter_grid", "plotting"}


def found(text, names=NAMES, library="heronframe"):
    return [(h.line, h.column, h.name, h.dotted) for h in legacy_hits(text, library, names)]


# Python 2 syntax below follows the Python 2.7 Language Reference (print statement, `except E, e`,
# backtick conversion, `ur''` string prefix, `0777` octal, `exec` statement).
PY2_MODULE = '''\
# -*- coding: utf-8 -*-
import heronframe as hf
from heronframe.plotting import scatter_grid

def report(path):
    t = hf.read_table(path)
    print "rows:", `t.stack_rows(other)`
    try:
        t.stack_rows(other, fill=0777)
    except ValueError, e:
        print >>sys.stderr, ur"stack_rows failed: %s" % e
    exec "t.stack_rows(x)"
    scatter_grid(t)
    return t
'''


def test_python2_module():
    # Python 2 code that Python 3's own tokenize rejects (backticks, ur'' prefix)...
    with pytest.raises(SyntaxError):
        compile(PY2_MODULE, "<py2>", "exec")
    # Python 3.11's tokenize (observed): backticks come out as error tokens and ur'a' as the
    # name `ur` followed by a string.
    tokens = list(tokenize.generate_tokens(io.StringIO("x = `1`\ny = ur'a'\n").readline))
    assert any(t.type == tokenize.ERRORTOKEN and t.string == "`" for t in tokens)
    assert any(t.type == tokenize.NAME and t.string == "ur" for t in tokens)
    # ...scans, and names inside strings and comments are not hits.
    assert found(PY2_MODULE) == [
        (3, 16, "plotting", "heronframe.plotting"),
        (3, 32, "scatter_grid", "heronframe.plotting.scatter_grid"),
        (6, 11, "read_table", "hf.read_table"),
        (7, 22, "stack_rows", "t.stack_rows"),
        (9, 10, "stack_rows", "t.stack_rows"),
        (13, 4, "scatter_grid", "scatter_grid"),
    ]


def test_no_import_no_hits():
    text = "import os\nt.stack_rows(x)\nfrom tern import Table\nTable()\n"
    assert legacy_hits(text, "heronframe", NAMES) == ()
    # Mentioning the library in a string or comment is not importing it.
    text = "# import heronframe\ns = 'from heronframe import Table'\nt.stack_rows()\n"
    assert legacy_hits(text, "heronframe", NAMES) == ()
    # A module whose name merely starts like the library is another module.
    assert legacy_hits("import heronframes\nx.stack_rows()\n", "heronframe", NAMES) == ()


def test_import_forms():
    text = (
        "import os, heronframe.io as hio\n"
        "from heronframe import (Table,\n"
        "                        read_table as rt)\n"
        "from heronframe.plotting import *\n"
        "t = rt('x.csv')\n"
        "u = Table(t)\n"
        "scatter_grid(u)\n"
    )
    assert found(text) == [
        (2, 24, "Table", "heronframe.Table"),
        (3, 24, "read_table", "heronframe.read_table"),
        (4, 16, "plotting", "heronframe.plotting"),
        (5, 4, "read_table", "rt"),
        (6, 4, "Table", "Table"),
        (7, 0, "scatter_grid", "scatter_grid"),
    ]


def test_strings_of_every_python2_kind_hide_names():
    text = (
        "import heronframe\n"
        "a = 'x.stack_rows'\n"
        'b = "x.stack_rows"\n'
        "c = u'x.stack_rows' + r'x.stack_rows\\'' + b'x.stack_rows' + ur'x.stack_rows' + UR\"x.stack_rows\"\n"
        'd = """\n'
        "x.stack_rows()\n"
        '"""\n'
        "e = '''x.stack_rows\n"
        "'''; f = x.stack_rows\n"
        "g = 'it\\'s x.stack_rows'  # t.stack_rows in a comment\n"
        "h = br'\\\\' ; i = x.stack_rows\n"
    )
    assert found(text) == [(9, 11, "stack_rows", "x.stack_rows"), (11, 19, "stack_rows", "x.stack_rows")]


def test_attribute_chains_and_non_name_receivers():
    text = (
        "import heronframe as hf\n"
        "hf.Table.stack_rows(a)\n"
        "hf.read_table(p).stack_rows(b)\n"
        "rows[0] .stack_rows\n"
        "obj.\\\n"
        "    stack_rows\n"
        "(a\n"
        "  .stack_rows)\n"
    )
    assert found(text) == [
        (2, 3, "Table", "hf.Table"),
        (2, 9, "stack_rows", "hf.Table.stack_rows"),
        (3, 3, "read_table", "hf.read_table"),
        (3, 17, "stack_rows", ".stack_rows"),
        (4, 9, "stack_rows", ".stack_rows"),
        (6, 4, "stack_rows", "obj.stack_rows"),
        (8, 3, "stack_rows", "a.stack_rows"),
    ]


def test_definitions_assignments_and_keywords_are_not_bare_hits():
    text = (
        "from heronframe import Table\n"
        "class Table(object): pass\n"
        "def Table(): pass\n"
        "Table = None\n"
        "f(Table=1)\n"
        "if Table == 1: Table()\n"
    )
    assert [(line, column) for line, column, *_ in found(text)] == [(1, 23), (6, 3), (6, 15)]
    # Unimported bare names are not hits, however they are spelled.
    assert found("import heronframe\nstack_rows(x)\n") == []


def test_other_imports_and_relative_imports_do_not_hit():
    text = (
        "import heronframe\n"
        "from os.plotting import Table\n"
        "from . import read_table\n"
        "from .heronframe import stack_rows\n"
        "import tern.plotting\n"
        "raise E from err\n"
        "Table()\n"
        "read_table()\n"
    )
    assert found(text) == []


def test_statement_forms_and_line_endings():
    text = "if x: from heronframe import Table\r\nelse: pass; import heronframe\r\nTable()\r\n"
    assert found(text) == [(1, 29, "Table", "heronframe.Table"), (3, 0, "Table", "Table")]
    assert found("\ufeffimport heronframe\nx.stack_rows\n") == [(2, 2, "stack_rows", "x.stack_rows")]


def test_numbers_and_ellipsis_are_not_attributes():
    text = "import heronframe\nx = 1.5e-3 + .5 + 0xFFL + 10L\ny = a[...]\nz = 1 .real\n"
    assert found(text, names={"real", "e", "FFL", "L"}) == [(4, 7, "real", ".real")]


def test_subpackage_library():
    text = "from heron.frame import Table\nimport heron.other\nTable()\n"
    assert found(text, library="heron.frame") == [
        (1, 24, "Table", "heron.frame.Table"),
        (3, 0, "Table", "Table"),
    ]


def test_bad_arguments():
    with pytest.raises(LegacyError, match="plain identifiers"):
        legacy_hits("import heronframe", "heronframe", {"Table.stack_rows"})
    with pytest.raises(LegacyError, match="dotted import name"):
        legacy_hits("import heronframe", "heron-frame", {"x"})
    assert issubclass(LegacyError, ValueError)


def test_hits_are_sorted_values():
    hits = legacy_hits("import heronframe\nb.Table\na.Table\n", "heronframe", {"Table"})
    assert hits == (LegacyHit(2, 2, "Table", "b.Table"), LegacyHit(3, 2, "Table", "a.Table"))


@settings(max_examples=200, deadline=None)
@given(st.text(alphabet="abT_.'\"#\\\n\r `()[]{}=:;ur0123 \t", max_size=200))
def test_scanner_never_raises_and_positions_are_in_range(noise):
    text = "import heronframe\n" + noise
    lines = text.splitlines() or [""]
    for hit in legacy_hits(text, "heronframe", {"a", "b", "T", "ab"}):
        assert 1 <= hit.line <= len(text.splitlines()) + 1
        assert hit.column >= 0
        assert hit.dotted.endswith(hit.name) or hit.name in {"a", "b", "T", "ab"}
        assert lines[hit.line - 1][hit.column:].startswith(hit.dotted.rsplit(".", 1)[-1])


def test_a_chain_is_read_back_a_few_links_only():
    """Every `.stack` of a 100,000-link chain is a hit; each is read back at most 8 links (reading
    each whole was quadratic: minutes), past which the chain counts as rooted in an expression."""
    text = "import heronframe\nheronframe" + ".stack" * 100_000 + "()\n"
    hits = legacy_hits(text, "heronframe", {"stack"})
    assert len(hits) == 100_000
    assert hits[0] == LegacyHit(2, 11, "stack", "heronframe.stack")
    assert hits[-1].dotted == ".stack" * 8
    short = legacy_hits("import heronframe\nheronframe.a.b.c.d.e.f.stack()\n", "heronframe", {"stack"})
    assert short == (LegacyHit(2, 23, "stack", "heronframe.a.b.c.d.e.f.stack"),)
