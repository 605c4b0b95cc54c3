"""`GroupedTable`: a table that remembers the column it was grouped by."""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

from .table import Table


class GroupedTable(Table):
    """A Table whose rows are grouped by the values of one key column."""

    def __init__(
        self, data: Mapping[str, Sequence[Any]] | None = None, columns: Sequence[str] | None = None, key: str | None = None
    ) -> None:
        super().__init__(data, columns)
        self.key = key

    def aggregate(self, func: Callable[[list[dict[str, Any]]], Any]) -> dict[Any, Any]:
        """`func` applied to the rows of each group, keyed by the group's key value."""
        groups: dict[Any, list[dict[str, Any]]] = {}
        for row in self.rows():
            groups.setdefault(row[self.key], []).append(row)
        return {value: func(rows) for value, rows in groups.items()}
