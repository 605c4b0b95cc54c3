"""A module's bytes read safely (a regular file inside the source, bounded) and parsed with `ast`;
its text kept for slices and digests."""

from __future__ import annotations

import ast
import errno
import hashlib
import io
import tokenize
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass

from impactscope.corpus.files import FileRefused, read_regular
from .discovery import ModuleFile, OUTSIDE_LIBRARY
from .model import Problem
from .syntax import TRIVIAL


# A module larger than this is not read (the largest of pandas 1.5.3, core/generic.py, is 0.43 MB;
# a generated 20 MB one would cost gigabytes of syntax tree).
MODULE_BYTES = 5_000_000


class SourceText:
    """The bytes of a module, for slicing out default values and digesting bodies."""

    __slots__ = ("lines",)

    def __init__(self, data: bytes) -> None:
        encoding = "utf-8"
        try:
            encoding = tokenize.detect_encoding(io.BytesIO(data).readline)[0]
        except SyntaxError:
            pass
        if encoding == "utf-8-sig":
            data = data.removeprefix(b"\xef\xbb\xbf")
        elif encoding != "utf-8":
            # ast column offsets count UTF-8 bytes of the decoded text.
            data = data.decode(encoding, "replace").encode("utf-8")
        self.lines = data.splitlines(keepends=True)

    def segment(self, node: ast.expr) -> str:
        start, end = node.lineno - 1, (node.end_lineno or node.lineno) - 1
        if start == end and 0 <= start < len(self.lines):
            return self.lines[start][node.col_offset : node.end_col_offset].decode("utf-8", "replace")
        return ast.unparse(node)  # spans lines: a normalised one-line form reads better

    def digest(self, first: int, col: int, last: int) -> str:
        chunk = self.lines[first:last]
        if chunk:
            chunk[0] = chunk[0][col:]
        text = b"\n".join(s for s in (line.strip() for line in chunk) if s and not s.startswith(b"#"))
        if text in TRIVIAL:
            return ""
        return hashlib.blake2b(text, digest_size=8).hexdigest()

    def body_shape(self, node: ast.FunctionDef | ast.AsyncFunctionDef) -> str:
        body = node.body
        if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant) and isinstance(body[0].value.value, str):
            body = body[1:]  # a docstring is not part of the shape
        if not body:
            return ""
        first = body[0]
        line = min([first.lineno, *(d.lineno for d in getattr(first, "decorator_list", ()))])
        col = first.col_offset if line == first.lineno else 0
        return self.digest(line - 1, col, node.end_lineno or line)


@dataclass(frozen=True)
class ParsedModule:
    file: ModuleFile
    tree: ast.Module
    text: SourceText


def iter_parsed(files: Iterable[ModuleFile], problems: list[Problem],
                wanted: Callable[[bytes], bool] | None = None) -> Iterator[ParsedModule]:
    """Parse modules one at a time; one that cannot be read is appended to `problems` instead.

    Yielding one tree at a time keeps memory flat: the collector would otherwise spend most of
    the build walking millions of live AST nodes. `wanted`, when given, sees each file's bytes
    first; a file it turns down is not parsed (nor yielded).
    """
    for f in files:
        if f.path is None:
            if wanted is None:
                yield ParsedModule(f, ast.Module(body=[], type_ignores=[]), SourceText(b""))
            continue
        try:
            data = read_regular(str(f.path), MODULE_BYTES, reason="module too large", outside=OUTSIDE_LIBRARY)
            if wanted is not None and not wanted(data):
                continue
            tree = ast.parse(data, filename=str(f.path))
        except FileRefused as exc:
            problems.append(Problem(f.name, str(f.path), f"not read: {exc.detail}"))
            continue
        except SyntaxError as exc:
            problems.append(Problem(f.name, str(f.path), f"syntax error at line {exc.lineno}: {exc.msg}"))
            continue
        except (ValueError, UnicodeDecodeError) as exc:
            problems.append(Problem(f.name, str(f.path), f"cannot decode the source: {exc}"))
            continue
        except RecursionError:
            problems.append(Problem(f.name, str(f.path), "nested too deeply to parse"))
            continue
        except OSError as exc:
            if exc.errno == errno.ELOOP:  # opened without following a link: one leading out
                problems.append(Problem(f.name, str(f.path), f"not read: {OUTSIDE_LIBRARY}"))
                continue
            problems.append(Problem(f.name, str(f.path), f"cannot read the file: {exc.strerror or exc}"))
            continue
        yield ParsedModule(f, tree, SourceText(data))


def parse_modules(files: Sequence[ModuleFile]) -> tuple[list[ParsedModule], list[Problem]]:
    """Parse every module and keep the trees (for callers that walk them again, like harvest)."""
    problems: list[Problem] = []
    parsed = list(iter_parsed(files, problems))
    return parsed, problems
