"""The table type and its methods."""

from .table import Table

__all__ = ["Table"]
