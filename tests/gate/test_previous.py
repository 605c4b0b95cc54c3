from __future__ import annotations

import pytest

from impactscope.changes import Change, Kind, load_change_list
from impactscope.demo.run import demo_changes_path
from impactscope.gate.previous import PreviousError, read_previous

from .conftest import PREVIOUS

CHANGES = load_change_list(demo_changes_path())


def test_the_previous_source_is_harvested_and_names_compared_by_their_defining_path():
    warned = read_previous(PREVIOUS, CHANGES)
    # heronframe 2.4 warns in stack() (warnings.warn) and on write_table(index=...) (its helper).
    assert warned.warned(CHANGES.by_id("HF-2"))
    assert warned.warned(Change("X", "heronframe.ops.stack", Kind.REMOVED))  # the defining path
    assert warned.warned(Change("Y", "heronframe.write_table", Kind.PARAMETER_REMOVED, parameter="index"))
    assert not warned.warned(Change("Z", "heronframe.write_table", Kind.PARAMETER_REMOVED, parameter="sep"))
    assert not warned.warned(CHANGES.by_id("HF-1"))  # stack_rows was renamed without a warning


def test_a_harvest_draft_file_is_read_too(tmp_path):
    from impactscope.surface.drafting import draft_harvest

    draft = tmp_path / "previous.toml"
    draft.write_text(draft_harvest(PREVIOUS, "heronframe", "3.0").text, encoding="utf-8")
    warned = read_previous(draft, CHANGES)
    assert warned.surface is None
    assert warned.warned(CHANGES.by_id("HF-2")) and not warned.warned(CHANGES.by_id("HF-3"))


def test_a_missing_path_or_another_library_is_an_input_error(tmp_path):
    with pytest.raises(PreviousError, match="--previous not found"):
        read_previous(tmp_path / "absent", CHANGES)
    other = tmp_path / "other.toml"
    other.write_text('[library]\nname = "otherlib"\n[[change]]\nmember = "otherlib.f"\nkind = "removed"\n')
    with pytest.raises(PreviousError, match="a change list for 'otherlib', the results are for 'heronframe'"):
        read_previous(other, CHANGES)
