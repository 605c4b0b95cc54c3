"""The corpus: roots of downstream projects, their files, and the Python text in them."""

from .files import FileRefused, read_regular, refusal
from .limits import Limits, LimitsError
from .classification import classify
from .entries import CorpusError, Entry, EntryError, Project
from .roots import NotAProject, check_roots, discover, survey
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
    "NotAProject",
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
    "survey",
]
