"""Where in the library's own source a change lives: the line a SARIF result points at.

The downstream sites are not in the library's repository, so a result points at the library:
the deprecation warning of the member in the head source (as harvest finds it), else the
member's definition, else, for a member the head has removed, the nearest definition that still
holds it (its class, its module). The source is read as text, never imported.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Mapping

from impactscope.changes import Change
from impactscope.surface.harvest import HarvestedChange
from impactscope.surface.model import Surface


@dataclass(frozen=True)
class Place:
    path: Path  # the file, absolute
    line: int  # 1-based
    column: int  # 1-based, in Unicode code points: the first character that is not blank
    what: str  # "deprecation warning", "definition", or "definition of <the enclosing name>"


@dataclass(frozen=True)
class LibraryLines:
    surface: Surface
    files: Mapping[str, Path]  # module name -> its file
    warnings: Mapping[str, tuple[HarvestedChange, ...]]  # canonical member -> its harvested warnings

    def place(self, change: Change, before: Surface | None = None) -> Place | None:
        """`before`, the previous release's surface, names where a member the head removed was
        defined (`networkx.to_numpy_matrix` in `networkx.convert_matrix`), so the place is the
        module or class that held it rather than the package."""
        names = list(dict.fromkeys([self.surface.canonical(change.member)]
                                   + ([before.canonical(change.member)] if before is not None else [])))
        for name in names:
            warned = self.warnings.get(name, ())
            if warned:
                best = next((h for h in warned if change.parameter and h.parameter == change.parameter), warned[0])
                path = self.files.get(best.module)
                if path is not None:
                    return _place(path, best.line, "deprecation warning")
        found: list[tuple[int, Place]] = []
        for name in names:
            target = name
            while target:
                place = self._definition(target, "definition" if target == name else f"definition of {target}")
                if place is not None:
                    found.append((target.count(".") + (target == name) * 1000, place))
                    break
                target = target.rpartition(".")[0]
        return max(found, key=lambda pair: pair[0])[1] if found else None  # the member, else the closest holder

    def _definition(self, target: str, what: str) -> Place | None:
        member = self.surface.members.get(target)
        module = self.surface.module_of(target) if member is not None else None
        path = self.files.get(module) if module is not None else None
        if member is None or path is None:
            return None
        return _place(path, member.line if member.kind != "module" else 1, what)


def library_lines(source: Path, import_name: str) -> LibraryLines:
    from impactscope.surface.harvest import harvest

    found = harvest(source, import_name)
    warnings: dict[str, list[HarvestedChange]] = {}
    for h in found.changes:
        warnings.setdefault(found.surface.canonical(h.member), []).append(h)
    return LibraryLines(
        found.surface,
        {m.name: m.path.resolve() for m in found.files if m.path is not None},
        {k: tuple(v) for k, v in warnings.items()},
    )


def _place(path: Path, line: int, what: str) -> Place:
    line = max(line, 1)
    column = 1
    try:
        # Python ends lines at \n, \r\n and \r only (str.splitlines would also split at \f, \x1c, ...).
        text = path.read_text(encoding="utf-8", errors="replace")
        lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    except OSError:
        lines = []
    if 0 < line <= len(lines):
        row = lines[line - 1]
        column = len(row) - len(row.lstrip(" \t\f")) + 1
    return Place(path, line, column, what)
