"""Turn the bytes of a corpus file into Python source text, cell by cell.

A `.py` file is decoded as the interpreter would (PEP 263). A notebook is read
with nbformat, and each code cell has its IPython-only syntax (magics, shell
escapes, help queries) rewritten into plain Python by IPython's own input
transformer, keeping line numbers, so that later steps can parse it. Nothing
here imports, compiles or runs the code being read.

A notebook's bytes are mostly outputs (plots as base64 images), which say
nothing about its code. So the JSON parser drops every output, and cell
attachments, as soon as each is parsed, and keeps only the cells' text; and
besides the bound on a notebook's bytes that `corpus.roots` applies while
reading, its code has a bound of its own (`Limits.notebook_code_bytes`): a
notebook whose code cells hold more is refused as "notebook code too large".
"""

from __future__ import annotations

import io
import json
import keyword
import re
import tokenize
from collections.abc import Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

from impactscope.corpus import lexer
from impactscope.corpus.lexer import Token
from impactscope.corpus.limits import DEFAULT_LIMITS, Limits
from impactscope.errors import InputError
from impactscope.reasons import Reason

if TYPE_CHECKING:  # IPython is slow to import; only notebooks need it.
    from IPython.core.inputtransformer2 import TransformerManager

__all__ = [
    "CodeCell",
    "PYTHON_CELL_MAGICS",
    "Source",
    "SourceError",
    "SKIP_REASONS",
    "decode_python",
    "looks_like_python2",
    "read_notebook",
    "read_python",
    "without_outputs",
]

# Cell magics whose body is ordinary Python that IPython runs in the user
# namespace (timing, profiling, output capture, debugging, subprocess Python).
# Any other cell magic holds another language or data, so its cell is skipped.
PYTHON_CELL_MAGICS = frozenset(
    {"time", "timeit", "capture", "prun", "debug", "memit", "mprun", "python", "python3", "px"}
)


_DEFAULT_LIMITS = DEFAULT_LIMITS
# Reasons that skip a file (a bound reached), where the others leave it unparsed.
SKIP_REASONS = frozenset({Reason.NOTEBOOK_CODE_TOO_LARGE})


class SourceError(InputError):
    """A file whose text cannot be had: undecodable bytes, an unreadable notebook, or a
    notebook with too much code.

    `reason` is the file's reason (ENCODING, INVALID_NOTEBOOK or NOTEBOOK_CODE_TOO_LARGE; the
    last is a reason to skip the file, as `corpus.classification` gives TOO_LARGE for other
    files: see `skipped`); `detail` says where and why, for people.
    """

    def __init__(self, reason: Reason, detail: str) -> None:
        super().__init__(reason, detail)
        self.reason = reason
        self.detail = detail

    @property
    def skipped(self) -> bool:
        """Whether the file is skipped (a bound reached) rather than unparsed."""
        return self.reason in SKIP_REASONS

    def __str__(self) -> str:
        return f"{self.reason}: {self.detail}"


@dataclass(frozen=True)
class CodeCell:
    """One unit of Python text to parse.

    `index` is the position in the notebook's `cells` list (nbformat v4
    numbering), or None for a module. Line `n` of `code` is line
    `n + first_line - 1` of the original cell.
    """

    index: int | None
    code: str
    first_line: int = 1
    # First lines of the top-level statements, when a reader has them already (narrowing does).
    statement_lines: tuple[int, ...] | None = None


@dataclass(frozen=True)
class Source:
    """The Python text of one corpus file."""

    path: str
    kind: Literal["module", "notebook"]
    cells: tuple[CodeCell, ...]
    skipped_cells: tuple[tuple[int, str], ...] = ()


# --------------------------------------------------------------------------- .py


def _normalise_newlines(text: str) -> str:
    return text.replace("\r\n", "\n").replace("\r", "\n")


