from __future__ import annotations

from impactscope.changes import Change, Kind, load_change_list
from impactscope.demo.run import demo_changes_path
from impactscope.gate.locate import library_lines

from .conftest import HEAD, PREVIOUS

CHANGES = load_change_list(demo_changes_path())


def line_of(place) -> str:
    return place.path.read_text(encoding="utf-8").split("\n")[place.line - 1]


def test_a_warning_in_the_head_source_is_the_place():
    # Read with 2.4 as the head: stack() warns there (a pull request that adds the deprecation).
    place = library_lines(PREVIOUS, "heronframe").place(CHANGES.by_id("HF-2"))
    assert place is not None and place.what == "deprecation warning"
    assert place.path == (PREVIOUS / "ops.py").resolve()
    assert line_of(place).strip().startswith("warnings.warn(") and place.column == 5  # 1-based: 4 blanks before


def test_a_member_without_a_warning_points_at_its_definition():
    place = library_lines(HEAD, "heronframe").place(CHANGES.by_id("HF-4"))  # Table.sort_by, in 3.0
    assert place is not None and place.what == "definition"
    assert line_of(place).lstrip().startswith("def sort_by(") and place.column == 5


def test_a_member_the_head_removed_points_at_what_held_it():
    lines = library_lines(HEAD, "heronframe")
    place = lines.place(CHANGES.by_id("HF-1"))  # Table.stack_rows, renamed away in 3.0
    assert place is not None and place.what == "definition of heronframe.core.table.Table"
    assert line_of(place).startswith("class Table") and place.column == 1
    gone = lines.place(Change("X", "heronframe.nowhere.at_all", Kind.REMOVED))
    assert gone is not None and gone.line == 1 and gone.path.name == "__init__.py"


def test_the_previous_surface_names_the_module_that_held_a_removed_member(tmp_path):
    from impactscope.surface import build_surface

    for release, body in (("old", "def f():\n    pass\n\n\ndef g():\n    pass\n"), ("new", "def g():\n    pass\n")):
        package = tmp_path / release / "pkg"
        package.mkdir(parents=True)
        (package / "__init__.py").write_text("from .sub import *\n" if release == "old" else "from .sub import g\n")
        (package / "sub.py").write_text(body)
    lines = library_lines(tmp_path / "new" / "pkg", "pkg")
    gone = Change("X", "pkg.f", Kind.REMOVED)
    assert lines.place(gone).path.name == "__init__.py"  # the head alone knows only the package
    place = lines.place(gone, build_surface(tmp_path / "old" / "pkg", "pkg"))
    assert place.path.name == "sub.py" and place.what == "definition of pkg.sub" and place.line == 1
