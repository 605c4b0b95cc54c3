"""A token-level fallback for files libcst cannot parse, such as Python 2 sources.

libcst parses Python 3 only, and Python's own `tokenize` stops at Python 2 spellings (`ur''`
strings, backtick repr, `0777` octals). Old downstream code still calls the library, so these
files are scanned with a small, tolerant scanner that knows just enough lexical structure to keep
strings and comments apart from code. What it finds can only be a `possible` reference: there is
no binding or type information, just an identifier that is spelled like a changed member.

Rules:

- a file that does not import the library (`import lib`, `import lib.sub as x`,
  `from lib[.sub] import ...`) has no hits at all;
- an identifier in `names` is a hit where it is an attribute (`anything.name`), where a
  `from lib... import name` statement imports it, and where it is used as a bare name that such
  a statement bound (through its alias too, `from lib import name as other`, or through
  `from lib import *`);
- identifiers inside strings and comments are never hits, nor are definitions (`def name`,
  `class name`), bare names being assigned (`name = ...`) or keyword argument names.
"""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass

from impactscope.errors import InputError

__all__ = ["LegacyError", "LegacyHit", "legacy_hits"]


class LegacyError(InputError):
    """The library or member names given to the legacy scan are not identifiers."""


@dataclass(frozen=True, order=True)
class LegacyHit:
    """One possible reference: 1-based `line`, 0-based `column` (as in libcst) of `name`.

    `name` is the member name from `names`. `dotted` is the dotted identifier chain as written
    and ending at the hit (`hf.Table.stack_rows`); it starts with "." when the receiver is not a
    plain name (`read().stack_rows` gives ".stack_rows"). In an import statement it is the
    imported module path plus the name (`heronframe.stack_rows`); for a bare name bound by an
    aliasing import it is the alias as written.
    """

    line: int
    column: int
    name: str
    dotted: str


# --- scanning ---------------------------------------------------------------------------------

_NAME, _OP, _STRING, _NUMBER, _NEWLINE = "name", "op", "string", "number", "newline"

# String prefixes of Python 2 and 3, compared in lower case: u'', r'', b'', ur'', br'', rb'', f''.
_STRING_PREFIXES = frozenset({"r", "u", "b", "f", "br", "rb", "ur", "fr", "rf"})
_OPS3 = frozenset({"**=", "//=", ">>=", "<<=", "..."})
_OPS2 = frozenset(
    {"==", "!=", "<>", "<=", ">=", "**", "//", "<<", ">>", "->", "+=", "-=", "*=", "/=", "%=",
     "&=", "|=", "^=", "@=", ":="}
)
_OPENERS, _CLOSERS = frozenset("([{"), frozenset(")]}")


@dataclass(frozen=True)
class _Token:
    kind: str
    text: str
    line: int
    column: int


