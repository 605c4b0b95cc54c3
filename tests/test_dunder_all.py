"""impactscope.dunder_all through both of its readers: the library surface's (`ast`,
surface/syntax.py) and the resolver's (libcst, resolve/statements.py).

Every case is a module's text and what `from module import *` then binds, by the Python Language
Reference, §7.11 "The import statement": "The public names defined by a module are determined by
checking the module's namespace for a variable named __all__; if defined, it must be a sequence of
strings which are names defined or imported by that module. [...] If __all__ is not defined, the
set of public names includes all names found in the module's namespace which do not begin with an
underscore character". So the value `__all__` holds once the module has run is what counts.
"""

from __future__ import annotations

import ast
from pathlib import Path

import libcst as cst
import pytest

from impactscope.changes import parse_change_list
from impactscope.corpus.sources import read_python
from impactscope.dunder_all import ABSENT, DunderAll, apply, names
from impactscope.findings import Confidence
from impactscope.resolve.project import ProjectResolver
from impactscope.resolve.query import Query
from impactscope.resolve.statements import all_change as libcst_change
from impactscope.surface import build_surface
from impactscope.surface.syntax import all_change as ast_change

PUBLIC = "public names"  # no `__all__`: §7.11's fallback
UNKNOWN = None  # bound to something the text cannot tell

# The `__all__` of the module `sub` that some cases add to their own.
SUB = ("s1", "s2")

CASES = [
    # §7.11: "a sequence of strings"; lists and tuples are sequences (library reference,
    # "Sequence Types").
    ("list display", '__all__ = ["a", "b"]', ("a", "b")),
    ("tuple display", '__all__ = ("a", "b")', ("a", "b")),
    ("several targets", '__all__ = names = ["a"]', ("a",)),
    # Language Reference §2.4.2: adjacent string literals are one literal.
    ("implicitly concatenated strings", '__all__ = ["a" "b"]', ("ab",)),
    # Language Reference §7.2.2: an annotated assignment with a right-hand side assigns like a
    # plain one; without one, nothing is bound.
    ("annotated assignment", '__all__: list[str] = ["a"]', ("a",)),
    ("annotation only", "__all__: list[str]", PUBLIC),
    # §7.2.1, augmented assignment, and the data model's `__iadd__`: a list extends itself.
    ("augmented assignment", '__all__ = ["a"]\n__all__ += ["b"]', ("a", "b")),
    ("plain assignment of a sum", '__all__ = ["a"]\n__all__ = __all__ + ["b"]', ("a", "b")),
    # The list methods, library reference, "Mutable Sequence Types": s.append(x), s.extend(t),
    # s.insert(i, x) ("inserts x into s at the index given by i"), s.remove(x) ("remove the
    # first item from s where s[i] is equal to x").
    ("append", '__all__ = ["a"]\n__all__.append("b")', ("a", "b")),
    ("extend", '__all__ = ["a"]\n__all__.extend(("b", "c"))', ("a", "b", "c")),
    ("insert at an index", '__all__ = ["a", "b"]\n__all__.insert(1, "c")', ("a", "c", "b")),
    ("insert past the end", '__all__ = ["a"]\n__all__.insert(9, "c")', ("a", "c")),
    ("remove takes the first", '__all__ = ["a", "b", "a"]\n__all__.remove("a")', ("b", "a")),
    # Our rule, not the Reference: an index the text does not give leaves the order open, and
    # `import *` binds every listed name in any order, so the name goes last.
    ("insert at an unknown index", '__all__ = ["a"]\n__all__.insert(i, "c")', ("a", "c")),
    # Library reference, built-in functions: list(), tuple() keep the order, sorted() sorts.
    ("list() of a display", '__all__ = list(("b", "a"))', ("b", "a")),
    ("sorted()", '__all__ = sorted(["b", "a"])', ("a", "b")),
    # Another module's list, known once modules are linked (here: `sub`'s is SUB).
    ("another module's __all__ added", '__all__ = ["a"] + sub.__all__', ("a", *SUB)),
    ("another module's __all__ augmented", '__all__ = ["a"]\n__all__ += sub.__all__', ("a", *SUB)),
    ("another module's __all__ extended", '__all__ = ["a"]\n__all__.extend(sub.__all__)', ("a", *SUB)),
    # Language Reference §7.5: "Deletion of a name removes the binding of that name"; then
    # §7.11's fallback applies.
    ("deleted", '__all__ = ["a"]\ndel __all__', PUBLIC),
    ("deleted with another name", '__all__ = ["a"]\ndel x, __all__', PUBLIC),
    ("deleted, then rebound", '__all__ = ["a"]\ndel __all__\n__all__ = ["b"]', ("b",)),
    # Unknowable. A set is no sequence (CPython's `import *` indexes `__all__`: a set raises
    # TypeError, and so does a bytes item: both tried on CPython 3.11).
    ("set display", '__all__ = {"a", "b"}', UNKNOWN),
    ("bytes item", '__all__ = [b"a"]', UNKNOWN),
    ("f-string item", '__all__ = [f"{x}"]', UNKNOWN),
    ("starred item", '__all__ = [*sub.__all__, "a"]', UNKNOWN),
    ("comprehension", "__all__ = [n for n in dir() if not n.startswith('_')]", UNKNOWN),
    ("a name", "__all__ = NAMES", UNKNOWN),
    ("another operator", '__all__ = ["a"]\n__all__ *= 2', UNKNOWN),
    ("another method", '__all__ = ["b", "a"]\n__all__.sort()', UNKNOWN),
    ("a method with a keyword", '__all__ = ["a"]\n__all__.sort(key=len)', UNKNOWN),
    ("append of a name", '__all__ = ["a"]\n__all__.append(name)', UNKNOWN),
    # Changing a list that is not known (or not there: NameError) leaves it unknown; a plain
    # assignment afterwards makes it known again.
    ("augmented after unknowable", '__all__ = compute()\n__all__ += ["b"]', UNKNOWN),
    ("sum after unknowable", '__all__ = compute()\n__all__ = __all__ + ["b"]', UNKNOWN),
    ("append with no __all__", '__all__.append("a")', UNKNOWN),
    ("rebound after unknowable", '__all__ = compute()\n__all__ = ["a"]', ("a",)),
    ("no __all__", "a = 1", PUBLIC),
]


