"""draft_changes between the two heronframe fixtures, and the draft's format."""

from __future__ import annotations

import re
import tomllib

import pytest

from impactscope.surface import build_surface, compare_surfaces, draft_changes
from impactscope.surface.compare import Announcement, default_value

from .helpers import NEW, OLD, write_tree

# The keys docs/change-list.md allows; anything else is an error for the loader.
LIBRARY_KEYS = {"name", "release", "requires_python"}
# docs/change-list.md, `certainty`: a change may carry certainty = "high"|"medium"|"low".
CHANGE_KEYS = {"id", "member", "kind", "replacement", "parameter", "new_parameter", "position", "deprecated_in", "note",
               "certainty"}
KINDS = {"removed", "renamed", "moved", "parameter-removed", "parameter-renamed", "default-changed", "behaviour-changed"}


@pytest.fixture(scope="module")
def draft() -> str:
    return draft_changes(build_surface(OLD), build_surface(NEW), release="3.0")


@pytest.fixture(scope="module")
def changes(draft) -> dict[tuple[str, str], dict]:
    data = tomllib.loads(draft)  # tomllib: the standard library's TOML 1.0 reader
    return {(c["member"], c["kind"]): c for c in data["change"]}


def test_draft_is_loadable_toml_with_only_design_keys(draft):
    data = tomllib.loads(draft)
    assert data["library"] == {"name": "heronframe", "release": "3.0"}
    assert set(data) <= {"library", "types", "change"}
    for change in data["change"]:
        assert set(change) <= CHANGE_KEYS, change
        assert change["kind"] in KINDS and change["note"]
    ids = [c["id"] for c in data["change"]]
    assert ids == [f"C-{i}" for i in range(1, len(ids) + 1)]


def test_every_entry_has_a_certainty_comment_and_key(draft):
    blocks = draft.split("[[change]]")[1:]
    comments = re.findall(r"^# certainty: (high|medium|low) \u2014 .+$", draft, flags=re.M)
    assert len(comments) == len(blocks) > 0
    keys = [c["certainty"] for c in tomllib.loads(draft)["change"]]
    assert keys == comments  # the key says what the comment says


def test_sorted_by_certainty_then_member(draft):
    entries = tomllib.loads(draft)["change"]
    rank = {"high": 0, "medium": 1, "low": 2}
    order = [(rank[c["certainty"]], c["member"]) for c in entries]
    assert order == sorted(order)
    assert draft.startswith("# Draft change list for heronframe") and f"{len(entries)} entries" in draft.splitlines()[0]


def test_renamed_method(changes):
    c = changes[("heronframe.Table.stack_rows", "renamed")]
    assert c["replacement"] == "heronframe.Table.append_rows"


def test_removed_function_uses_the_shortest_public_path(changes):
    assert ("heronframe.stack", "removed") in changes
    assert not any(member == "heronframe.ops.stack" for member, _ in changes)


def test_moved_function(changes):
    c = changes[("heronframe.plotting.scatter_grid", "moved")]
    assert c["replacement"] == "heronframe.viz.scatter_grid"
    assert ("heronframe.plotting", "removed") in changes


def test_parameter_removed_with_position(changes):
    c = changes[("heronframe.Table.sort_by", "parameter-removed")]
    assert (c["parameter"], c["position"]) == ("inplace", 2)


def test_parameter_renamed_guess(changes):
    c = changes[("heronframe.Table.pivot", "parameter-renamed")]
    assert (c["parameter"], c["new_parameter"], c["position"]) == ("fill", "fill_value", 3)


def test_default_changed(changes):
    c = changes[("heronframe.read_table", "default-changed")]
    assert c["parameter"] == "sep" and '","' in c["note"] and "None" in c["note"]


def test_member_became_private_is_removed_without_a_private_replacement(changes):
    # Issue 10: a replacement is always a public name; the private twin is only mentioned.
    c = changes[("heronframe.io.sniff_separator", "removed")]
    assert "replacement" not in c and "_sniff_separator" in c["note"]


