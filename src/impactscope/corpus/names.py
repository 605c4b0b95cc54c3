"""Names in a corpus: archive suffixes, source suffixes, member names, and names shown to people.

An archive project's file paths are relative to the archive, except in the
layout of source distributions and code-hosting downloads: when the archive's
name without extension is not a Python identifier (`pkg-1.0`, `repo-main`)
and a top folder has that same name, the paths of the members under that
folder are relative to it (`pkg-1.0/setup.py` becomes `setup.py`). A name that
is an identifier could be a package folder, so it is never taken off.

File names that are not valid UTF-8 are shown with the bad bytes escaped (`\\xff`),
so that two different names never show alike.
"""

from __future__ import annotations

import re

# Longest first, so that ".tar.gz" is taken off whole.
ARCHIVE_SUFFIXES = (".tar.gz", ".tar.bz2", ".tar.xz", ".tgz", ".tar", ".zip", ".whl")
# A wheel is a zip archive (PEP 427).
_ZIP_SUFFIXES = (".zip", ".whl")
SOURCE_SUFFIXES = frozenset({".py", ".ipynb"})

def archive_stem(name: str) -> str | None:
    """`name` without its archive extension, or None if it is not an archive name."""
    lowered = name.lower()
    for suffix in ARCHIVE_SUFFIXES:
        if lowered.endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)]
    return None


def is_zip_name(name: str) -> bool:
    return name.lower().endswith(_ZIP_SUFFIXES)


def is_wheel_name(name: str) -> bool:
    return name.lower().endswith(".whl")


def top_folder(name: str) -> tuple[str, ...]:
    """The folder that the paths of archive `name`'s members are relative to, if present
    (see the module docstring): its stem, unless the stem could be a package name."""
    stem = archive_stem(name)
    if stem is None or stem.isidentifier() or is_wheel_name(name):
        return ()
    return (stem,)


def display(name: str) -> str:
    """A file name as valid text: bytes that did not decode (kept by the OS and
    tarfile as surrogate escapes) are shown escaped (`\\xff`), so reports can
    encode the name and two different names never show alike."""
    try:
        raw = name.encode("utf-8", "surrogateescape")
    except UnicodeEncodeError:  # a surrogate no decoder made (a PAX or zip name can hold one)
        raw = name.encode("utf-8", "surrogatepass")
    return raw.decode("utf-8", "backslashreplace")


def is_source_name(name: str) -> bool:
    dot = name.rfind(".")
    return dot > 0 and name[dot:] in SOURCE_SUFFIXES


DRIVE = re.compile(r"[A-Za-z]:")


def member_parts(name: str) -> tuple[str, ...] | None:
    """The path segments of an archive member name, or None if the name is unsafe
    (absolute, with a drive letter, or climbing out with `..`)."""
    name = name.replace("\\", "/")
    if name.startswith("/") or DRIVE.match(name):
        return None
    parts = tuple(part for part in name.split("/") if part not in ("", "."))
    return None if ".." in parts else parts


def member_head(name: str) -> str | None:
    """The top-level segment that places a member in a project of an archive root.

    Members under `/`, `..` or a drive letter belong to no project; unsafe
    names under an ordinary top folder belong to that folder's project.
    """
    parts = [part for part in name.replace("\\", "/").split("/") if part != "."]
    head = parts[0] if parts else ""
    if head in ("", "..") or DRIVE.fullmatch(head):
        return None
    return head


def join(directory: str, name: str) -> str:
    return f"{directory}/{name}" if directory else name

