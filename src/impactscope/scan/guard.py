"""Code libcst must not be given: nested so deeply that its native parser would overflow its stack
and kill the process, or so large that its tree would take gigabytes.

libcst parses with a recursive-descent parser in native code; on this machine it died with
SIGSEGV at about 1,280 nested brackets, 3,500 nested lambdas and 8,200 stacked unary operators
(measured with libcst 1.9.0, one subprocess per depth). CPython's own parser refuses more than
200 nested brackets ("too many nested parentheses") and turns runaway recursion into
RecursionError or MemoryError, so it is the judge: code it refuses for depth is refused here
before libcst sees it. Asking CPython costs a parse, so it is asked only when a count of the
characters and words that build such depth reaches a level that real code rarely does.
"""

from __future__ import annotations

import ast
import re
import warnings

# A file below all three counts cannot reach the depths above (each level needs one of these).
OPENERS = 1_000  # "(", "[", "{"
LAMBDAS = 1_000  # "lambda"
PREFIX = 4_000  # "-", "+", "~", "not"
# An attribute chain `x.a.a.a...` nests one level per dot, which CPython's parser accepts far past
# where libcst's dies (measured here: libcst 1.x fine at 5,000 links, killed by SIGSEGV at 8,000;
# CPython's ast fine at 10,000). A chain this long is refused before either parser sees it.
CHAIN = 4_000
_CHAIN = re.compile(r"(?:\.[^\W\d]\w*){%d}" % CHAIN)

# libcst builds about 1 KB of Python objects per character it parses, and its native parser cannot
# be stopped by the time budget (measured here, libcst 1.x: a module of 373 KB took 12 s and 374 MB,
# one list display of 420 KB 16.5 s and 461 MB). A file (or a notebook's cells together) with more
# characters of code than Limits.parse_chars is read at token level instead. Spaces, tabs and
# newlines are not counted: narrowing leaves blank lines behind, and they cost libcst next to
# nothing. The most libcst was given from one file of the real-world corpus was 123,809
# (EoN/analytic.py, whole).
_WHITESPACE = (" ", "\t", "\n")


def code_size(code: str) -> int:
    """What parsing `code` costs libcst, in characters that are not spaces, tabs or newlines."""
    return len(code) - sum(code.count(blank) for blank in _WHITESPACE)


def _may_be_deep(code: str) -> bool:
    return (
        code.count("(") + code.count("[") + code.count("{") >= OPENERS
        or code.count("lambda") >= LAMBDAS
        or code.count("-") + code.count("+") + code.count("~") + code.count("not") >= PREFIX
    )


def too_deep(code: str) -> bool:
    """Whether `code` is nested deeper than CPython's parser allows (so not valid Python), which
    is also where libcst's native parser could crash."""
    if code.count(".") >= CHAIN and _CHAIN.search(code):
        return True
    if not _may_be_deep(code):
        return False
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # invalid escapes and the like: not our question
            ast.parse(code)
    except (RecursionError, MemoryError):
        return True
    except SyntaxError as exc:
        return "too many nested" in str(exc.msg) or "too many levels" in str(exc.msg)
    except ValueError:  # null bytes: libcst refuses them by itself
        return False
    return False


__all__ = ["code_size", "too_deep"]