class _Scanner:
    """Splits source text into names, operators, literals and logical-line ends.

    Never raises: an unterminated string ends at its line end (or at the end of the text for a
    triple-quoted one), and any unknown character becomes a one-character operator.
    """

    def __init__(self, text: str) -> None:
        self.text = text
        self.pos = 1 if text.startswith("\ufeff") else 0
        self.line = 1
        self.line_start = self.pos
        self.depth = 0
        self.tokens: list[_Token] = []

    def _newline_length(self, at: int) -> int:
        if self.text.startswith("\r\n", at):
            return 2
        return 1 if at < len(self.text) and self.text[at] in "\r\n" else 0

    def _advance_line(self, after: int) -> None:
        self.line += 1
        self.line_start = after

    def _emit(self, kind: str, start: int, end: int, line: int, column: int) -> None:
        self.tokens.append(_Token(kind, self.text[start:end], line, column))

    def scan(self) -> list[_Token]:
        text, n = self.text, len(self.text)
        while self.pos < n:
            i = self.pos
            c = text[i]
            if c in " \t\f\v":
                self.pos += 1
            elif c == "\\" and self._newline_length(i + 1):
                step = self._newline_length(i + 1)
                self.pos = i + 1 + step
                self._advance_line(self.pos)  # explicit line joining
            elif c in "\r\n":
                self.pos = i + self._newline_length(i)
                if self.depth == 0 and self.tokens and self.tokens[-1].kind != _NEWLINE:
                    self.tokens.append(_Token(_NEWLINE, "\n", self.line, i - self.line_start))
                self._advance_line(self.pos)
            elif c == "#":
                while self.pos < n and text[self.pos] not in "\r\n":
                    self.pos += 1
            elif c.isalpha() or c == "_" or (c > "\x7f" and c.isidentifier()):
                j = i + 1
                while j < n and (text[j].isalnum() or text[j] == "_"):
                    j += 1
                if j < n and text[j] in "'\"" and text[i:j].lower() in _STRING_PREFIXES:
                    self._string(i, j)
                else:
                    self._emit(_NAME, i, j, self.line, i - self.line_start)
                    self.pos = j
            elif c in "'\"":
                self._string(i, i)
            elif c.isdigit() or (c == "." and i + 1 < n and text[i + 1].isdigit()):
                self._number(i)
            else:
                self._operator(i)
        return self.tokens

    def _string(self, start: int, quote_at: int) -> None:
        text, n = self.text, len(self.text)
        line, column = self.line, start - self.line_start
        quote = text[quote_at]
        triple = text.startswith(quote * 3, quote_at)
        k = quote_at + (3 if triple else 1)
        while k < n:
            c = text[k]
            if c == "\\":
                # A backslash escapes the next character even in raw strings, as far as finding
                # the end goes (r'\'' is one string); an escaped newline still ends a line.
                step = self._newline_length(k + 1)
                if step:
                    k += 1 + step
                    self._advance_line(k)
                else:
                    k += 2
            elif triple and text.startswith(quote * 3, k):
                k += 3
                break
            elif not triple and c == quote:
                k += 1
                break
            elif c in "\r\n":
                if not triple:
                    break  # unterminated: the line end closes it
                k += self._newline_length(k)
                self._advance_line(k)
            else:
                k += 1
        self._emit(_STRING, start, min(k, n), line, column)
        self.pos = min(k, n)

    def _number(self, start: int) -> None:
        text, n = self.text, len(self.text)
        k = start + 1
        hexadecimal = text.startswith(("0x", "0X"), start)
        while k < n:
            c = text[k]
            if c.isalnum() or c in "._":
                k += 1
            elif c in "+-" and text[k - 1] in "eE" and not hexadecimal:
                k += 1
            else:
                break
        self._emit(_NUMBER, start, k, self.line, start - self.line_start)
        self.pos = k

    def _operator(self, start: int) -> None:
        text = self.text
        for width, table in ((3, _OPS3), (2, _OPS2)):
            if text[start:start + width] in table:
                break
        else:
            width = 1
            c = text[start]
            if c in _OPENERS:
                self.depth += 1
            elif c in _CLOSERS:
                self.depth = max(0, self.depth - 1)
        self._emit(_OP, start, start + width, self.line, start - self.line_start)
        self.pos = start + width


# --- imports and hits -------------------------------------------------------------------------


def _is_op(tokens: list[_Token], k: int, text: str) -> bool:
    return 0 <= k < len(tokens) and tokens[k].kind == _OP and tokens[k].text == text


def _is_name(tokens: list[_Token], k: int, text: str | None = None) -> bool:
    return 0 <= k < len(tokens) and tokens[k].kind == _NAME and (text is None or tokens[k].text == text)


def _statement_end(tokens: list[_Token], k: int) -> int:
    while k < len(tokens) and tokens[k].kind != _NEWLINE and not _is_op(tokens, k, ";"):
        k += 1
    return k


def _dotted(tokens: list[_Token], k: int, end: int) -> tuple[list[int], int]:
    """Indices of the names of a dotted module path starting at `k`, and the index after it."""
    parts: list[int] = []
    while k < end and _is_name(tokens, k):
        parts.append(k)
        if _is_op(tokens, k + 1, ".") and k + 2 < end:
            k += 2
        else:
            return parts, k + 1
    return parts, k