def _fold(changes) -> DunderAll:
    state = ABSENT
    for change in changes:
        if change is not None:
            state = apply(state, change)
    return state


def via_ast(code: str) -> DunderAll:
    return _fold(ast_change(st) for st in ast.parse(code).body)


def via_libcst(code: str) -> DunderAll:
    lines = cst.parse_module(code).body
    return _fold(libcst_change(small) for line in lines for small in line.body)  # type: ignore[union-attr]


def bound(state: DunderAll) -> tuple[str, ...] | str | None:
    if not state.defined:
        return PUBLIC
    if state.parts is None:
        return UNKNOWN
    return names(state.parts, lambda module: SUB if module == "sub" else None)


@pytest.mark.parametrize("code, expected", [(code, want) for _, code, want in CASES],
                         ids=[name for name, _, _ in CASES])
def test_both_readers_give_the_names_the_reference_gives(code: str, expected: object) -> None:
    by_ast, by_libcst = via_ast(code), via_libcst(code)
    assert by_ast == by_libcst  # one description, one set of rules
    assert bound(by_ast) == expected


def test_another_modules_list_unknown_leaves_the_names_unknown() -> None:
    state = via_ast('__all__ = ["a"] + elsewhere.__all__')
    assert bound(state) is UNKNOWN
    assert names(state.parts or (), lambda module: ("z",)) == ("a", "z")


# -- through the readers themselves ----------------------------------------------------------

