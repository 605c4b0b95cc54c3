"""heronframe: small, dependency-light tables for field data (release 3.0)."""

from . import viz
from .core.grouped import GroupedTable
from .core.table import Table
from .io import read_table, write_table
from .ops import merge_tables
from .store import Store, open_store

__version__ = "3.0.0"

__all__ = [
    "GroupedTable",
    "Store",
    "Table",
    "merge_tables",
    "open_store",
    "read_table",
    "write_table",
]


def __getattr__(name):
    if name == "stack":
        raise AttributeError("heronframe.stack was removed in 3.0; use Table.append_rows")
    raise AttributeError(f"module 'heronframe' has no attribute {name!r}")
