"""Surface look-ups on a hand-made surface (no source reading involved)."""

from __future__ import annotations

import pytest

from impactscope.surface import Member, Parameter, Surface, SurfaceError


def m(name: str, kind: str, *, bases: tuple[str, ...] = (), params=None, returns=None) -> Member:
    return Member(name, kind, params, returns, bases, None, 1)


@pytest.fixture()
def surface() -> Surface:
    members = [
        m("lib", "module"),
        m("lib.main", "module"),
        m("lib.main.Program", "class", returns="lib.main.Program", params=()),
        m("lib.main.Program.run", "method", params=(Parameter("argv", "positional-or-keyword", 0, "None"),)),
        m("lib.base", "module"),
        m("lib.base.A", "class", returns="lib.base.A"),
        m("lib.base.A.who", "method", params=()),
        m("lib.base.A.size", "property"),
        m("lib.base.B", "class", bases=("lib.base.A", "collections.abc.Sized"), returns="lib.base.B"),
        m("lib.base.B.extra", "method", params=()),
        m("lib.base.default", "constant", returns="lib.base.B"),
    ]
    return Surface(
        library="lib",
        members={x.name: x for x in members},
        aliases={"lib.main": "lib.main.Program", "lib.B": "lib.base.B"},
        exports={"lib": ("main", "B"), "lib.base": ("A", "B", "default"), "lib.main": ("Program",)},
        dynamic=frozenset(),
        declared=frozenset({"lib"}),
    )


def test_a_reexport_shadows_the_submodule_of_the_same_name(surface):
    # Python Language Reference, "The import system" (submodules): after `from .main import main`
    # in lib/__init__.py, attribute access `lib.main` finds the re-exported object.
    assert surface.canonical("lib.main") == "lib.main.Program"
    assert surface.canonical("lib.main.Program.run") == "lib.main.Program.run"
    assert surface.canonical("lib.main.run") == "lib.main.Program.run"


def test_inheritance_owners_and_outside_bases(surface):
    assert surface.canonical("lib.B.who") == "lib.base.A.who"
    assert surface.mro("lib.B") == ("lib.base.B", "lib.base.A")
    assert surface.owners("who") == frozenset({"lib.base.A", "lib.base.B"})
    assert surface.owners("B") == frozenset({"lib", "lib.base"})  # modules that bind the name
    assert surface.owners("nothing") == frozenset()


def test_attributes_of_a_module_level_instance(surface):
    assert surface.canonical("lib.base.default.who") == "lib.base.A.who"
    assert surface.returns("lib.B") == "lib.base.B"
    assert surface.returns("lib.base.A.who") is None
    assert surface.is_class("lib.B") and not surface.is_class("lib.base.A.who")


def test_public_names_and_the_preferred_path(surface):
    names = surface.public_names()
    assert {"lib.B", "lib.B.who", "lib.B.extra", "lib.base.B.who", "lib.base.A.who"} <= names
    # Through the defining class first, then fewest segments, then shortest.
    assert surface.public_paths("lib.base.A.who")[0] == "lib.base.A.who"
    assert surface.public_paths("lib.base.B.extra")[0] == "lib.B.extra"
    assert "lib.main.Program" in names and "lib.main.run" in names


def test_parameters_star_names_and_unknown(surface):
    assert surface.parameters("lib.main") == ()
    assert [p.name for p in surface.parameters("lib.main.run")] == ["argv"]
    assert surface.star_names("lib") == ("main", "B")
    assert surface.star_names("lib.nothing") is None
    assert surface.member("lib.nothing.here") is None
    assert surface.canonical("lib.B.nope.deeper") == "lib.base.B.nope.deeper"


def test_frozen_hashable_and_round_trip(surface):
    again = Surface.from_json(surface.to_json())
    assert again == surface and hash(again) == hash(surface)
    assert len({surface, again}) == 1
    with pytest.raises(AttributeError):
        surface.library = "other"  # frozen


def test_from_json_reports_unknown_kind(surface):
    data = surface.to_json()
    data["members"]["lib.base.A.who"]["kind"] = "gizmo"
    with pytest.raises(SurfaceError, match="'lib.base.A.who' has unknown kind 'gizmo'"):
        Surface.from_json(data)


def test_render_table_lists_every_member(surface):
    text = surface.render_table()
    assert text.splitlines()[0].startswith("lib: 3 modules, 8 members")
    assert all(name in text for name in surface.members)
    assert "lib.B -> lib.base.B" in text


def test_merge_surfaces_keeps_the_names_of_both(tmp_path):
    from impactscope.surface import build_surface
    from impactscope.surface.model import merge_surfaces

    from .helpers import write_tree

    stubbed = build_surface(write_tree(tmp_path / "a" / "lib", {"__init__.pyi": "def f(x: int) -> int: ...\nclass C: ...\n"}))
    source = build_surface(write_tree(tmp_path / "b" / "lib", {"__init__.py": "def f(x):\n    return x\ndef old(): ...\n"}))
    merged = merge_surfaces(stubbed, source)
    assert merged.member("lib.f") == stubbed.member("lib.f")  # the first one wins where both say something
    assert merged.member("lib.old") is not None and merged.member("lib.C") is not None
