"""The corpus: roots of downstream projects, their files, and the Python text in them."""

from .files import FileRefused, read_regular, refusal
from .limits import Limits, LimitsError
from .roots import CorpusError, Entry, EntryError, Project, check_roots, classify, discover
from .sources import (
    CodeCell,
    Source,
    SourceError,
    decode_python,
    looks_like_python2,
    read_notebook,
    read_python,
)

__all__ = [
    "CodeCell",
    "CorpusError",
    "Entry",
    "EntryError",
    "FileRefused",
    "Limits",
    "LimitsError",
    "Project",
    "Source",
    "SourceError",
    "check_roots",
    "classify",
    "decode_python",
    "discover",
    "looks_like_python2",
    "read_notebook",
    "read_python",
    "read_regular",
    "refusal",
]