def decode_python(data: bytes, path: str) -> str:
    """Decode a `.py` file the way the interpreter does (PEP 263).

    A UTF-8 BOM, or a coding comment on line 1 or 2, names the encoding; the
    default is UTF-8. The standard library's `tokenize.detect_encoding` does
    the detection, so the answer matches the interpreter's. Newlines become
    `\\n`. Raises SourceError(Reason.ENCODING, ...) for an unknown codec or bytes
    the codec cannot decode.
    """
    try:
        encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
    except SyntaxError as exc:
        raise SourceError(Reason.ENCODING, f"{path}: {exc.msg}") from None
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise SourceError(
            Reason.ENCODING,
            f"{path}: line {line}: byte 0x{data[exc.start]:02x} is not valid {encoding}; "
            "declare the file's real encoding in a coding comment (PEP 263)",
        ) from None
    except LookupError as exc:  # a codec that exists but is not a text encoding
        raise SourceError(Reason.ENCODING, f"{path}: {exc}") from None
    if encoding == "utf-8-sig":
        text = text.removeprefix("\ufeff")
    return _normalise_newlines(text)


def read_python(data: bytes, path: str) -> Source:
    """Read a `.py` module as a Source with one cell."""
    return Source(path, "module", (CodeCell(None, decode_python(data, path), 1),))


# ---------------------------------------------------------------------- notebooks


# Keys whose values are outputs or attachments (nbformat v3 and v4): never kept.
_BULKY_KEYS = frozenset({"outputs", "attachments"})


