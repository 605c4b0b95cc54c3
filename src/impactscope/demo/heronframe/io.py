"""Reading and writing delimited text files."""

from __future__ import annotations

import csv
from pathlib import Path

from .core.table import Table


def read_table(path: str | Path, sep: str = ",", header: bool = True, encoding: str = "utf-8") -> Table:
    """Read a delimited file. In 3.0 `sep` defaults to None: the delimiter is sniffed."""
    with open(path, newline="", encoding=encoding) as handle:
        rows = list(csv.reader(handle, delimiter=sep))
    if not rows:
        return Table()
    names = rows[0] if header else [f"col{i}" for i in range(len(rows[0]))]
    body = rows[1:] if header else rows
    return Table({name: [row[i] for row in body] for i, name in enumerate(names)})


def write_table(table: Table, path: str | Path, sep: str = ",") -> None:
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, delimiter=sep)
        writer.writerow(table.columns)
        for row in table.rows():
            writer.writerow([row[name] for name in table.columns])
