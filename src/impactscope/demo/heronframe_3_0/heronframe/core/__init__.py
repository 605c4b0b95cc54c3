"""The table types and their methods."""

from .table import Table

__all__ = ["Table"]
