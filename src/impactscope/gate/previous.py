"""What the previous release warned about: the evidence of the `warned_before` rule.

The results file keeps the change list and the downstream findings, not the library's previous
source, so the gate is given the previous release with `--previous`: its source folder (harvested
here, read as text, never imported) or a change list `impactscope harvest` drafted from it.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from impactscope.changes import Change, ChangeList, Kind, load_change_list, normalise
from impactscope.errors import InputError
from impactscope.surface.model import Surface

# A harvested entry about the member itself (it goes) covers any change to it.
_MEMBER_KINDS = frozenset({Kind.REMOVED, Kind.RENAMED, Kind.MOVED})
# Changes whose warning harvest can read (harvest.py): the member, a parameter, a default.
CHECKED_KINDS = _MEMBER_KINDS | {Kind.PARAMETER_REMOVED, Kind.PARAMETER_RENAMED, Kind.DEFAULT_CHANGED}


class PreviousError(InputError):
    """A --previous that cannot be read as the previous release."""


@dataclass(frozen=True)
class Warned:
    """(member, kind, parameter) of each deprecation the previous release announced."""

    origin: str  # where it was read, for messages
    entries: frozenset[tuple[str, Kind, str | None]]
    surface: Surface | None = None  # with a source folder: names compared by their defining path

    def _name(self, dotted: str) -> str:
        return self.surface.canonical(dotted) if self.surface is not None else dotted

    def warned(self, change: Change) -> bool:
        name = self._name(change.member)
        for member, kind, parameter in self.entries:
            if self._name(member) != name:
                continue
            if kind in _MEMBER_KINDS:
                return True
            if change.kind.about_parameter and kind.about_parameter and parameter == change.parameter:
                return True
        return False


def read_previous(path: Path, changes: ChangeList) -> Warned:
    if path.is_dir():
        from impactscope.surface.harvest import harvest

        found = harvest(path, changes.import_name)
        entries = frozenset((h.member, Kind(h.kind), h.parameter) for h in found.changes)
        return Warned(str(path), entries, found.surface)
    if not path.exists():
        raise PreviousError(
            f"{path}: --previous not found; pass the previous release's source folder or a change list "
            "drafted from it by `impactscope harvest`"
        )
    drafted = load_change_list(path)
    if normalise(drafted.library) != normalise(changes.library):
        raise PreviousError(
            f"{path}: --previous is a change list for {drafted.library!r}, the results are for "
            f"{changes.library!r}; pass the harvest of {changes.library}'s previous release"
        )
    return Warned(str(path), frozenset((c.member, c.kind, c.parameter) for c in drafted.changes))
