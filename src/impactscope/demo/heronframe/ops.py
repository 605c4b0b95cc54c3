"""Operations on several tables at once."""

from __future__ import annotations

import warnings
from collections.abc import Iterable

from .core.table import Table


def stack(tables: Iterable[Table]) -> Table:
    """Deprecated since 2.4: chain `Table.stack_rows` instead. Removed in 3.0."""
    warnings.warn("stack is deprecated, use Table.stack_rows", DeprecationWarning, stacklevel=2)
    result = Table()
    for table in tables:
        result = result.stack_rows(table)
    return result


def merge_tables(left: Table, right: Table, on: str, how: str = "inner") -> Table:
    """Join two tables on column `on`; `how="left"` keeps unmatched rows of `left`."""
    index = {row[on]: row for row in right.rows()}
    return Table.from_rows(
        {**row, **index.get(row[on], {})} for row in left.rows() if row[on] in index or how == "left"
    )
