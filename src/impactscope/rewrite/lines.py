"""Put changed lines back into the original text: only edited lines change, byte for byte.

The scan reads text with its newlines made `\\n` (corpus.sources); libcst rewrites that text.
The line-level difference between the two versions is then applied to the original lines, so
that CRLF or CR endings, a missing final newline and every untouched line stay as they were.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from typing import AnyStr

# The interpreter's physical line ends (Language Reference, "Physical lines"): \r\n, \r or \n.
# str.splitlines would also split at form feeds and other characters Python does not end lines at.
_LINE = re.compile(r"([^\r\n]*)(\r\n|\r|\n|)")


@dataclass(frozen=True)
class Lines:
    """A text as its lines and their own endings; `ends[-1]` is "" (the text after the last newline)."""

    bodies: tuple[str, ...]
    ends: tuple[str, ...]

    @classmethod
    def of(cls, text: str) -> "Lines":
        bodies: list[str] = []
        ends: list[str] = []
        pos = 0
        while True:
            match = _LINE.match(text, pos)
            assert match is not None
            bodies.append(match.group(1))
            ends.append(match.group(2))
            pos = match.end()
            if not match.group(2):
                break
        return cls(tuple(bodies), tuple(ends))

    @property
    def normalised(self) -> str:
        """The text as the scan reads it: every line end `\\n`."""
        return "\n".join(self.bodies)

    @property
    def text(self) -> str:
        return "".join(b + e for b, e in zip(self.bodies, self.ends))

    def newline(self) -> str:
        """The line end a new line gets: the text's first one, else `\\n`."""
        return next((e for e in self.ends if e), "\n")


@dataclass(frozen=True)
class Hunk:
    """Lines `start` (0-based) up to `stop` of the old normalised text become `new`."""

    start: int
    stop: int
    new: tuple[str, ...]


def hunks(old: str, new: str) -> list[Hunk]:
    """The changed line ranges between two normalised texts."""
    a, b = old.split("\n"), new.split("\n")
    matcher = difflib.SequenceMatcher(None, a, b, autojunk=False)
    return [Hunk(i1, i2, tuple(b[j1:j2])) for tag, i1, i2, j1, j2 in matcher.get_opcodes() if tag != "equal"]


def apply(original: Lines, changes: list[Hunk]) -> str:
    """`original` with `changes` made; new lines take the ending of the line they replace
    (the text's own newline past that), and the last line keeps having none if it had none."""
    bodies = list(original.bodies)
    ends = list(original.ends)
    newline = original.newline()
    for hunk in sorted(changes, key=lambda h: h.start, reverse=True):
        old_ends = ends[hunk.start : hunk.stop]
        last = hunk.stop == len(bodies)  # the hunk reaches the end of the text
        new_ends = [old_ends[i] if i < len(old_ends) and old_ends[i] else newline for i in range(len(hunk.new))]
        if last and new_ends:
            new_ends[-1] = ""
        bodies[hunk.start : hunk.stop] = hunk.new
        ends[hunk.start : hunk.stop] = new_ends
    return "".join(b + e for b, e in zip(bodies, ends))


def after_newlines(data: AnyStr) -> list[AnyStr]:
    """`data` cut after each `\\n`, as git and nbformat cut lines (a CR stays in its line);
    the last piece may end without one."""
    newline = "\n" if isinstance(data, str) else b"\n"
    pieces = data.split(newline)  # type: ignore[arg-type]
    out = [piece + newline for piece in pieces[:-1]]  # type: ignore[operator]
    if pieces[-1]:
        out.append(pieces[-1])
    return out
