"""heronframe: small, dependency-light tables for field data (release 2.4)."""

from . import plotting
from .core.grouped import GroupedTable
from .core.table import Table
from .io import read_table, write_table
from .ops import merge_tables, stack
from .store import Store, open_store

__version__ = "2.4.0"

__all__ = [
    "GroupedTable",
    "Store",
    "Table",
    "merge_tables",
    "open_store",
    "read_table",
    "stack",
    "write_table",
]
