"""Types a docstring documents: a function's parameters and return value, a class's attributes.

Most data-science code declares its types in docstrings rather than annotations. Three layouts
are read, as their own guides define them:

- numpydoc ("Docstring standard", numpydoc.readthedocs.io): a `Parameters` / `Other Parameters`
  / `Returns` / `Attributes` section, its title underlined with dashes, one `name : type` line per
  entry (a class's docstring documents its constructor's parameters and its attributes);
- Sphinx info fields (Sphinx docs, "Info field lists"): `:type name: T`, `:param T name:`,
  `:rtype: T`; epydoc's `@type name: T` and `@rtype: T` too (jedi reads these the same way);
- Google style (Sphinx's napoleon extension, "Example Google Style Python Docstrings"): an
  `Args:` / `Arguments:` / `Parameters:` / `Attributes:` section of `name (T): text` lines, and
  `Returns:` with `T: text`.

Only a type that names exactly one class is kept (`pd.DataFrame`, `pandas.DataFrame, optional`,
`DataFrame, default None`): `pd.Series or np.ndarray`, `list of DataFrame` and `array_like` say
nothing one can act on, so they are dropped rather than guessed at.
"""

from __future__ import annotations

import keyword
import re
from dataclasses import dataclass, field
from typing import Mapping

# An entry or a type field is a short line; a longer one is prose (or hostile), and the patterns
# below are not run on it, so no line can make them slow.
_LONGEST_LINE = 300
_DOTTED = re.compile(r"[A-Za-z_]\w*(?:\.[A-Za-z_]\w*)*")
_NAME = re.compile(r"\*{0,2}[A-Za-z_]\w*")
_NUMPY_PARAMS = frozenset({"parameters", "other parameters", "params", "arguments"})
_NUMPY_RETURNS = frozenset({"returns", "return"})
_ATTRIBUTES = frozenset({"attributes"})
_GOOGLE_PARAMS = frozenset({"args", "arguments", "parameters", "params", "keyword args", "keyword arguments",
                            "other parameters"})
_GOOGLE_RETURNS = frozenset({"returns", "return"})
# Words a type field may carry beside the type (numpydoc: "x : int, optional"; "default 'a'").
_QUALIFIERS = re.compile(r"(optional|keyword[- ]only|none|default\b.*|defaults?\s+to\b.*|shape\b.*|"
                         r"of shape\b.*|required|positional[- ]only)", re.IGNORECASE)
# A Sphinx role around a name: :class:`pandas.DataFrame`, :py:class:`~pandas.DataFrame`.
_ROLE = re.compile(r":(?:\w+:)+`([^`]*)`")


@dataclass(frozen=True)
class DocumentedTypes:
    """Type texts a docstring gives: by parameter name, and for the return value (None: none or
    more than one, which is a tuple or a choice)."""

    params: Mapping[str, str] = field(default_factory=dict)
    returns: str | None = None
    attributes: Mapping[str, str] = field(default_factory=dict)  # a class's (numpydoc, Google)


def single_type(text: str) -> str | None:
    """The dotted name of the one class a type field names, or None.

    >>> single_type("pd.DataFrame, optional")
    'pd.DataFrame'
    >>> single_type("pd.Series or np.ndarray") is None
    True
    """
    if len(text) > _LONGEST_LINE:
        return None
    text = _ROLE.sub(r"\1", text).replace("`", "").strip()
    # "pd.DataFrame - MultiIndex": what follows a spaced dash describes the value.
    text = re.split(r"\s+-+\s+", text, maxsplit=1)[0]
    # Bracketed words qualify or describe ("(optional)", "shape (n,)"); they name no second type.
    text = re.sub(r"\([^()]*\)", "", text).strip().rstrip(".").strip()
    parts = [p.strip() for p in re.split(r",|\|", text)]
    alternatives = [p for part in parts for p in re.split(r"\s+or\s+", part)]
    kept = [a.lstrip("~!") for a in alternatives if a and not _QUALIFIERS.fullmatch(a)]
    if len(kept) != 1 or not _DOTTED.fullmatch(kept[0]):
        return None
    if any(keyword.iskeyword(part) for part in kept[0].split(".")):
        return None  # "class", "lambda": words, not a name one could import
    return kept[0]


