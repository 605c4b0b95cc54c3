"""Git-style unified diffs of whole files, as `git apply` reads them.

Lines are bytes split after `\\n` (a CR stays part of its line, as git keeps it); a last line
without `\\n` is marked `\\ No newline at end of file`. Paths are quoted as git quotes them
(C-style, in double quotes, when they hold a control character, `"`, `\\` or a non-ASCII byte).
"""

from __future__ import annotations

import difflib
from typing import Iterable

from impactscope.rewrite.lines import after_newlines

CONTEXT = 3  # lines of context around each change, git's default
_ESCAPES = {0x07: b"\\a", 0x08: b"\\b", 0x09: b"\\t", 0x0A: b"\\n", 0x0B: b"\\v", 0x0C: b"\\f",
            0x0D: b"\\r", 0x22: b'\\"', 0x5C: b"\\\\"}


def quote_path(path: bytes) -> bytes:
    """`path` as git writes it in a patch header (git's quote_c_style with core.quotePath on)."""
    if not any(b < 0x20 or b >= 0x7F or b in (0x22, 0x5C) for b in path):
        return path
    out = bytearray(b'"')
    for b in path:
        if b in _ESCAPES:
            out += _ESCAPES[b]
        elif b < 0x20 or b >= 0x7F:
            out += b"\\%03o" % b
        else:
            out.append(b)
    out += b'"'
    return bytes(out)


def _range(start: int, length: int) -> bytes:
    # As unified diffs write it: a one-line range is its line; an empty one names the line before.
    first = start + 1
    if length == 1:
        return b"%d" % first
    if not length:
        first -= 1
    return b"%d,%d" % (first, length)


def _line(prefix: bytes, line: bytes) -> bytes:
    if line.endswith(b"\n"):
        return prefix + line
    return prefix + line + b"\n\\ No newline at end of file\n"


def file_diff(path: str, old: bytes, new: bytes) -> bytes:
    """The diff of one file at `path` (POSIX, relative to the project root); b"" if equal."""
    if old == new:
        return b""
    a, b = after_newlines(old), after_newlines(new)
    raw = path.encode("utf-8", "surrogateescape")
    name_a, name_b = quote_path(b"a/" + raw), quote_path(b"b/" + raw)
    tab = b"\t" if b" " in raw else b""  # git ends a header name holding a space with a TAB
    out = [b"diff --git " + name_a + b" " + name_b + b"\n", b"--- " + name_a + tab + b"\n",
           b"+++ " + name_b + tab + b"\n"]
    matcher = difflib.SequenceMatcher(None, a, b, autojunk=False)
    for group in matcher.get_grouped_opcodes(CONTEXT):
        first, last = group[0], group[-1]
        out.append(b"@@ -" + _range(first[1], last[2] - first[1]) + b" +" + _range(first[3], last[4] - first[3]) + b" @@\n")
        for tag, i1, i2, j1, j2 in group:
            if tag == "equal":
                out.extend(_line(b" ", line) for line in a[i1:i2])
                continue
            out.extend(_line(b"-", line) for line in a[i1:i2])
            out.extend(_line(b"+", line) for line in b[j1:j2])
    return b"".join(out)


def project_patch(files: Iterable[tuple[str, bytes, bytes]]) -> bytes:
    """One patch for a project: the diffs of its changed files, in path order."""
    return b"".join(file_diff(path, old, new) for path, old, new in sorted(files))