class _Imports:
    """What the import statements of a file say about the library."""

    def __init__(self, library: str, names: frozenset[str]) -> None:
        self.library = library
        self.names = names
        self.imports_library = False
        self.bare: dict[str, str] = {}  # local name -> member name, from `from lib import ...`
        self.statement_tokens: set[int] = set()  # tokens of import statements, seen by no other rule
        self.hits: list[LegacyHit] = []

    def is_library(self, module: str) -> bool:
        return module == self.library or module.startswith(self.library + ".")

    def path_hits(self, tokens: list[_Token], parts: list[int]) -> None:
        """Hits on the components of an imported library module path (`import lib.io`)."""
        for position in range(1, len(parts)):
            token = tokens[parts[position]]
            if token.text in self.names:
                dotted = ".".join(tokens[p].text for p in parts[: position + 1])
                self.hits.append(LegacyHit(token.line, token.column, token.text, dotted))

    def read(self, tokens: list[_Token]) -> None:
        k = 0
        while k < len(tokens):
            starts_statement = k == 0 or tokens[k - 1].kind == _NEWLINE or _is_op(tokens, k - 1, ";") or _is_op(tokens, k - 1, ":")
            if starts_statement and _is_name(tokens, k, "import"):
                k = self._import(tokens, k)
            elif starts_statement and _is_name(tokens, k, "from"):
                k = self._from_import(tokens, k)
            else:
                k += 1

    def _import(self, tokens: list[_Token], k: int) -> int:
        end = _statement_end(tokens, k)
        self.statement_tokens.update(range(k, end))
        j = k + 1
        while j < end:
            parts, j = _dotted(tokens, j, end)
            if parts:
                module = ".".join(tokens[p].text for p in parts)
                if self.is_library(module):
                    self.imports_library = True
                    self.path_hits(tokens, parts)
            if _is_name(tokens, j, "as"):
                j += 2
            while j < end and not _is_op(tokens, j, ","):
                j += 1
            j += 1
        return end

    def _from_import(self, tokens: list[_Token], k: int) -> int:
        end = _statement_end(tokens, k)
        j = k + 1
        relative = False
        while j < end and tokens[j].kind == _OP and tokens[j].text in (".", "..."):
            relative = True
            j += 1
        parts, j = _dotted(tokens, j, end)
        if not _is_name(tokens, j, "import"):
            return k + 1  # `raise E from e`, `yield from x`: not an import
        self.statement_tokens.update(range(k, end))
        module = ".".join(tokens[p].text for p in parts)
        if relative or not parts or not self.is_library(module):
            return end
        self.imports_library = True
        self.path_hits(tokens, parts)
        j += 1
        while j < end:
            if _is_op(tokens, j, "*"):
                self.bare.update({name: name for name in self.names})
            elif _is_name(tokens, j):
                imported = tokens[j]
                local = imported.text
                if _is_name(tokens, j + 1, "as") and _is_name(tokens, j + 2):
                    local = tokens[j + 2].text
                    j += 2
                if imported.text in self.names:
                    self.bare[local] = imported.text
                    self.hits.append(
                        LegacyHit(imported.line, imported.column, imported.text, f"{module}.{imported.text}")
                    )
            j += 1
        return end


_DEFINERS = frozenset({"def", "class"})


def _chain(tokens: list[_Token], k: int) -> str:
    """The dotted identifier chain written before and ending at the name at index `k`."""
    parts = [tokens[k].text]
    j = k - 1
    while _is_op(tokens, j, ".") and _is_name(tokens, j - 1):
        parts.append(tokens[j - 1].text)
        j -= 2
    dotted = ".".join(reversed(parts))
    return "." + dotted if _is_op(tokens, j, ".") else dotted


def legacy_hits(text: str, library: str, names: Collection[str]) -> tuple[LegacyHit, ...]:
    """Possible references to `names` in `text`, a file that only a tolerant scan can read.

    `library` is the library's import name (dotted for a subpackage); `names` are the plain
    identifiers of the changed members (the last component of each dotted member name).
    """
    if not all(part.isidentifier() for part in library.split(".")):
        raise LegacyError(f"library must be a dotted import name, got {library!r}")
    wanted = frozenset(names)
    for name in wanted:
        if not isinstance(name, str) or not name.isidentifier():
            raise LegacyError(f"names must be plain identifiers (a.b.c gives c), got {name!r}")
    tokens = _Scanner(text).scan()
    imports = _Imports(library, wanted)
    imports.read(tokens)
    if not imports.imports_library:
        return ()
    hits = set(imports.hits)
    for k, token in enumerate(tokens):
        if token.kind != _NAME or k in imports.statement_tokens:
            continue
        if _is_op(tokens, k - 1, "."):
            if token.text in wanted:
                hits.add(LegacyHit(token.line, token.column, token.text, _chain(tokens, k)))
            continue
        member = imports.bare.get(token.text)
        if member is None:
            continue
        if (k > 0 and tokens[k - 1].kind == _NAME and tokens[k - 1].text in _DEFINERS) or _is_op(tokens, k + 1, "="):
            continue  # a definition, an assignment to the name, or a keyword argument
        hits.add(LegacyHit(token.line, token.column, member, token.text))
    return tuple(sorted(hits))
