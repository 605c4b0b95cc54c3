"""How an unexpected failure while analysing one file is recorded: the file, not the scan, pays.

A bug in the resolver (or in narrowing, positions, the notebook transform) met on one file marks
that file unparsed with reason `Reason.ANALYSIS_ERROR` and a one-line detail: the exception, where in the
analysed file it was met when that is known, and where in impactscope it was raised, which is
what a bug report needs.
"""

from __future__ import annotations

import os
import traceback

import libcst as cst

_DETAIL_LIMIT = 300


def statement_line(module: cst.Module, statement: cst.CSTNode | None) -> int | None:
    """The 1-based line on which `statement`, a top-level statement of `module`, starts."""
    if statement is None:
        return None
    line = 1 + sum(module.code_for_node(empty).count("\n") for empty in module.header)
    for node in module.body:
        if node is statement:
            leading = getattr(node, "leading_lines", ())
            return line + len(leading)
        line += module.code_for_node(node).count("\n")
    return None


def _raised_at(exc: BaseException) -> str:
    """The innermost frame of impactscope's own code the exception passed through."""
    frames = traceback.extract_tb(exc.__traceback__)
    ours = [f for f in frames if f"{os.sep}impactscope{os.sep}" in f.filename]
    frame = (ours or frames or [None])[-1]
    if frame is None:
        return ""
    path = frame.filename.replace(os.sep, "/")
    short = path.rsplit("/impactscope/", 1)[-1]
    return f"{short}:{frame.lineno}"


def describe(exc: BaseException, *, stage: str, line: int | None = None, cell: int | None = None) -> str:
    """One line: `stage: Type: message (cell C, statement at line N; raised at module.py:L)`."""
    message = " ".join(str(exc).split())
    head = f"{stage}: {type(exc).__name__}" + (f": {message}" if message else "")
    where = []
    if cell is not None:
        where.append(f"cell {cell}")
    if line is not None:
        where.append(f"statement at line {line}")
    place = ", ".join(where)
    raised = _raised_at(exc)
    tail = "; ".join(part for part in (place, f"raised at {raised}" if raised else "") if part)
    if len(head) > _DETAIL_LIMIT:
        head = head[: _DETAIL_LIMIT - 3] + "..."
    return f"{head} ({tail})" if tail else head


__all__ = ["describe", "statement_line"]
