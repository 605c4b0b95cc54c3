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

from impactscope.corpus import lexer
from impactscope.corpus.lexer import NAME, NEWLINE, OP, Token
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


# --- imports and hits -------------------------------------------------------------------------


def _is_op(tokens: list[Token], k: int, text: str) -> bool:
    return 0 <= k < len(tokens) and tokens[k].kind == OP and tokens[k].text == text


def _is_name(tokens: list[Token], k: int, text: str | None = None) -> bool:
    return 0 <= k < len(tokens) and tokens[k].kind == NAME and (text is None or tokens[k].text == text)


def _statement_end(tokens: list[Token], k: int) -> int:
    while k < len(tokens) and tokens[k].kind != NEWLINE and not _is_op(tokens, k, ";"):
        k += 1
    return k


def _dotted(tokens: list[Token], k: int, end: int) -> tuple[list[int], int]:
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

    def path_hits(self, tokens: list[Token], parts: list[int]) -> None:
        """Hits on the components of an imported library module path (`import lib.io`)."""
        for position in range(1, len(parts)):
            token = tokens[parts[position]]
            if token.text in self.names:
                dotted = ".".join(tokens[p].text for p in parts[: position + 1])
                self.hits.append(LegacyHit(token.line, token.column, token.text, dotted))

    def read(self, tokens: list[Token]) -> None:
        k = 0
        while k < len(tokens):
            starts_statement = k == 0 or tokens[k - 1].kind == NEWLINE or _is_op(tokens, k - 1, ";") or _is_op(tokens, k - 1, ":")
            if starts_statement and _is_name(tokens, k, "import"):
                k = self._import(tokens, k)
            elif starts_statement and _is_name(tokens, k, "from"):
                k = self._from_import(tokens, k)
            else:
                k += 1

    def _import(self, tokens: list[Token], k: int) -> int:
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

    def _from_import(self, tokens: list[Token], k: int) -> int:
        end = _statement_end(tokens, k)
        j = k + 1
        relative = False
        while j < end and tokens[j].kind == OP and tokens[j].text in (".", "..."):
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


# Links of a chain read back from a hit: every `.name` of a chain is looked at, so reading each
# one's chain whole would be quadratic (100,000 links took minutes). A longer chain is read as
# rooted in an expression (`?.name`), which is what its pattern shows anyway.
_CHAIN_LINKS = 8


def _chain(tokens: list[Token], k: int) -> str:
    """The dotted identifier chain written before and ending at the name at index `k`."""
    parts = [tokens[k].text]
    j = k - 1
    while _is_op(tokens, j, ".") and _is_name(tokens, j - 1) and len(parts) < _CHAIN_LINKS:
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
    tokens = lexer.tokens(text)
    imports = _Imports(library, wanted)
    imports.read(tokens)
    if not imports.imports_library:
        return ()
    hits = set(imports.hits)
    for k, token in enumerate(tokens):
        if token.kind != NAME or k in imports.statement_tokens:
            continue
        if _is_op(tokens, k - 1, "."):
            if token.text in wanted:
                hits.add(LegacyHit(token.line, token.column, token.text, _chain(tokens, k)))
            continue
        member = imports.bare.get(token.text)
        if member is None:
            continue
        if (k > 0 and tokens[k - 1].kind == NAME and tokens[k - 1].text in _DEFINERS) or _is_op(tokens, k + 1, "="):
            continue  # a definition, an assignment to the name, or a keyword argument
        hits.add(LegacyHit(token.line, token.column, member, token.text))
    return tuple(sorted(hits))
