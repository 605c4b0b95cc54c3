"""A folder of named tables, kept in memory until saved."""

from __future__ import annotations

from pathlib import Path
from types import TracebackType
from typing import Optional, Union

from .core.table import Table
from .io import read_table, write_table


class Store:
    """Tables saved as `<key>.csv` files under one folder."""

    def __init__(self, path: str | Path, mode: str = "r") -> None:
        self.path = Path(path)
        self.mode = mode
        self._tables: dict[str, Table] = {}

    def keys(self) -> list[str]:
        return sorted(set(self._tables) | {item.stem for item in self.path.glob("*.csv")})

    def load(self, key: str) -> Table:
        """The table saved under `key`, read from disk on first use."""
        if key not in self._tables:
            self._tables[key] = read_table(self.path / f"{key}.csv", sep=",")
        return self._tables[key]

    def get(self, key: str) -> Optional["Table"]:
        return self._tables.get(key)

    def find(self, prefix: str) -> Union[Table, None]:
        for key, table in self._tables.items():
            if key.startswith(prefix):
                return table
        return None

    def put(self, key: str, table: Table) -> None:
        self._tables[key] = table

    def close(self) -> None:
        """Write the tables back (mode "w") and forget them."""
        if self.mode == "w":
            self.path.mkdir(parents=True, exist_ok=True)
            for key, table in self._tables.items():
                write_table(table, self.path / f"{key}.csv")
        self._tables.clear()

    def __enter__(self) -> Store:
        return self

    def __exit__(
        self, kind: type[BaseException] | None, value: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.close()


def open_store(path: str | Path, mode: str = "r") -> Store:
    return Store(path, mode)
