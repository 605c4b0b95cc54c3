"""Reading and writing delimited text files."""

from __future__ import annotations

import csv
from pathlib import Path

from ._compat import warn_deprecated
from .core.table import Table


def _sniff_separator(path: str | Path) -> str:
    """The delimiter of a text file, guessed from its first 4 KiB."""
    with open(path, newline="", encoding="utf-8") as handle:
        return csv.Sniffer().sniff(handle.read(4096)).delimiter


def read_table(path: str | Path, sep: str | None = None, header: bool = True, encoding: str = "utf-8") -> Table:
    """Read a delimited file; with `sep=None` (the default since 3.0) the delimiter is sniffed."""
    if sep is None:
        sep = _sniff_separator(path)
    with open(path, newline="", encoding=encoding) as handle:
        rows = list(csv.reader(handle, delimiter=sep))
    if not rows:
        return Table()
    names = rows[0] if header else [f"col{i}" for i in range(len(rows[0]))]
    body = rows[1:] if header else rows
    return Table({name: [row[i] for row in body] for i, name in enumerate(names)})


def write_table(table: Table, path: str | Path, sep: str = ",", index: str | None = None) -> None:
    if index is not None:
        warn_deprecated("write_table(index=...)", "Table.copy() before writing")
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, delimiter=sep)
        writer.writerow(table.columns)
        for row in table.rows():
            writer.writerow([row[name] for name in table.columns])
