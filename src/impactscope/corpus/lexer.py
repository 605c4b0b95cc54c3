"""A tolerant lexer for Python 2 and 3 source: names, operators, literals and logical-line ends.

Python's own `tokenize` stops at the first token the 3.x grammar rejects (from Python 3.12 on),
and those tokens (`ur''` strings, backtick repr, `0777` octals, `10L` longs) are just what a
reading of old code needs to see. This lexer knows only enough lexical structure to keep strings
and comments apart from code, and never raises. It serves the Python 2 test (`sources`) and the
token-level reading of files that do not parse (`resolve.legacy`).
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["NAME", "NEWLINE", "NUMBER", "OP", "OPEN_STRING", "STRING", "Token", "tokens"]

NAME, OP, STRING, NUMBER, NEWLINE = "name", "op", "string", "number", "newline"
OPEN_STRING = "open string"  # a string literal its line (or, triple-quoted, the text) ends inside

# String prefixes of Python 2 and 3, compared in lower case: u'', r'', b'', ur'', br'', rb'', f''.
_STRING_PREFIXES = frozenset({"r", "u", "b", "f", "br", "rb", "ur", "fr", "rf"})
_OPS3 = frozenset({"**=", "//=", ">>=", "<<=", "..."})
_OPS2 = frozenset(
    {"==", "!=", "<>", "<=", ">=", "**", "//", "<<", ">>", "->", "+=", "-=", "*=", "/=", "%=",
     "&=", "|=", "^=", "@=", ":="}
)
_OPENERS, _CLOSERS = frozenset("([{"), frozenset(")]}")


@dataclass(frozen=True)
class Token:
    """One token: `line` 1-based, `column` 0-based (as in libcst); `depth` the bracket depth
    before it. A string's `text` is the whole literal, prefix and quotes included."""

    kind: str  # NAME, OP, STRING, OPEN_STRING, NUMBER or NEWLINE (a logical line's end, at depth 0)
    text: str
    line: int
    column: int
    depth: int = 0


class _Lexer:
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
        self.tokens: list[Token] = []

    def _newline_length(self, at: int) -> int:
        if self.text.startswith("\r\n", at):
            return 2
        return 1 if at < len(self.text) and self.text[at] in "\r\n" else 0

    def _advance_line(self, after: int) -> None:
        self.line += 1
        self.line_start = after

    def _emit(self, kind: str, start: int, end: int, line: int, column: int) -> None:
        self.tokens.append(Token(kind, self.text[start:end], line, column, self.depth))

    def scan(self) -> list[Token]:
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
                if self.depth == 0 and self.tokens and self.tokens[-1].kind != NEWLINE:
                    self.tokens.append(Token(NEWLINE, "\n", self.line, i - self.line_start))
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
                    self._emit(NAME, i, j, self.line, i - self.line_start)
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
        closed = False
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
                closed = True
                break
            elif not triple and c == quote:
                k += 1
                closed = True
                break
            elif c in "\r\n":
                if not triple:
                    break  # unterminated: the line end closes it
                k += self._newline_length(k)
                self._advance_line(k)
            else:
                k += 1
        self._emit(STRING if closed else OPEN_STRING, start, min(k, n), line, column)
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
        self._emit(NUMBER, start, k, self.line, start - self.line_start)
        self.pos = k

    def _operator(self, start: int) -> None:
        text = self.text
        for width, table in ((3, _OPS3), (2, _OPS2)):
            if text[start:start + width] in table:
                break
        else:
            width = 1
        self._emit(OP, start, start + width, self.line, start - self.line_start)
        if width == 1 and text[start] in _OPENERS:
            self.depth += 1
        elif width == 1 and text[start] in _CLOSERS:
            self.depth = max(0, self.depth - 1)
        self.pos = start + width


def tokens(text: str) -> list[Token]:
    """The tokens of `text`: comments and white space dropped, a NEWLINE after each logical line
    (none inside brackets or after a backslash continuation)."""
    return _Lexer(text).scan()