HELPERS = {
    "augmented": 'from heronframe import stack, read_table\n__all__ = ["read_table"]\n__all__ += ["stack"]\n',
    "appended": 'from heronframe import stack, read_table\n__all__ = ("read_table",)\n__all__.append("stack")\n',
    "annotated": 'from heronframe import stack\n__all__: list[str] = list(["stack"])\n',
    "removed": ('from heronframe import stack, read_table\n__all__ = ["read_table", "stack"]\n'
                '__all__.remove("stack")\n'),
    "unknowable": 'from heronframe import stack\n__all__ = compute()\n__all__ += ["stack"]\n',
    "in a branch": 'import sys\nfrom heronframe import stack\n__all__ = []\nif sys.path:\n    __all__ += ["stack"]\n',
}

CHANGES = b'[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n'


def _resolver_names(code: str) -> tuple[str, ...] | None:
    query = Query(parse_change_list(CHANGES, Path("changes.toml")))
    resolver = ProjectResolver("demo", query, {"helpers.py": read_python(code.encode(), "helpers.py")})
    result = resolver.analyse("helpers.py").result
    assert result is not None
    return result.all_names


@pytest.mark.parametrize("kind", sorted(HELPERS))
def test_the_surface_and_the_resolver_read_the_same_list(tmp_path: Path, kind: str) -> None:
    code = HELPERS[kind]
    (tmp_path / "lib").mkdir()
    (tmp_path / "lib" / "__init__.py").write_text("")
    (tmp_path / "lib" / "helpers.py").write_text(code)
    surface = build_surface(tmp_path / "lib")
    assert surface.star_names("lib.helpers") == _resolver_names(code)


def test_a_star_import_from_a_project_module_binds_what_its_list_gained() -> None:
    # §7.11: `__all__` as the module leaves it decides; the resolver once read only the first
    # `__all__ = [...]` and missed the `+=`, `append` and annotated forms.
    query = Query(parse_change_list(CHANGES, Path("changes.toml")))
    main = "from helpers import *\nstack()\n"
    for kind in ("augmented", "appended", "annotated"):
        sources = {"helpers.py": read_python(HELPERS[kind].encode(), "helpers.py"),
                   "main.py": read_python(main.encode(), "main.py")}
        found = ProjectResolver("demo", query, sources).analyse("main.py").findings
        assert [(f.line, f.confidence) for f in found] == [(2, Confidence.RESOLVED)], kind
    sources = {"helpers.py": read_python(HELPERS["removed"].encode(), "helpers.py"),
               "main.py": read_python(main.encode(), "main.py")}
    found = ProjectResolver("demo", query, sources).analyse("main.py").findings
    assert all(f.confidence < Confidence.RESOLVED for f in found)


def test_surface_star_names_follow_the_reference(tmp_path: Path) -> None:
    root = tmp_path / "lib"
    root.mkdir()
    files = {
        "__init__.py": "",
        "grown.py": "__all__ = compute()\n__all__ += ['b']\nb = 1\n",  # was read as ('b',)
        "setlist.py": "__all__ = {'a'}\na = 1\n",  # was read as ('a',)
        "annotated.py": "__all__: list[str]\na = 1\n_b = 2\n",  # was unknowable
        "deleted.py": "__all__ = ['_b']\ndel __all__\na = 1\n_b = 2\n",  # was ('_b',)
        "ordered.py": "__all__ = sorted(['b', 'a'])\na = b = 1\n",  # was ('b', 'a')
        "inserted.py": "__all__ = ['a']\n__all__.insert(0, 'b')\na = b = 1\n",  # was unknowable
    }
    for name, text in files.items():
        (root / name).write_text(text)
    s = build_surface(root)
    assert s.star_names("lib.grown") is None
    assert s.star_names("lib.setlist") is None
    assert s.star_names("lib.annotated") == ("a",)
    assert s.star_names("lib.deleted") == ("a",)
    assert s.star_names("lib.ordered") == ("a", "b")
    assert s.star_names("lib.inserted") == ("b", "a")
