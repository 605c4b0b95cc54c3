"""Why a file of a corpus was skipped or not parsed: `Reason`, one value per cause.

The stages that decide (the corpus readers and limits, the source decoders, the scan's guards,
the resolver, the executor) name a member; the results file, the JSON report and every printed
text hold its value, so the values are part of the results format and never change.
docs/corpus.md lists them with the status each goes with.
"""

from __future__ import annotations

import enum

__all__ = ["Reason", "reason_of"]


class Reason(enum.StrEnum):
    """The reason in a `FileOutcome`; a StrEnum, so its text is its value wherever it is shown."""

    # Skipped on purpose, by where the file lies or what it is (corpus.classification).
    VERSION_CONTROL = "version control"  # under .git, .hg or .svn
    CACHE = "cache"  # under __pycache__, .ipynb_checkpoints, .mypy_cache, .pytest_cache, .tox
    NODE_MODULES = "node modules"  # under node_modules
    VIRTUAL_ENVIRONMENT = "virtual environment"  # in a virtual environment or site-packages
    VENDORED_LIBRARY = "vendored library"  # in a copy of the library the project carries
    NOT_SOURCE = "not source"  # neither a .py nor a .ipynb file

    # Skipped: a bound of corpus.limits.Limits reached (the field is in brackets).
    TOO_LARGE = "too large"  # a file over file_bytes, notebooks aside
    NOTEBOOK_TOO_LARGE = "notebook too large"  # a notebook over notebook_bytes, outputs included
    NOTEBOOK_CODE_TOO_LARGE = "notebook code too large"  # a notebook's code cells over notebook_code_bytes
    ARCHIVE_TOO_LARGE = "archive too large"  # a zip inside an archive root over archive_bytes
    COMPRESSION_RATIO = "compression ratio"  # an archive member that inflates past ratio
    TOO_MANY_MEMBERS = "too many members"  # the rest of an archive past members
    NESTED_TOO_DEEP = "nested too deep"  # an archive inside archives past depth
    OVER_TIME_BUDGET = "over time budget"  # a file whose analysis ran past file_seconds (scan.budget)

    # Skipped: what a folder or archive entry is, not its bytes (corpus.files, corpus.archives).
    SPECIAL_FILE = "special file"  # a FIFO, socket or device, never opened
    LINK_OUTSIDE_CORPUS = "link outside the corpus"  # a link whose target leaves the corpus root
    LINK_OUTSIDE_PROJECT = "link outside the project"  # a link into another project of the root
    ARCHIVE_LINK = "archive link"  # an archive link to a member, which is read as itself
    UNSAFE_PATH = "unsafe path"  # an archive member named absolute, by a drive, or with `..`

    # Skipped: read, but no finding can be in it (scan.prefilter).
    NO_CANDIDATE = "no candidate"  # names no changed member and imports no file that does

    # Unparsed: the bytes could not be had (corpus.entries, corpus.folders, corpus.archives).
    UNREADABLE = "unreadable"  # listed, but its bytes could not be read (I/O error, damaged member)
    CANNOT_READ = "cannot read"  # an OS error while its project was listed (permission denied)
    UNREADABLE_DIRECTORY = "unreadable directory"  # a folder that could not be listed
    BROKEN_LINK = "broken link"  # a link whose target is missing, or a loop
    CORRUPT_ARCHIVE = "corrupt archive"  # an archive, or the rest of one, that fails to read
    ENCRYPTED_MEMBER = "encrypted archive member"  # a zip member that needs a password

    # Unparsed: the bytes are not Python text (corpus.sources).
    ENCODING = "encoding"  # undecodable under its PEP 263 declaration or UTF-8
    INVALID_NOTEBOOK = "invalid notebook"  # a .ipynb that is not a readable notebook

    # Unparsed: the text has no syntax tree (resolve.project, scan.guard); read at token level
    # where the note says so.
    SYNTAX_ERROR = "syntax error"  # libcst refuses it, and it does not look like Python 2
    PYTHON_2 = "python 2"  # libcst refuses it, and it looks like Python 2
    TOO_DEEPLY_NESTED = "too deeply nested"  # nesting that would overflow the parser's stack
    TOO_LARGE_TO_PARSE = "too large to parse"  # more code than Limits.parse_chars

    # Unparsed: a failure of the scan, not of the file; reports list these apart as bugs.
    ANALYSIS_ERROR = "analysis error"  # an unexpected exception met on the file (resolve.faults)
    WORKER_DIED = "worker died"  # its project's worker process died twice (scan.executor)


def reason_of(text: str) -> Reason | str:
    """The member named by `text`, or `text` itself when none is: a results file written by
    another version may hold a reason this one does not have, and it is still shown as is."""
    try:
        return Reason(text)
    except ValueError:
        return text
