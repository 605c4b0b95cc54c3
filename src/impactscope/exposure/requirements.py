"""pip requirement and constraints files (`-r`, `-c`, `-e`, continuations, comments, `--pre`)."""

from __future__ import annotations

import posixpath
import re
from collections.abc import Iterable

from packaging.markers import InvalidMarker, Marker
from packaging.utils import (
    InvalidSdistFilename,
    InvalidWheelFilename,
    parse_sdist_filename,
    parse_wheel_filename,
)
from packaging.version import InvalidVersion

from impactscope.exposure.reader import Reader, decode_text


# pip's comment rule: a `#` at the start of a line or after whitespace starts a comment.
COMMENT = re.compile(r"(^|\s+)#.*$")
_URL_SCHEME = re.compile(r"^[A-Za-z][A-Za-z0-9+.-]*:")
_VCS_PREFIX = re.compile(r"^(git|hg|svn|bzr)\+", re.IGNORECASE)
_EGG_FRAGMENT = re.compile(r"[#&]egg=([A-Za-z0-9._-]+)")
_OPTION_START = re.compile(r"\s+-")  # per-requirement options (--hash=...) follow the requirement


def _logical_lines(text: str) -> list[tuple[int, str]]:
    """Join continuation lines and strip comments, as pip does.

    A line ending in `\\` continues on the next, unless it is a whole-line comment; a comment
    line ends a continuation (so the `# via x` lines pip-compile writes after `--hash=... \\`
    close the requirement). Comments are stripped after the lines are joined.
    """
    joined: list[tuple[int, str]] = []
    pending: list[str] = []
    start = 0
    for number, line in enumerate(text.splitlines(), start=1):
        is_comment = COMMENT.match(line) is not None  # a whole-line comment, possibly indented
        if line.endswith("\\") and not is_comment:
            if not pending:
                start = number
            pending.append(line[:-1])
            continue
        if pending:
            pending.append(" " + line if is_comment else line)
            joined.append((start, "".join(pending)))
            pending = []
        else:
            joined.append((number, line))
    if pending:
        joined.append((start, "".join(pending)))
    logical = []
    for number, line in joined:
        line = COMMENT.sub("", line).strip()
        if line:
            logical.append((number, line))
    return logical


_INCLUDE_OPTIONS = {"-r": False, "--requirement": False, "-c": True, "--constraint": True}
_EDITABLE_OPTIONS = ("-e", "--editable")


def _split_option(line: str, names: Iterable[str]) -> tuple[str, str] | None:
    """Match `-r x`, `-rx`, `--requirement x`, `--requirement=x`; return (option, value)."""
    for name in names:
        if name.startswith("--"):
            if line == name or line.startswith(name + " ") or line.startswith(name + "\t") or line.startswith(name + "="):
                return name, line[len(name):].lstrip(" \t=").strip()
        elif line.startswith(name):
            return name, line[len(name):].strip()
    return None


def _direct_reference_name(target: str) -> str | None:
    """The distribution a URL or path refers to: an `#egg=` fragment or an archive file name."""
    egg = _EGG_FRAGMENT.search(target)
    if egg:
        # `#egg=name-1.0` is a legacy spelling; the name is what precedes a version.
        return re.sub(r"-\d.*$", "", egg.group(1))
    last = target.split("#", 1)[0].split("?", 1)[0].rstrip("/").rsplit("/", 1)[-1]
    try:
        if last.endswith(".whl"):
            return str(parse_wheel_filename(last)[0])
        if last.endswith((".tar.gz", ".zip")):
            return str(parse_sdist_filename(last)[0])
    except (InvalidWheelFilename, InvalidSdistFilename, InvalidVersion):
        return None
    return None


def _looks_like_location(text: str) -> bool:
    return bool(_URL_SCHEME.match(text) or _VCS_PREFIX.match(text)) or text.startswith((".", "/", "~")) or "/" in text.split(";")[0].split(" @ ")[0]


def read_requirement_file(path: str, reader: Reader, *, constraint: bool, prereleases: bool = False) -> None:
    key = (path, constraint)
    if key in reader.requirement_files_read:
        return  # already read: includes may repeat or cycle
    reader.requirement_files_read.add(key)
    text = decode_text(path, reader.files[path], reader, allow_cookie=True)
    if text is None:
        return
    lines = _logical_lines(text)
    # `--pre` lets pip pick pre-releases for the whole install.
    prereleases = prereleases or any(line == "--pre" for _, line in lines)
    for number, line in lines:
        source = f"{path}:{number}"
        include = _split_option(line, _INCLUDE_OPTIONS)
        if include is not None:
            option, target = include
            read_included(path, source, target, reader, constraint=constraint or _INCLUDE_OPTIONS[option], prereleases=prereleases)
            continue
        editable = _split_option(line, _EDITABLE_OPTIONS)
        if editable is not None:
            _requirement_line(editable[1], source, reader, constraint=constraint, prereleases=prereleases, editable=True)
            continue
        if line.startswith("-"):
            continue  # --index-url, --hash on its own line, --pre, --find-links, ...: no version information
        _requirement_line(line, source, reader, constraint=constraint, prereleases=prereleases)


def read_included(path: str, source: str, target: str, reader: Reader, *, constraint: bool, prereleases: bool) -> None:
    if not target:
        reader.problem(f"{source}: include option without a file name")
        return
    if _URL_SCHEME.match(target) and not re.match(r"^[A-Za-z]:[\\/]", target):
        reader.problem(f"{source}: remote requirements file {target!r} is not fetched; not read")
        return
    # pip resolves a relative include against the directory of the including file.
    resolved = posixpath.normpath(posixpath.join(posixpath.dirname(path), target.replace("\\", "/")))
    if resolved.startswith("../") or resolved == ".." or posixpath.isabs(resolved) or resolved not in reader.files:
        reader.problem(f"{source}: included file {target!r} is not among the project's manifest files; not read")
        return
    read_requirement_file(resolved, reader, constraint=constraint, prereleases=prereleases)


def _requirement_line(
    line: str, source: str, reader: Reader, *, constraint: bool, prereleases: bool, editable: bool = False
) -> None:
    requirement = _OPTION_START.split(line, maxsplit=1)[0].strip()
    if not requirement:
        return
    if not editable and not _looks_like_location(requirement):
        reader.add_requirement(requirement, source, constraint=constraint, prereleases=prereleases)
        return
    # A location, possibly `name @ url` (PEP 508) or followed by `; marker` (pip wants "; ").
    if " @ " in requirement or re.match(r"^[A-Za-z0-9._-]+(\[[^\]]*\])?\s*@", requirement):
        reader.add_requirement(requirement, source, constraint=constraint, prereleases=prereleases)
        return
    location, _, marker_text = requirement.partition("; ")
    name = _direct_reference_name(location.strip())
    if name is None or not reader.is_target(name):
        return
    marker = None
    if marker_text.strip():
        try:
            marker = Marker(marker_text.strip())
        except InvalidMarker as exc:
            reader.problem(f"{source}: invalid environment marker {marker_text.strip()!r}: {exc}")
    reader.add_direct(requirement, source, constraint=constraint, marker=marker)
