"""A folder of named tables."""

from __future__ import annotations

from pathlib import Path
from types import TracebackType

from .core.table import Table
from .io import read_table, write_table


class Store:
    """Tables saved as `<key>.csv` files under one folder."""

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)

    def keys(self) -> list[str]:
        return sorted(item.stem for item in self.path.glob("*.csv"))

    def load(self, key: str) -> Table:
        return read_table(self.path / f"{key}.csv", sep=",")

    def save(self, key: str, table: Table) -> None:
        self.path.mkdir(parents=True, exist_ok=True)
        write_table(table, self.path / f"{key}.csv")

    def close(self) -> None:
        """Nothing to release in 2.4; kept for the context-manager protocol."""

    def __enter__(self) -> Store:
        return self

    def __exit__(
        self, kind: type[BaseException] | None, value: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.close()


def open_store(path: str | Path) -> Store:
    return Store(path)