def test_nothing_else_and_inherited_paths_are_not_repeated(changes):
    assert set(changes) == {
        ("heronframe.Table.stack_rows", "renamed"), ("heronframe.stack", "removed"),
        ("heronframe.plotting", "removed"), ("heronframe.plotting.scatter_grid", "moved"),
        ("heronframe.Table.sort_by", "parameter-removed"), ("heronframe.Table.pivot", "parameter-renamed"),
        ("heronframe.read_table", "default-changed"), ("heronframe.io.sniff_separator", "removed"),
    }


def test_removal_next_to_a_getattr_that_only_raises_is_certain(draft):
    # heronframe 3.0's __getattr__ raises for every name (PEP 562): it serves none, so it leaves no doubt.
    block = draft[: draft.index('member = "heronframe.stack"')].rsplit("# certainty:", 1)[1]
    assert block.startswith(" high")


def test_removal_next_to_a_getattr_that_serves_names_is_low(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {"__init__.py": "def gone(x): return x\n"})
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": "def __getattr__(name):\n    import importlib\n    return importlib.import_module('lib._' + name)\n",
    })
    entry = tomllib.loads(draft_changes(build_surface(old), build_surface(new)))["change"][0]
    assert (entry["member"], entry["kind"], entry["certainty"]) == ("lib.gone", "removed", "low")
    assert "run time" in entry["note"]


def test_identical_versions_have_no_changes():
    s = build_surface(OLD)
    assert "[[change]]" not in draft_changes(s, s)


def test_dropped_reexport_and_removed_class_members(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": "from .core import Box, Gone\n",
        "core.py": "class Box:\n    def open(self, key, *, force=False): ...\nclass Gone:\n    def a(self): ...\n    def b(self): ...\n",
    })
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": "",
        "core.py": "class Box:\n    def open(self, key, *, hard=False, **kw): ...\n",
    })
    data = tomllib.loads(draft_changes(build_surface(old), build_surface(new)))
    got = {(c["member"], c["kind"]): c for c in data["change"]}
    assert got[("lib.Box", "moved")]["replacement"] == "lib.core.Box"  # no longer re-exported
    assert ("lib.Gone", "removed") in got
    assert not any(m.startswith("lib.Gone.") for m, _ in got)  # a removed class takes its members
    renamed = got[("lib.Box.open", "parameter-renamed")]  # the only keyword-only slot: a low-certainty guess
    assert (renamed["parameter"], renamed["new_parameter"]) == ("force", "hard")


def test_tests_conftest_and_private_names_are_left_out_unless_asked(tmp_path):
    files_old = {
        "__init__.py": "from .core import Box\n",
        "core.py": "class Box:\n    def open(self): ...\n    def _peek(self): ...\ndef _helper(): ...\n",
        "conftest.py": "def fixture_a(): ...\n",
        "testing_utils.py": "def check(): ...\n",
        "test_core.py": "def test_a(): ...\n",
        "benchmarks/__init__.py": "def bench(): ...\n",
    }
    old = write_tree(tmp_path / "a" / "lib", files_old)
    new = write_tree(tmp_path / "b" / "lib", {"__init__.py": "from .core import Box\n", "core.py": "class Box:\n    pass\n"})
    public = {c.member for c in compare_surfaces(build_surface(old), build_surface(new))}
    assert public == {"lib.Box.open", "lib.testing_utils"}
    everything = {c.member for c in compare_surfaces(build_surface(old), build_surface(new), include_private=True)}
    # A private name has no public path: the draft names it where it is defined.
    assert {"lib.conftest", "lib.test_core", "lib.benchmarks", "lib.core._helper", "lib.core.Box._peek"} <= everything


def test_moves_need_evidence_beyond_the_name(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": "",
        "a.py": '''
            def same(x, y):
                """Add."""
                return x + y
            def named_only(x):
                return x
            def signature_only(x, y=1):
                return x * y
            ''',
    })
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": "",
        "b.py": '''
            def same(x, y):
                """Add."""
                return x + y
            def named_only(z):
                return z * 2
            def signature_only(x, y=1):
                return y * x
            ''',
    })
    got = {c.member: c for c in compare_surfaces(build_surface(old), build_surface(new))}
    assert (got["lib.a.same"].kind, got["lib.a.same"].certainty) == ("moved", "high")
    assert set(got["lib.a.same"].evidence) == {"same signature", "same body", "same docstring"}
    assert (got["lib.a.signature_only"].kind, got["lib.a.signature_only"].certainty) == ("moved", "medium")
    assert got["lib.a.signature_only"].evidence == ("same signature",)
    # The same name alone is no evidence: named_only is not moved, so the removed module lib.a covers it.
    assert "lib.a.named_only" not in got and got["lib.a"].kind == "removed"


