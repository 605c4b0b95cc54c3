"""FileOutcome and ProjectResult: what a scan records per file and per project."""

from __future__ import annotations

import pytest

from impactscope.outcomes import FileOutcome, FileStatus


def test_a_status_given_as_text_is_checked_and_kept_as_a_value() -> None:
    assert FileOutcome("a.py", "skipped", "no candidate").status is FileStatus.SKIPPED  # type: ignore[arg-type]
    assert FileOutcome("a.py", FileStatus.PARSED).status is FileStatus.PARSED
    assert [s.value for s in FileStatus] == ["parsed", "skipped", "unparsed"]  # docs/corpus.md, "Every file is accounted for"
    with pytest.raises(ValueError, match="'done' is not a valid FileStatus"):
        FileOutcome("a.py", "done")  # type: ignore[arg-type]
