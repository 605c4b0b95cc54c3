"""Operations on several tables."""

from __future__ import annotations

import warnings
from collections.abc import Iterable

from .core.table import Table


def stack(tables: Iterable[Table]) -> Table:
    """Deprecated: use `Table.append_rows`. Removed in 3.0."""
    warnings.warn("heronframe.stack is deprecated; use Table.append_rows", DeprecationWarning, stacklevel=2)
    result = Table()
    for table in tables:
        result = result.append_rows(table)
    return result


def merge_tables(left: Table, right: Table, on: str) -> Table:
    """Inner join of two tables on column `on`."""
    index = {row[on]: row for row in right.rows()}
    return Table.from_rows({**row, **index[row[on]]} for row in left.rows() if row[on] in index)
