"""`Table`: named columns of equal length, held as plain Python lists."""

from __future__ import annotations

import statistics
import warnings
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from typing import Any

Row = dict[str, Any]


class Table:
    """An ordered mapping of column name to a list of values."""

    def __init__(self, data: Mapping[str, Sequence[Any]] | None = None) -> None:
        columns = {str(name): list(values) for name, values in (data or {}).items()}
        lengths = {len(values) for values in columns.values()}
        if len(lengths) > 1:
            raise ValueError(f"columns differ in length: {sorted(lengths)}")
        self._columns: dict[str, list[Any]] = columns

    @classmethod
    def from_rows(cls, rows: Iterable[Mapping[str, Any]]) -> Table:
        rows = list(rows)
        names = list(dict.fromkeys(name for row in rows for name in row))
        return cls({name: [row.get(name) for row in rows] for name in names})

    @property
    def columns(self) -> list[str]:
        return list(self._columns)

    def __len__(self) -> int:
        return len(next(iter(self._columns.values()), []))

    def __getitem__(self, name: str) -> list[Any]:
        return self._columns[name]

    def rows(self) -> Iterator[Row]:
        for index in range(len(self)):
            yield {name: values[index] for name, values in self._columns.items()}

    def append_rows(self, other: Table) -> Table:
        """A new table with the rows of `other` after the rows of this one."""
        return Table.from_rows([*self.rows(), *other.rows()])

    def stack_rows(self, other: Table) -> Table:
        """Deprecated since 2.4: use `append_rows`; removed in 3.0."""
        warnings.warn(
            "Table.stack_rows is deprecated; use Table.append_rows", DeprecationWarning, stacklevel=2
        )
        return self.append_rows(other)

    def filter_rows(self, predicate: Callable[[Row], bool]) -> Table:
        return Table.from_rows(row for row in self.rows() if predicate(row))

    def sort_by(self, by: str, ascending: bool = True, inplace: bool = False) -> Table:
        """Rows ordered by column `by`. `inplace` goes away in 3.0: tables become immutable."""
        ordered = sorted(self.rows(), key=lambda row: row[by], reverse=not ascending)
        result = Table.from_rows(ordered)
        if inplace:
            self._columns = result._columns
            return self
        return result

    def copy(self) -> Table:
        """A new table sharing the cell values (in 3.0 the values are copied too)."""
        return Table(self._columns)

    def pivot(self, index: str, columns: str, values: str, fill: Any = None) -> Table:
        """One row per `index` value, one column per `columns` value (`fill` becomes `fill_value` in 3.0)."""
        keys = list(dict.fromkeys(self._columns[index]))
        heads = list(dict.fromkeys(str(value) for value in self._columns[columns]))
        cells: dict[tuple[Any, str], Any] = {}
        for row in self.rows():
            cells[(row[index], str(row[columns]))] = row[values]
        data: dict[str, list[Any]] = {index: keys}
        for head in heads:
            data[head] = [cells.get((key, head), fill) for key in keys]
        return Table(data)

    def describe(self) -> dict[str, dict[str, float]]:
        """Count, mean and spread of each numeric column (3.0 adds median and skips NaN)."""
        summary: dict[str, dict[str, float]] = {}
        for name, values in self._columns.items():
            numbers = [value for value in values if isinstance(value, (int, float))]
            if numbers:
                summary[name] = {
                    "count": float(len(numbers)),
                    "mean": statistics.fmean(numbers),
                    "std": statistics.pstdev(numbers),
                }
        return summary

    def __repr__(self) -> str:
        return f"Table(columns={self.columns!r}, rows={len(self)})"
