"""Edit a notebook's cell sources in its JSON text, leaving every other byte as it was.

The notebook is not loaded and dumped again: that would change indentation, key order and
escaping of the whole file. The JSON string tokens of the `source` values are found in the
original text and only those of edited lines are replaced, each written as nbformat writes a
string (`json.dumps`, non-ASCII kept as is unless the token already used `\\u` escapes).
"""

from __future__ import annotations

import difflib
import json
import re
from dataclasses import dataclass
from typing import Iterator, Mapping

from impactscope.errors import InputError
from impactscope.rewrite.lines import after_newlines

_WS = re.compile(r"[ \t\n\r]*")
_STRING = re.compile(r'"(?:[^"\\]|\\.)*"', re.S)
_SCALAR = re.compile(r"[^\s,\]}]+")
_NESTED = re.compile(r'"(?:[^"\\]|\\.)*"|[\[\]{}]', re.S)


class NotebookShapeError(InputError):
    """A notebook whose JSON is not the nbformat 4 shape this module edits."""


@dataclass(frozen=True)
class CellSource:
    """Where one code cell's `source` value is in the text: one string, or an array of them."""

    index: int  # in the `cells` list
    start: int
    end: int
    parts: tuple[tuple[int, int], ...]  # spans of the string tokens (one for a plain string)
    is_list: bool

    def text(self, notebook: str) -> str:
        return "".join(json.loads(notebook[s:e]) for s, e in self.parts)


def cell_sources(notebook: str) -> dict[int, CellSource]:
    """The `source` of every code cell of an nbformat 4 notebook, by cell index."""
    out: dict[int, CellSource] = {}
    top = dict(_members(notebook, _skip_ws(notebook, 0)))
    major = top.get("nbformat")
    if major is None or notebook[major[0] : major[1]].strip() != "4" or "cells" not in top:
        raise NotebookShapeError("not an nbformat 4 notebook (no top-level nbformat = 4 and cells)")
    for index, (start, _end) in enumerate(_elements(notebook, top["cells"][0])):
        if notebook[start] != "{":
            continue
        members = dict(_members(notebook, start))
        kind = members.get("cell_type")
        if kind is None or notebook[kind[0] : kind[1]] != '"code"' or "source" not in members:
            continue
        s, e = members["source"]
        if notebook[s] == '"':
            out[index] = CellSource(index, s, e, ((s, e),), False)
        elif notebook[s] == "[":
            parts = tuple(_elements(notebook, s))
            if not all(notebook[p] == '"' for p, _ in parts):
                raise NotebookShapeError(f"cell {index}: source holds something other than strings")
            out[index] = CellSource(index, s, e, parts, True)
    return out


def splice(notebook: str, new_sources: Mapping[int, str]) -> str:
    """`notebook` with the code cells at the given indexes holding the new source texts."""
    cells = cell_sources(notebook)
    edits: list[tuple[int, int, str]] = []
    for index, new in new_sources.items():
        cell = cells[index]
        if not cell.is_list:
            edits.append((cell.start, cell.end, _dump(new, notebook)))
            continue
        edits.extend(_list_edits(notebook, cell, new))
    for start, end, text in sorted(edits, reverse=True):
        notebook = notebook[:start] + text + notebook[end:]
    return notebook


def _list_edits(notebook: str, cell: CellSource, new: str) -> Iterator[tuple[int, int, str]]:
    """Replace only the array elements (lines) that changed; separators are the array's own."""
    old_tokens = [notebook[s:e] for s, e in cell.parts]
    old = [json.loads(t) for t in old_tokens]
    # nbformat's convention: each line keeps its "\n" (only the last may lack one).
    lines = after_newlines(new)
    separator = (
        notebook[cell.parts[0][1] : cell.parts[1][0]] if len(cell.parts) > 1 else ",\n" + _indent_before(notebook, cell)
    )
    matcher = difflib.SequenceMatcher(None, old, lines, autojunk=False)
    for tag, i1, i2, j1, j2 in matcher.get_opcodes():
        if tag == "equal":
            continue
        written = separator.join(_dump(line, notebook) for line in lines[j1:j2])
        if i1 < i2:
            start, end = cell.parts[i1][0], cell.parts[i2 - 1][1]
            if not written:  # lines removed: their separator goes with them
                if i2 < len(cell.parts):
                    end = cell.parts[i2][0]
                elif i1 > 0:
                    start = cell.parts[i1 - 1][1]
            yield start, end, written
        elif i1 < len(cell.parts):
            yield cell.parts[i1][0], cell.parts[i1][0], written + separator
        elif cell.parts:
            yield cell.parts[-1][1], cell.parts[-1][1], separator + written
        else:
            yield cell.start + 1, cell.start + 1, written


def _indent_before(notebook: str, cell: CellSource) -> str:
    line_start = notebook.rfind("\n", 0, cell.start) + 1
    indent = notebook[line_start : cell.start]
    return " " * (len(indent) - len(indent.lstrip())) + "  "


def _dump(text: str, notebook: str) -> str:
    """`text` as a JSON string token, escaped as the file escapes: non-ASCII as `\\uXXXX` when
    the file holds such escapes and no raw non-ASCII character (`json.dumps(ensure_ascii=True)`)."""
    return json.dumps(text, ensure_ascii=notebook.isascii() and "\\u" in notebook)


# ------------------------------------------------------------------ JSON scanning (RFC 8259)
def _skip_ws(text: str, pos: int) -> int:
    return _WS.match(text, pos).end()  # type: ignore[union-attr]


def _value_end(text: str, pos: int) -> int:
    """The end of the JSON value starting at `pos`; nesting is counted, not recursed into."""
    first = text[pos]
    if first == '"':
        match = _STRING.match(text, pos)
        if match is None:
            raise NotebookShapeError(f"unterminated string at offset {pos}")
        return match.end()
    if first not in "[{":
        match = _SCALAR.match(text, pos)
        if match is None:
            raise NotebookShapeError(f"no JSON value at offset {pos}")
        return match.end()
    depth = 0
    for match in _NESTED.finditer(text, pos):
        token = match.group()
        if token in "[{":
            depth += 1
        elif token in "]}":
            depth -= 1
            if depth == 0:
                return match.end()
    raise NotebookShapeError(f"unclosed {first} at offset {pos}")


def _members(text: str, pos: int) -> Iterator[tuple[str, tuple[int, int]]]:
    """(key, (value start, value end)) of the object at `pos`."""
    if text[pos] != "{":
        raise NotebookShapeError(f"expected an object at offset {pos}")
    pos = _skip_ws(text, pos + 1)
    while text[pos] != "}":
        key_end = _value_end(text, pos)
        key = json.loads(text[pos:key_end])
        pos = _skip_ws(text, key_end)
        if text[pos] != ":":
            raise NotebookShapeError(f"expected ':' at offset {pos}")
        start = _skip_ws(text, pos + 1)
        end = _value_end(text, start)
        yield key, (start, end)
        pos = _skip_ws(text, end)
        if text[pos] == ",":
            pos = _skip_ws(text, pos + 1)


def _elements(text: str, pos: int) -> Iterator[tuple[int, int]]:
    """(start, end) of each element of the array at `pos`."""
    if text[pos] != "[":
        raise NotebookShapeError(f"expected an array at offset {pos}")
    pos = _skip_ws(text, pos + 1)
    while text[pos] != "]":
        end = _value_end(text, pos)
        yield pos, end
        pos = _skip_ws(text, end)
        if text[pos] == ",":
            pos = _skip_ws(text, pos + 1)
