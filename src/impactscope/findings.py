"""The one record that flows from the resolver to every consumer."""

from __future__ import annotations

import enum
from dataclasses import dataclass


class Confidence(enum.IntEnum):
    """How sure a finding is; higher is stronger, so `>=` reads as "at least"."""

    POSSIBLE = 1
    INFERRED = 2
    RESOLVED = 3

    @property
    def label(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> "Confidence":
        try:
            return cls[text.upper()]
        except KeyError:
            raise ValueError(f"unknown confidence {text!r}; expected resolved, inferred or possible") from None


@dataclass(frozen=True, order=True)
class Finding:
    """One site in downstream code that a planned change touches.

    `file` is a POSIX path relative to the project; `cell` is the index in a notebook's
    `cells` list (None for modules); `line` is 1-based within the cell for notebooks.
    """

    project: str
    file: str
    cell: int | None
    line: int
    column: int
    change: str
    confidence: Confidence
    pattern: str

    def to_json(self) -> dict[str, object]:
        return {
            "project": self.project,
            "file": self.file,
            "cell": self.cell,
            "line": self.line,
            "column": self.column,
            "change": self.change,
            "confidence": self.confidence.label,
            "pattern": self.pattern,
        }
