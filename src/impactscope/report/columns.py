"""Plain-text tables that fit a width: the terminal report's layout.

A table has fixed columns (identifiers, numbers) and at most one flexible column (a dotted name,
a pattern, a path). The fixed columns keep their natural width; the flexible one takes what is
left, its text wrapped at dots, slashes and spaces; when too little is left for it to be
readable, its text goes on lines of its own under its row, indented, across the whole width.
Headings can carry a group name over a run of columns ("projects hit" over proven, likely, at most).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

GAP = 2  # spaces between columns
READABLE = 16  # narrower than this, a flexible column goes under its row


@dataclass(frozen=True)
class Column:
    name: str
    group: str = ""  # shown over every neighbouring column with the same group
    right: bool = False  # numbers align right
    flexible: bool = False


def wrap(text: str, width: int) -> list[str]:
    """`text` in lines of at most `width`, broken after a dot, slash, comma or space if one is
    near enough, else anywhere."""
    width = max(width, 1)
    lines = []
    while len(text) > width:
        cut = max(text.rfind(mark, 0, width) for mark in "./, ")
        cut = cut + 1 if cut >= width // 2 else width
        lines.append(text[:cut].rstrip())
        text = text[cut:].lstrip()
    return [*lines, text]


def _natural(columns: Sequence[Column], rows: Sequence[Sequence[str]]) -> list[int]:
    widths = [max([len(c.name), *(len(r[i]) for r in rows)]) for i, c in enumerate(columns)]
    # A group's name must fit over its columns: widen the last of them if not.
    start = 0
    while start < len(columns):
        end = start
        while end + 1 < len(columns) and columns[end + 1].group == columns[start].group:
            end += 1
        span = sum(widths[start:end + 1]) + GAP * (end - start)
        if columns[start].group and len(columns[start].group) > span:
            widths[end] += len(columns[start].group) - span
        start = end + 1
    return widths


def lay_out(columns: Sequence[Column], rows: Sequence[Sequence[str]], width: int) -> list[str]:
    """The table as lines of at most `width` characters (fixed columns permitting)."""
    widths = _natural(columns, rows)
    flex = next((i for i, c in enumerate(columns) if c.flexible), None)
    below = False
    total = sum(widths) + GAP * (len(widths) - 1)
    if flex is not None and total > width:
        room = width - (total - widths[flex])
        if room >= max(READABLE, len(columns[flex].name)):
            widths[flex] = room
        else:
            below = True
    shown = [i for i in range(len(columns)) if not (below and i == flex)]

    def line(cells: Sequence[str]) -> str:
        parts = []
        for i in shown:
            text = cells[i]
            parts.append(text.rjust(widths[i]) if columns[i].right else text.ljust(widths[i]))
        return (" " * GAP).join(parts).rstrip()

    out = []
    if any(c.group for c in columns):
        groups = []
        index = 0
        while index < len(shown):
            run = [shown[index]]
            while index + len(run) < len(shown) and columns[shown[index + len(run)]].group == columns[run[0]].group:
                run.append(shown[index + len(run)])
            span = sum(widths[i] for i in run) + GAP * (len(run) - 1)
            groups.append(columns[run[0]].group.ljust(span))
            index += len(run)
        out.append((" " * GAP).join(groups).rstrip())
    out.append(line([c.name for c in columns]))
    out.append("─" * min(width, sum(widths[i] for i in shown) + GAP * (len(shown) - 1)))
    indent = widths[shown[0]] + GAP if shown else 0
    for row in rows:
        if flex is None:
            out.append(line(row))
        elif below:
            out.append(line(row))
            out.extend(" " * indent + part for part in wrap(row[flex], width - indent))
        else:
            # A wrapped first column hangs its later lines by two spaces, so that they do not
            # read as rows of their own.
            hang = "  " if flex == shown[0] else ""
            parts = wrap(row[flex], widths[flex] - (len(hang) if len(row[flex]) > widths[flex] else 0))
            parts[1:] = [hang + part for part in parts[1:]]
            out.append(line([*row[:flex], parts[0], *row[flex + 1:]]))
            blank = [""] * len(columns)
            out.extend(line([*blank[:flex], part, *blank[flex + 1:]]) for part in parts[1:])
    return out


__all__ = ["Column", "lay_out", "wrap"]