def _lean_object(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    """A JSON object without what a scan never reads: an output (any object with an
    `output_type`, nbformat v3 and v4) becomes empty, and so do `outputs` / `attachments`
    values, as soon as each is parsed, so that at most one output's data is alive. (After
    `without_outputs` there is little left to drop: this covers bytes it had to leave whole.)"""
    if any(key == "output_type" for key, _ in pairs):
        return {}
    return {key: (type(value)() if key in _BULKY_KEYS and isinstance(value, (list, dict)) else value)
            for key, value in pairs}


# A JSON string, or a character that opens, closes or separates (RFC 8259 grammar). Strings
# are matched whole, so brackets inside them are never counted.
_JSON_TOKEN = re.compile(rb'"[^"\\]*(?:\\.[^"\\]*)*"|[\[\]{}:]')
_BULKY_JSON_KEYS = frozenset(b'"%s"' % key.encode() for key in _BULKY_KEYS)
_QUOTE, _COLON = ord('"'), ord(":")
_CLOSER_OF, _CLOSERS = {ord("["): ord("]"), ord("{"): ord("}")}, frozenset(b"]}")


def without_outputs(data: bytes) -> bytes:
    """A notebook's bytes with the contents of every `outputs` and `attachments` array or
    object cut out, found by a scan of the raw bytes, so that neither a decoded copy of the
    outputs nor their parsed objects ever exist (tokens are looked at in place: a long string
    is never copied). What is left reads the same with `notebook_text` and `read_notebook`,
    and is what a caller should hold on to. The JSON parser reads what is left (and reports
    any fault in it); should the scan find the brackets unbalanced, `data` comes back whole
    for the parser to judge."""
    if not any(key in data for key in _BULKY_JSON_KEYS):
        return data
    longest_key = max(map(len, _BULKY_JSON_KEYS))
    pieces: list[bytes] = []
    kept = 0  # data[kept:] is not in pieces yet
    tokens = _JSON_TOKEN.finditer(data)
    key = False  # whether the last token was a string that names a bulky key
    for match in tokens:
        start, end = match.span()
        first = data[start]
        if first == _COLON and key:
            value = next(tokens, None)
            if value is None:
                return data
            opener = data[value.start()]
            if opener not in _CLOSER_OF:
                key = False
                continue
            expected = [_CLOSER_OF[opener]]  # the closing brackets still owed, innermost last
            for inner in tokens:
                mark = data[inner.start()]
                if mark in _CLOSER_OF:
                    expected.append(_CLOSER_OF[mark])
                elif mark in _CLOSERS:
                    if mark != expected.pop():
                        return data
                    if not expected:
                        pieces.append(data[kept : value.end()])
                        kept = inner.start()
                        break
            else:
                return data
            key = False
            continue
        key = first == _QUOTE and end - start <= longest_key and data[start:end] in _BULKY_JSON_KEYS
    pieces.append(data[kept:])
    return b"".join(pieces)


def _notebook_json(data: bytes, path: str) -> str:
    try:
        return without_outputs(data).decode("utf-8-sig")  # JSON is UTF-8 (RFC 8259)
    except UnicodeDecodeError as exc:
        raise SourceError(
            Reason.ENCODING, f"{path}: byte 0x{data[exc.start]:02x} at offset {exc.start} is not UTF-8"
        ) from None


def _check_code_size(size: int, path: str, limits: Limits) -> None:
    if size > limits.notebook_code_bytes:
        raise SourceError(
            limits.reason("notebook_code_bytes"),
            f"{path}: its code cells hold {size} bytes, over the limit of {limits.notebook_code_bytes}"
            " (notebook_code_bytes)",
        )


def notebook_text(data: bytes, path: str, *, limits: Limits = _DEFAULT_LIMITS) -> str:
    """The raw code-cell text of a notebook (v3 or v4), untransformed: cheap enough to decide
    whether the notebook is worth reading fully. IPython syntax only turns text into strings,
    so every identifier of the transformed code is in this text too.

    Raises SourceError("notebook code too large") when the code cells hold more than
    `limits.notebook_code_bytes` bytes (UTF-8), whatever the size of the outputs.
    """
    text = _notebook_json(data, path)
    try:
        document = json.loads(text, object_pairs_hook=_lean_object)
    except ValueError as exc:
        raise SourceError(Reason.INVALID_NOTEBOOK, f"{path}: {_first_line(str(exc))}") from None
    del text
    if not isinstance(document, dict):
        raise SourceError(Reason.INVALID_NOTEBOOK, f"{path}: the top level is not a JSON object")
    cells = document.get("cells")
    if cells is None:  # nbformat v3 keeps cells in worksheets, code under "input"
        cells = [c for w in _list(document.get("worksheets")) if isinstance(w, dict) for c in _list(w.get("cells"))]
    parts: list[str] = []
    for cell in cells if isinstance(cells, list) else []:
        if isinstance(cell, dict) and cell.get("cell_type") == "code":
            source = cell.get("source", cell.get("input", ""))
            parts.append("".join(map(str, source)) if isinstance(source, list) else str(source))
    code = "\n".join(parts)
    _check_code_size(len(code.encode("utf-8", "surrogatepass")), path, limits)
    return code


def _list(value: object) -> list[Any]:
    """`value` if it is a JSON array, else no items (files in the wild break the schema)."""
    return value if isinstance(value, list) else []


def read_notebook(data: bytes, path: str, *, limits: Limits = _DEFAULT_LIMITS) -> Source:
    """Read a Jupyter notebook's code cells as Python.

    The notebook is read and upgraded to v4 exactly as `nbformat.reads(text,
    as_version=4)` does, minus its schema validation, which only logs and is
    slow on big notebooks: real notebooks often break the schema in ways that
    do not matter here; and minus outputs and attachments, which are dropped
    while the JSON is parsed. Cells of a notebook whose kernel language is set
    and is not Python are all skipped ("non-python kernel"). Raises
    SourceError("notebook code too large") as `notebook_text` does.
    """
    import nbformat  # noqa: PLC0415 - only notebooks need it
    import nbformat.reader  # noqa: PLC0415

    text = _notebook_json(data, path)
    try:
        notebook = nbformat.convert(nbformat.reader.reads(text, object_pairs_hook=_lean_object), 4)
        del text
        raw_cells = notebook["cells"]
        metadata = notebook.get("metadata") or {}
        if not isinstance(raw_cells, list) or not isinstance(metadata, dict):
            raise TypeError("'cells' must be a list and 'metadata' an object")
    # Malformed JSON reaches nbformat's readers and converters as arbitrary
    # shapes, and they fail with whatever error the shape provokes.
    except Exception as exc:  # noqa: BLE001
        raise SourceError(Reason.INVALID_NOTEBOOK, f"{path}: {_first_line(str(exc))}") from None

    language = _kernel_language(metadata)
    foreign = language is not None and not language.lower().startswith(("python", "ipython"))
    manager: TransformerManager | None = None
    cells: list[CodeCell] = []
    skipped: list[tuple[int, str]] = []
    sources: list[tuple[int, str]] = []
    for index, cell in enumerate(raw_cells):
        if not isinstance(cell, dict) or cell.get("cell_type") != "code":
            continue
        source = cell.get("source", "")
        if isinstance(source, list) and all(isinstance(part, str) for part in source):
            source = "".join(source)
        if not isinstance(source, str):
            skipped.append((index, "invalid cell source"))
            continue
        sources.append((index, source))
    # The same measure as notebook_text's: the code cells joined by newlines.
    _check_code_size(sum(len(code.encode("utf-8", "surrogatepass")) + 1 for _, code in sources) - 1, path, limits)
    for index, source in sources:
        if foreign:
            skipped.append((index, "non-python kernel"))
            continue
        if manager is None:
            manager = _transformer()
        result = _python_cell(_normalise_newlines(source), manager)
        if isinstance(result, str):
            skipped.append((index, result))
        else:
            code, first_line = result
            cells.append(CodeCell(index, code, first_line))
    skipped.sort()
    return Source(path, "notebook", tuple(cells), tuple(skipped))


def _first_line(message: str) -> str:
    return message.strip().splitlines()[0] if message.strip() else "unreadable notebook"


def _kernel_language(metadata: dict[str, object]) -> str | None:
    for key, field in (("kernelspec", "language"), ("language_info", "name")):
        section = metadata.get(key)
        if isinstance(section, dict):
            value = section.get(field)
            if isinstance(value, str) and value.strip():
                return value.strip()
    return None


def _transformer() -> TransformerManager:
    from IPython.core.inputtransformer2 import TransformerManager  # noqa: PLC0415

    return TransformerManager()


# ------------------------------------------------------------ IPython cell syntax

_CELL_MAGIC = re.compile(r"[ \t]*%%(\S*)")


def _python_cell(source: str, manager: TransformerManager) -> tuple[str, int] | str:
    """Plain Python for one notebook cell, or the reason it holds none.

    Returns `(code, first_line)`, where line 1 of `code` is line `first_line`
    of the cell, or a skip reason such as "cell magic %%bash".
    """
    lines = source.split("\n")
    # IPython drops leading blank lines before it looks for a cell magic.
    start = next((i for i, line in enumerate(lines) if line.strip()), None)
    if start is None:
        return source, 1
    magic = _CELL_MAGIC.match(lines[start])
    if magic is None:
        return _transform(source, manager), 1
    name = magic.group(1)
    if name not in PYTHON_CELL_MAGICS:
        return f"cell magic %%{name}"
    # The body may itself start with a cell magic (`%%time` over `%%capture`).
    inner = _python_cell("\n".join(lines[start + 1 :]), manager)
    if isinstance(inner, str):
        return inner
    code, first_line = inner
    return code, first_line + start + 1


def _count_lines(text: str) -> int:
    return text.count("\n") + (0 if text.endswith("\n") else 1)


def _transform(source: str, manager: TransformerManager) -> str:
    """IPython's rewrite of `source`, with every line kept on its own line number."""
    try:
        code = manager.transform_cell(source)
    # The transformer tokenizes arbitrary text; on input it cannot handle,
    # keep the original so that the parse step reports it.
    except Exception:  # noqa: BLE001
        return source
    if _count_lines(code) == _count_lines(source):
        return code
    return _transform_by_line(source, manager)


# A line that only IPython accepts: a magic, shell escape or help query, an
# assignment from one (`files = !ls`), or a trailing `?` help query.
_IPYTHON_LINE = re.compile(
    r"""[ \t]*(?:
        [%!?]
      | [\w.]+(?:[ \t]*,[ \t]*[\w.]+)*[ \t]*=[ \t]*[%!]
      | [^\W\d][\w.]*[ \t]*\?\??[ \t]*$
    )""",
    re.VERBOSE,
)


def _transform_by_line(source: str, manager: TransformerManager) -> str:
    """Rewrite IPython-only lines one at a time, so the line count cannot change.

    Used when the whole-cell rewrite joined or split lines (for example a shell
    escape continued with a backslash). Each IPython-only statement becomes
    its one-line rewrite (or `pass`) at the same indentation, and the physical
    lines it continued onto become blank. Only lines that start a statement
    are candidates: `% x` inside brackets or a string is Python.
    """
    lines = source.split("\n")
    out: list[str] = []
    pending: list[str] = []  # the Python lines of the statement still open, if any
    index = 0
    while index < len(lines):
        line = lines[index]
        if pending and not _continues("\n".join(pending)):
            pending = []
        if pending or not _IPYTHON_LINE.match(line):
            pending.append(line)
            out.append(line)
            index += 1
            continue
        end = index
        while lines[end].endswith("\\") and end + 1 < len(lines):
            end += 1
        indent = line[: len(line) - len(line.lstrip())]
        statement = "\n".join(lines[index : end + 1]).strip()
        try:
            rewritten = manager.transform_cell(statement).strip()
        except Exception:  # noqa: BLE001 - see _transform
            rewritten = ""
        if not rewritten or "\n" in rewritten:
            rewritten = "pass"
        out.append(indent + rewritten)
        out.extend("" for _ in range(end - index))
        index = end + 1
    return "\n".join(out)


def _continues(text: str) -> bool:
    """Whether Python text ends inside brackets, a triple-quoted string or a
    backslash continuation, so that the next line does not start a statement."""
    depth = 0
    for token in lexer.tokens(text):
        if token.kind == lexer.OPEN_STRING:
            return True  # a quote that opens no complete string: one still open
        if token.kind == lexer.OP and token.text in _OPEN:
            depth = token.depth + 1
        elif token.kind == lexer.OP and token.text in _CLOSE:
            depth = max(token.depth - 1, 0)
    return depth > 0 or text.endswith("\\")


# --------------------------------------------------------------------- Python 2

# The tokens come from the lexer the token-level reading uses (`corpus.lexer`): `tokenize` stops
# at the first token the 3.x grammar rejects, and those tokens are the evidence.
_OPEN, _CLOSE = frozenset("([{"), frozenset(")]}")
_PY2_OCTAL = re.compile(r"0[0-7]*[1-7][0-7]*[lL]?")
_STRING_PREFIX_LETTERS = "rRbBuUfF"


def _logical_lines(text: str) -> Iterator[list[Token]]:
    line: list[Token] = []
    for token in lexer.tokens(text):
        if token.kind == lexer.NEWLINE:
            if line:
                yield line
                line = []
        else:
            line.append(token)
    if line:
        yield line


def _statements(line: list[Token]) -> Iterator[list[Token]]:
    """Split a logical line at top-level `;` and `:` (so `if x: print y` splits)."""
    start = 0
    for index, token in enumerate(line):
        if token.kind == "op" and token.depth == 0 and token.text in (";", ":"):
            yield line[start : index + 1]
            start = index + 1
    if start < len(line):
        yield line[start:]


def _is_operand(token: Token) -> bool:
    """A token that cannot follow a bare name in Python 3 (`print x`, `exec "s"`)."""
    if token.kind in ("string", "number"):
        return True
    if token.kind == "name":
        return not keyword.iskeyword(token.text)
    return token.kind == "op" and token.text == "`"


def _top_level_comma(tokens: list[Token]) -> bool:
    return any(t.kind == "op" and t.text == "," and t.depth == 0 for t in tokens)


def _python2_statement(tokens: list[Token]) -> bool:
    head = tokens[0]
    if head.kind != "name":
        return False
    if head.text in ("print", "exec"):
        return len(tokens) > 1 and _is_operand(tokens[1])
    if head.text in ("except", "raise"):  # `except E, e:` / `raise E, "msg"`
        return _top_level_comma(tokens[1:])
    return False


def _python2_token(token: Token, flufl: bool) -> bool:
    if token.kind == lexer.STRING:
        return token.text[: len(token.text) - len(token.text.lstrip(_STRING_PREFIX_LETTERS))].lower() == "ur"
    if token.kind == "number":
        return token.text[-1] in "lL" or _PY2_OCTAL.fullmatch(token.text) is not None
    if token.kind == "op":
        return token.text == "`" or (token.text == "<>" and not flufl)
    return False


def looks_like_python2(text: str) -> bool:
    """Whether text that failed to parse shows syntax only Python 2 accepts.

    Looks, outside strings and comments, for print and exec statements,
    `except E, e:`, `raise E, "msg"`, backquote repr, `<>`, `ur""` literals,
    `0777` octal and `10L` long literals. Every one of these is a syntax error
    in Python 3, so valid Python 3 code is never reported.
    """
    flufl = "barry_as_FLUFL" in text  # the one __future__ import that enables `<>`
    for line in _logical_lines(text):
        if any(_python2_token(token, flufl) for token in line):
            return True
        if any(_python2_statement(statement) for statement in _statements(line)):
            return True
    return False