def documented_types(docstring: str) -> DocumentedTypes:
    """Read the parameter and return types a (cleaned) docstring documents."""
    lines = [line if len(line) <= _LONGEST_LINE else "" for line in docstring.expandtabs().splitlines()]
    params: dict[str, str] = {}
    returns: list[str] = []
    attributes: dict[str, str] = {}
    _numpydoc(lines, params, returns, attributes)
    _fields(lines, params, returns)
    _google(lines, params, returns, attributes)
    kept = {name: t for name, raw in params.items() if (t := single_type(raw)) is not None}
    # Layouts that disagree say nothing; a section listing several values (a tuple) gave "".
    found = {single_type(r) for r in returns}
    ret = found.pop() if len(found) == 1 else None
    attrs = {name: t for name, raw in attributes.items() if (t := single_type(raw)) is not None}
    return DocumentedTypes(params=kept, returns=ret, attributes=attrs)


def _indent(line: str) -> int:
    return len(line) - len(line.lstrip())


def _numpydoc(lines: list[str], params: dict[str, str], returns: list[str], attributes: dict[str, str]) -> None:
    i = 0
    while i + 1 < len(lines):
        title = lines[i].strip().lower()
        rule = lines[i + 1].strip()
        if not (rule and set(rule) == {"-"} and len(rule) >= 3 and title):
            i += 1
            continue
        base = _indent(lines[i])
        kind = ("params" if title in _NUMPY_PARAMS else "returns" if title in _NUMPY_RETURNS
                else "attributes" if title in _ATTRIBUTES else None)
        i += 2
        entries: list[str] = []
        while i < len(lines):
            line = lines[i]
            if i + 1 < len(lines) and line.strip() and set(lines[i + 1].strip() or "x") == {"-"}:
                break  # the next section's title
            if line.strip() and _indent(line) <= base:
                entries.append(line.strip())
            i += 1
        if kind in ("params", "attributes"):
            into = params if kind == "params" else attributes
            for entry in entries:
                names, sep, type_text = entry.partition(":")
                if not sep:
                    continue
                for name in (n.strip() for n in names.split(",")):
                    if _NAME.fullmatch(name):
                        into.setdefault(name.lstrip("*"), type_text.strip())
        elif kind == "returns" and len(entries) > 1:
            returns.append("")  # several values: a tuple, typed item by item
        elif kind == "returns":
            for entry in entries:
                name, sep, type_text = entry.partition(" : ")
                if not sep:
                    name, sep, type_text = entry.partition(": ")
                    if sep and not _NAME.fullmatch(name.strip()):
                        sep = ""
                returns.append(type_text.strip() if sep else entry)


_TYPE_FIELD = re.compile(r"^\s*[:@]type\s+\*{0,2}([A-Za-z_]\w*)\s*:\s*(.+)$")
_PARAM_FIELD = re.compile(r"^\s*:param\s+(.+?)\s+\*{0,2}([A-Za-z_]\w*)\s*:")
_RTYPE_FIELD = re.compile(r"^\s*[:@]rtype\s*:\s*(.+)$")


def _fields(lines: list[str], params: dict[str, str], returns: list[str]) -> None:
    for line in lines:
        if m := _TYPE_FIELD.match(line):
            params.setdefault(m.group(1), m.group(2))
        elif m := _PARAM_FIELD.match(line):
            params.setdefault(m.group(2), m.group(1))
        elif m := _RTYPE_FIELD.match(line):
            returns.append(m.group(1))


_GOOGLE_ENTRY = re.compile(r"^\*{0,2}([A-Za-z_]\w*)\s*\(([^()]*(?:\([^()]*\)[^()]*)*)\)\s*:")
_GOOGLE_RETURN = re.compile(r"^([^:\s][^:]*?):(?:\s|$)")


def _google(lines: list[str], params: dict[str, str], returns: list[str], attributes: dict[str, str]) -> None:
    i = 0
    while i < len(lines):
        stripped = lines[i].strip()
        title = stripped[:-1].lower() if stripped.endswith(":") else None
        if title not in _GOOGLE_PARAMS and title not in _GOOGLE_RETURNS and title not in _ATTRIBUTES:
            i += 1
            continue
        base = _indent(lines[i])
        i += 1
        body: list[str] = []
        while i < len(lines) and (not lines[i].strip() or _indent(lines[i]) > base):
            body.append(lines[i])
            i += 1
        entry_indent = min((_indent(b) for b in body if b.strip()), default=0)
        entries = [b.strip() for b in body if b.strip() and _indent(b) == entry_indent]
        if title in _GOOGLE_PARAMS or title in _ATTRIBUTES:
            into = params if title in _GOOGLE_PARAMS else attributes
            for entry in entries:
                if m := _GOOGLE_ENTRY.match(entry):
                    into.setdefault(m.group(1), m.group(2))
        elif len(entries) == 1 and (m := _GOOGLE_RETURN.match(entries[0])):
            returns.append(m.group(1))