def test_a_method_never_moves_to_another_class(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {"__init__.py": "class A:\n    def go(self, n):\n        return n + 1\n"})
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": "class A:\n    pass\nclass B:\n    def go(self, n):\n        return n + 1\n",
    })
    got = {c.member: c for c in compare_surfaces(build_surface(old), build_surface(new))}
    assert got["lib.A.go"].kind == "removed" and got["lib.A.go"].replacement is None


def test_defaults_are_compared_as_values_and_sentinels_need_an_announcement(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": '''
            no_default = object()
            def f(a='x', b=1, c=no_default, d=no_default, e=None, g=2):
                return a
            ''',
    })
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": '''
            no_default = object()
            def f(a="x", b=1.0, c=False, d=no_default, e=None, g=2, *, h):
                return a
            ''',
    })
    before, after = build_surface(old), build_surface(new)
    got = {(c.kind, c.parameter): c for c in compare_surfaces(before, after)}
    # 'x' and "x" are one value; 1 and 1.0 are not (type and value); to or from the sentinel is left out.
    assert set(got) == {("default-changed", "b"), ("default-changed", "h")}
    assert "new required parameter" in got[("default-changed", "h")].note
    told = [Announcement("lib.f", "default-changed", "c will default to False", parameter="c")]
    got = {(c.kind, c.parameter) for c in compare_surfaces(before, after, announced=told)}
    assert ("default-changed", "c") in got
    text = draft_changes(before, after)
    assert '# Left out: 1 default changes to or from a "no default" sentinel' in text


def test_default_values_and_stub_ellipsis():
    surface = build_surface(OLD)
    assert default_value(surface, "heronframe", "...") is None  # a stub's `...`: some default, not said which
    assert default_value(surface, "heronframe", "'a'") == default_value(surface, "heronframe", '"a"')
    assert default_value(surface, "heronframe", "1") != default_value(surface, "heronframe", "1.0")
    assert default_value(surface, "heronframe", "lib.no_default") == default_value(surface, "heronframe", "_NoValue")


def test_keyword_only_reordered_and_return_changes(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": '''
            class Frame: ...
            class Column: ...
            def kw(a, b=1, c=2): ...
            def order(a, b=1, c=2): ...
            def made() -> Frame: ...
            def refined() -> Frame: ...
            ''',
    })
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": '''
            class Frame: ...
            class Column: ...
            def kw(a, *, b=1, c=2): ...
            def order(a, c=2, b=1): ...
            def made() -> Column: ...
            def refined() -> Frame | None: ...
            ''',
    })
    got = {(c.member, c.kind): c for c in compare_surfaces(build_surface(old), build_surface(new))}
    kw = got[("lib.kw", "parameter-removed")]
    assert (kw.parameter, kw.position, kw.certainty) == ("b", 1, "medium") and "keyword only" in kw.note
    order = got[("lib.order", "parameter-removed")]
    assert (order.parameter, order.position) == ("b", 1) and "changed order" in order.note
    made = got[("lib.made", "behaviour-changed")]
    assert made.certainty == "low" and "Column" in made.note
    assert ("lib.refined", "behaviour-changed") not in got  # X -> X | None is a refinement


def test_announced_successor_settles_a_rename(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": "class T:\n    def iteritems(self):\n        return 1\n    def items(self):\n        return 2\n",
    })
    new = write_tree(tmp_path / "b" / "lib", {"__init__.py": "class T:\n    def items(self):\n        return 2\n"})
    told = [Announcement("lib.T.iteritems", "removed", "use .items instead", replacement="lib.T.items")]
    got = {c.member: c for c in compare_surfaces(build_surface(old), build_surface(new), announced=told)}
    c = got["lib.T.iteritems"]
    assert (c.kind, c.replacement, c.certainty) == ("renamed", "lib.T.items", "high")
    assert "deprecation message" in c.evidence
