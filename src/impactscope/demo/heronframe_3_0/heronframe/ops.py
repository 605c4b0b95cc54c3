"""Operations on several tables at once."""

from __future__ import annotations

from .core.table import Table


def merge_tables(left: Table, right: Table, on: str, how: str = "inner") -> Table:
    """Join two tables on column `on`; `how="left"` keeps unmatched rows of `left`."""
    index = {row[on]: row for row in right.rows()}
    return Table.from_rows(
        {**row, **index.get(row[on], {})} for row in left.rows() if row[on] in index or how == "left"
    )
