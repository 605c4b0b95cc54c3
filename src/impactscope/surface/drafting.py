"""The two drafting commands end to end: read the sources (never importing them), draft, render.

`compare` reads the old version's own deprecation warnings too (a `harvest` of the old source,
on its already built surface), because they settle what a bare comparison can only guess: the
successor of a removed member, a renamed keyword, and whether a default that was the library's
"no default" sentinel really changes.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .build import build_for_drafts
from .compare import DraftChange, _Comparison, as_scanned, render_draft, summary
from .harvest import harvest
from .scope import Scope


@dataclass(frozen=True)
class Draft:
    """A rendered draft and the entries in it (for counting)."""

    text: str
    changes: tuple[DraftChange, ...]

    @property
    def summary(self) -> str:
        return summary(self.changes)


def draft_compare(old: Path, new: Path, library: str | None = None, release: str | None = None, *,
                  include_private: bool = False) -> Draft:
    """The change list drafted from two versions of the library's source."""
    before, scanned = build_for_drafts(old, library, include_tests=include_private)
    after, _ = build_for_drafts(new, library, include_tests=include_private)
    told = harvest(old, library, release=release, include_private=include_private, surface=before)
    shims = [c for c in told.changes if c.parameter is not None]
    still: frozenset[tuple[str, str]] = frozenset()
    if shims:
        # Whether the new version still warns about (so still takes) a keyword the old one did.
        later = harvest(new, library, include_private=include_private, surface=after)
        still = frozenset((after.canonical(c.member), c.parameter) for c in later.changes if c.parameter is not None)
    comparison = _Comparison(before, after, release, Scope(include_private), [c.announcement(before) for c in told.changes],
                             still)
    found = tuple(as_scanned(comparison.run(), scanned))
    text = render_draft(found, after.library, release, origin="comparing two versions", left_out=comparison.left_out)
    return Draft(text, found)


def draft_harvest(source: Path, library: str | None = None, release: str | None = None, *,
                  include_private: bool = False) -> Draft:
    """The change list drafted from the deprecations the library's source announces."""
    from .harvest import render_draft as render_harvest

    found = harvest(source, library, release=release, include_private=include_private)
    text = render_harvest(found.changes, found.surface.library, release, unread=found.unread)
    return Draft(text, tuple(c.to_draft() for c in found.changes))
