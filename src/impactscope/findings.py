"""The one record that flows from the resolver to every consumer."""

from __future__ import annotations

import enum
from dataclasses import dataclass
from typing import Any, Mapping

from impactscope.errors import InputError


class Confidence(enum.IntEnum):
    """How sure a finding is; higher is stronger, so `>=` reads as "at least".

    The one definition of the levels: the report's per-level counts (`projects`, `share`, ...)
    follow `strongest_first()`, and their JSON keys are the labels."""

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
            raise InputError(f"unknown confidence {text!r}; expected resolved, inferred or possible") from None

    @classmethod
    def strongest_first(cls) -> tuple["Confidence", ...]:
        return (cls.RESOLVED, cls.INFERRED, cls.POSSIBLE)


class Reading(str, enum.Enum):
    """How the file that holds a finding was read; the value is what the results file stores."""

    SYNTAX_TREE = "syntax tree"  # parsed by libcst and resolved: the confidence is the chain's
    # No syntax tree could be had (Python 2, nesting past the parser's limit): a token-level
    # reading found the name, so the finding is `possible` and its pattern keeps only the shape.
    TOKEN_LEVEL = "token level"


# How reports (the JSON one since its first version) mark a token-level finding's pattern.
LEGACY_PREFIX = "legacy: "


def pattern_label(pattern: str, reading: Reading) -> str:
    """A pattern as reports show it: a token-level one is marked `legacy: `."""
    return LEGACY_PREFIX + pattern if reading is Reading.TOKEN_LEVEL else pattern


def parse_pattern_label(label: str) -> tuple[str, Reading]:
    """The inverse of `pattern_label`, for reading a JSON report back."""
    if label.startswith(LEGACY_PREFIX):
        return label[len(LEGACY_PREFIX):], Reading.TOKEN_LEVEL
    return label, Reading.SYNTAX_TREE


@dataclass(frozen=True, order=True)
class Finding:
    """One site in downstream code that a planned change touches.

    `file` is a POSIX path relative to the project; `cell` is the index in a notebook's
    `cells` list (None for modules); `line` is 1-based within the cell for notebooks.
    `pattern` is the shape of the use; `reading` says how the file was read.
    """

    project: str
    file: str
    cell: int | None
    line: int
    column: int
    change: str
    confidence: Confidence
    pattern: str
    reading: Reading = Reading.SYNTAX_TREE

    @property
    def token_level(self) -> bool:
        return self.reading is Reading.TOKEN_LEVEL

    @property
    def label(self) -> str:
        """The pattern as reports show it."""
        return pattern_label(self.pattern, self.reading)

    def to_json(self) -> dict[str, object]:
        return {
            "project": self.project,
            "file": self.file,
            "cell": self.cell,
            "line": self.line,
            "column": self.column,
            "change": self.change,
            "confidence": self.confidence.label,
            "pattern": self.label,
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> "Finding":
        """The inverse of `to_json` (which keeps the reading in the pattern's label)."""
        return cls(
            data["project"], data["file"], data["cell"], data["line"], data["column"], data["change"],
            Confidence.parse(data["confidence"]), *parse_pattern_label(data["pattern"]),
        )
