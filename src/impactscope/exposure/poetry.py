"""Poetry's `[tool.poetry]` dependencies and constraints (`^`, `~`, `*`, unions, `python =`)."""

from __future__ import annotations

import re

from packaging.markers import InvalidMarker
from packaging.specifiers import InvalidSpecifier, Specifier, SpecifierSet
from packaging.version import InvalidVersion, Version

from impactscope.errors import InputError
from impactscope.exposure.reader import Reader
from impactscope.exposure.records import Declared
from impactscope.exposure.toml_tables import combine_markers, entry_version, toml_value


def read_poetry(path: str, poetry: dict, reader: Reader) -> None:
    """The library's entries in Poetry's dependency tables of `[tool.poetry]`, and `python =`."""
    tables = [("tool.poetry.dependencies", poetry.get("dependencies")),
              ("tool.poetry.dev-dependencies", poetry.get("dev-dependencies"))]
    if isinstance(poetry.get("group"), dict):
        for group, body in poetry["group"].items():
            if isinstance(body, dict):
                tables.append((f"tool.poetry.group.{group}.dependencies", body.get("dependencies")))
    for table, body in tables:
        if isinstance(body, dict):
            for name, value in body.items():
                if reader.is_target(name):
                    poetry_dependency(name, value, f"{path} [{table}]", reader)
    main = poetry.get("dependencies")
    if isinstance(main, dict) and isinstance(main.get("python"), str):
        poetry_python(main["python"], f"{path} [tool.poetry.dependencies]", reader)


def poetry_python(text: str, source: str, reader: Reader) -> None:
    specs = _poetry_range(text, f"python = {text!r}", source, reader)
    if specs:
        reader.add_python(",".join(specs), source)


def _poetry_range(constraint: str, shown: str, source: str, reader: Reader) -> list[str] | None:
    """The PEP 440 specifiers of one Poetry constraint, or None (with a problem noted) when it
    cannot be read or is a union: a union of ranges has no single PEP 440 specifier set, so it is
    left out rather than guessed."""
    try:
        alternatives = _poetry_alternatives(constraint)
    except _ConstraintError as exc:
        reader.problem(f"{source}: {exc} in {shown}")
        return None
    if len(alternatives) > 1:
        reader.problem(f"{source}: union constraint in {shown} is not supported; not read")
        return None
    return alternatives[0]


class _ConstraintError(InputError):
    pass


_POETRY_ATOM = re.compile(r"^(\^|~=|~|===|==|!=|<=|>=|<|>|=)?\s*(\S+)$")
# Inside one comma-separated piece, Poetry also separates constraints by whitespace: ">=1.2 <1.5".
_POETRY_SPACE = re.compile(r"(?<=[0-9A-Za-z*])\s+(?=[<>=!~^])")


def _bump(release: tuple[int, ...], index: int) -> str:
    """The version that ends the range: component `index` plus one, later ones zero."""
    parts = list(release[: index + 1])
    parts[index] += 1
    return ".".join(str(p) for p in parts)


def _poetry_atom(atom: str) -> list[str]:
    """One Poetry constraint as PEP 440 specifier strings (empty for `*`)."""
    match = _POETRY_ATOM.match(atom)
    if not match:
        raise _ConstraintError(f"cannot read constraint {atom!r}")
    op, text = match.group(1) or "", match.group(2)
    if text == "*" and op in ("", "=", "=="):
        return []
    if op in ("^", "~"):
        try:
            version = Version(text)
        except InvalidVersion:
            raise _ConstraintError(f"{op}{text} does not name a version") from None
        release = version.release
        if op == "^":
            # Caret: bump the left-most non-zero component of what was written; if all written
            # components are zero, bump the last one (^0.0 -> <0.1, ^0 -> <1).
            index = next((i for i, part in enumerate(release) if part), len(release) - 1)
        else:
            # Tilde: bump the minor component, or the major one when only that was written.
            index = 0 if len(release) == 1 else 1
        return [f">={version}", f"<{_bump(release, index)}"]
    if op in ("", "="):
        op = "=="
    spec = f"{op}{text}"
    try:
        Specifier(spec)
    except InvalidSpecifier:
        raise _ConstraintError(f"cannot read constraint {atom!r}") from None
    return [spec]


def _poetry_alternatives(text: str) -> list[list[str]]:
    """A Poetry constraint as a union (`||`) of intersections of PEP 440 specifiers."""
    alternatives = []
    for alternative in text.split("||"):
        specs: list[str] = []
        for piece in alternative.split(","):
            for atom in _POETRY_SPACE.split(piece.strip()):
                if atom.strip():
                    specs.extend(_poetry_atom(atom.strip()))
        alternatives.append(specs)
    return alternatives


def _poetry_python_marker(text: str) -> str | None:
    """Poetry's `python = "..."` as a PEP 508 marker expression (None for any Python)."""
    alternatives = _poetry_alternatives(text)
    clauses = []
    for specs in alternatives:
        if not specs:
            return None
        parts = []
        for spec in specs:
            parsed = Specifier(spec)
            parts.append(f'python_full_version {parsed.operator} "{parsed.version}"')
        clauses.append(" and ".join(parts))
    if len(clauses) == 1:
        return clauses[0]
    return " or ".join(f"({clause})" for clause in clauses)


def poetry_dependency(name: str, value: object, source: str, reader: Reader) -> None:
    if isinstance(value, list):
        for item in value:  # several constraints, each for its own markers
            poetry_dependency(name, item, source, reader)
        return
    text = f"{name} = {toml_value(value)}"
    if isinstance(value, str):
        table: dict = {"version": value}
    elif isinstance(value, dict):
        table = value
    else:
        reader.problem(f"{source}: {name} has an unreadable value {value!r}")
        return
    try:
        python = table.get("python")
        marker = combine_markers(
            _poetry_python_marker(python) if isinstance(python, str) else None,
            table.get("markers") if isinstance(table.get("markers"), str) else None,
        )
    except (_ConstraintError, InvalidSpecifier, InvalidMarker) as exc:
        reader.problem(f"{source}: cannot read the markers of {text}: {exc}")
        return
    version = entry_version(name, table, text, source, reader, marker)
    if version is None:
        return
    specs = _poetry_range(version, text, source, reader)
    if specs is None:
        return
    prereleases = table.get("allow-prereleases") is True
    specifier = SpecifierSet(",".join(specs), prereleases=True if prereleases else None) if specs else None
    reader.declared.append(Declared(source, text, specifier, marker, False))
