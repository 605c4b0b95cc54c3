"""`Table`: named columns of equal length, held as plain Python lists."""

from __future__ import annotations

import statistics
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from typing import TYPE_CHECKING, Any

from typing_extensions import Self, deprecated

if TYPE_CHECKING:
    from .grouped import GroupedTable

Row = dict[str, Any]


class Table:
    """An ordered mapping of column name to a list of values."""

    def __init__(self, data: Mapping[str, Sequence[Any]] | None = None, columns: Sequence[str] | None = None) -> None:
        given = {str(name): list(values) for name, values in (data or {}).items()}
        lengths = {len(values) for values in given.values()}
        if len(lengths) > 1:
            raise ValueError(f"columns differ in length: {sorted(lengths)}")
        size = lengths.pop() if lengths else 0
        order = list(columns) if columns is not None else list(given)
        self._columns: dict[str, list[Any]] = {name: given.get(name, [None] * size) for name in order}

    @classmethod
    def from_rows(cls, rows: Iterable[Mapping[str, Any]]) -> Self:
        rows = list(rows)
        names = list(dict.fromkeys(name for row in rows for name in row))
        return cls({name: [row.get(name) for row in rows] for name in names})

    @property
    def columns(self) -> list[str]:
        return list(self._columns)

    @property
    def shape(self) -> tuple[int, int]:
        return (len(self), len(self._columns))

    def __len__(self) -> int:
        return len(next(iter(self._columns.values()), []))

    def __getitem__(self, name: str) -> list[Any]:
        return self._columns[name]

    def rows(self) -> Iterator[Row]:
        for index in range(len(self)):
            yield {name: values[index] for name, values in self._columns.items()}

    def head(self, n: int = 5) -> "Table":
        """The first `n` rows."""
        return Table({name: values[:n] for name, values in self._columns.items()})

    def stack_rows(self, other: Table, fill: Any = None) -> "Table":
        """The rows of `other` after the rows of this table; missing columns are padded with `fill`."""
        names = self.columns + [name for name in other.columns if name not in self._columns]
        return Table.from_rows({name: row.get(name, fill) for name in names} for part in (self, other) for row in part.rows())

    def filter_rows(self, predicate: Callable[[Row], bool]) -> Self:
        return type(self).from_rows(row for row in self.rows() if predicate(row))

    def sort_by(self, column: str, ascending: bool = True, inplace: bool = False) -> Table | None:
        """Rows ordered by `column`; with `inplace` this table is reordered and None returned."""
        ordered = Table.from_rows(sorted(self.rows(), key=lambda row: row[column], reverse=not ascending))
        if inplace:
            self._columns = ordered._columns
            return None
        return ordered

    def group_by(self, key: str) -> "GroupedTable":
        """The same rows, grouped by the values of column `key`."""
        from .grouped import GroupedTable

        return GroupedTable(self._columns, key=key)

    def pivot(self, index: str, columns: str, values: str, fill: Any = None) -> "Table":
        """One row per `index` value, one column per `columns` value; absent cells hold `fill`."""
        keys = list(dict.fromkeys(self._columns[index]))
        heads = list(dict.fromkeys(str(value) for value in self._columns[columns]))
        cells: dict[tuple[Any, str], Any] = {}
        for row in self.rows():
            cells[(row[index], str(row[columns]))] = row[values]
        data: dict[str, list[Any]] = {index: keys}
        for head in heads:
            data[head] = [cells.get((key, head), fill) for key in keys]
        return Table(data)

    def describe(self, percentiles=None):
        """Count, mean and spread of each numeric column, plus any `percentiles` asked for."""
        summary: dict[str, dict[str, float]] = {}
        for name, values in self._columns.items():
            numbers = [value for value in values if isinstance(value, (int, float))]
            if numbers:
                summary[name] = {
                    "count": float(len(numbers)),
                    "mean": statistics.fmean(numbers),
                    "std": statistics.pstdev(numbers),
                }
                for p in percentiles or ():
                    summary[name][f"p{p}"] = statistics.quantiles(numbers, n=100)[p - 1] if len(numbers) > 1 else numbers[0]
        return summary

    def copy(self) -> "Table":
        """A new table sharing the cell values with this one (3.0 copies the values too)."""
        return Table(self._columns)

    @deprecated("Table.to_records is deprecated; iterate over Table.rows instead")
    def to_records(self) -> list[Row]:
        return list(self.rows())

    def __repr__(self) -> str:
        return f"Table(columns={self.columns!r}, rows={len(self)})"
