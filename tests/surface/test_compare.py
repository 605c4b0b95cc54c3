"""draft_changes between the two heronframe fixtures, and the draft's format."""

from __future__ import annotations

import re
import tomllib

import pytest

from impactscope.surface import build_surface, draft_changes

from .helpers import NEW, OLD, write_tree

# The keys DESIGN.md ("Change list (TOML)") allows; anything else is an error for the loader.
LIBRARY_KEYS = {"name", "release", "requires_python"}
CHANGE_KEYS = {"id", "member", "kind", "replacement", "parameter", "new_parameter", "position", "deprecated_in", "note"}
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


def test_every_entry_has_a_certainty_comment(draft):
    blocks = draft.split("[[change]]")[1:]
    comments = re.findall(r"^# certainty: (high|medium|low) \u2014 .+$", draft, flags=re.M)
    assert len(comments) == len(blocks) > 0


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


def test_member_became_private(changes):
    c = changes[("heronframe.io.sniff_separator", "removed")]
    assert c["replacement"] == "heronframe.io._sniff_separator" and "private" in c["note"]


def test_nothing_else_and_inherited_paths_are_not_repeated(changes):
    assert set(changes) == {
        ("heronframe.Table.stack_rows", "renamed"), ("heronframe.stack", "removed"),
        ("heronframe.plotting", "removed"), ("heronframe.plotting.scatter_grid", "moved"),
        ("heronframe.Table.sort_by", "parameter-removed"), ("heronframe.Table.pivot", "parameter-renamed"),
        ("heronframe.read_table", "default-changed"), ("heronframe.io.sniff_separator", "removed"),
    }


def test_removal_next_to_a_module_getattr_is_less_certain(draft):
    block = draft[: draft.index('member = "heronframe.stack"')].rsplit("# certainty:", 1)[1]
    assert block.startswith(" medium") and "__getattr__" in block


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
