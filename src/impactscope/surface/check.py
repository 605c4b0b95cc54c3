"""The change list checked against the library's surface: a changed member must exist there.

A member the surface does not have is most often a typo (`DataFrame.apend`) or a path that
never existed; scanning for it would report no use and look like good news. So it is an input
error that names the entry and suggests the closest names. A member the library serves at run
time in a way no static reading sees (and members that stubs leave out) is declared with
`dynamic = true` on its entry.
"""

from __future__ import annotations

import difflib
import os

from impactscope.changes import Change, ChangeList, ChangeListError

from .model import Surface


class UnknownMemberError(ChangeListError):
    """A changed member that the library's surface does not have."""


def check_members(changes: ChangeList, surface: Surface, source: str | os.PathLike[str] | None = None) -> None:
    """Raise UnknownMemberError for the first changed member absent from `surface`.

    Members reached through inheritance, re-exports and names a module `__getattr__` serves
    count as present. Entries with `dynamic = true`, and members under another top-level module
    than the surface's, are not checked.
    """
    missing = [c for c in changes.changes if not c.dynamic and _checkable(surface, c.member) and surface.member(c.member) is None]
    if not missing:
        return
    first = missing[0]
    where = f" read from {os.fspath(source)}" if source is not None else ""
    more = ""
    if len(missing) > 1:
        others = ", ".join(repr(c.member) for c in missing[1:4]) + (", ..." if len(missing) > 4 else "")
        more = f" ({len(missing) - 1} more absent: {others})"
    raise UnknownMemberError(
        f"{changes.label(first)}: member {first.member!r} is not in the surface of {surface.library}{where}: "
        f"{_explain(surface, first)}; fix the member, or add dynamic = true to the entry if the library "
        f"serves it at run time (stubs may also leave out deprecated members){more}"
    )


def _checkable(surface: Surface, member: str) -> bool:
    return member == surface.library or member.startswith(surface.library + ".")


def _explain(surface: Surface, change: Change) -> str:
    """Which part of the path is unknown, and the closest names there (difflib)."""
    parts = change.member.split(".")
    i = len(parts) - 1
    while i > 1 and surface.member(".".join(parts[:i])) is None:
        i -= 1
    owner, wrong = ".".join(parts[:i]), parts[i]
    names = surface.names_in(owner)
    if not wrong.startswith("_"):
        names = tuple(n for n in names if not n.startswith("_"))  # suggest private names only for private ones
    folded = [n for n in names if n.lower() == wrong.lower()]
    close = list(dict.fromkeys(folded + difflib.get_close_matches(wrong, names, n=3, cutoff=0.6)))[:3]
    found = surface.member(owner)
    what = "module" if found is not None and found.kind == "module" else "class" if found is not None and found.kind == "class" else "name"
    text = f"the {what} {owner} has no {wrong!r}"
    if close:
        options = [".".join([*parts[:i], c, *parts[i + 1 :]]) for c in close]
        options = [o for o in options if surface.member(o) is not None] or options  # whole paths that exist first
        text += " (did you mean " + " or ".join(repr(o) for o in options) + "?)"
    if surface.canonical(owner) in surface.dynamic:
        text += f" ({owner} also computes names at run time)"
    if ".tests." in change.member + ".":
        text += " (tests subpackages are not read)"
    return text
