"""How a reference reached its member, where a pattern needs more than the spelled text."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union


@dataclass(frozen=True)
class ThroughSuper:
    """`super().name` in a method of a user class: the lookup starts at its first library base."""

    base: str  # that library class's dotted path


# A dotted path as spelled, "<Class>" for an instance, "<A|B>" for one of several, "?" for
# unknown, "" for none; or reached through `super()`.
Receiver = Union[str, ThroughSuper]

__all__ = ["Receiver", "ThroughSuper"]
