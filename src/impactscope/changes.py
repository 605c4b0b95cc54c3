"""The change list: a maintainer's planned changes, loaded from TOML and validated."""

from __future__ import annotations

import enum
import hashlib
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from packaging.specifiers import InvalidSpecifier, SpecifierSet
from packaging.version import InvalidVersion, Version

from impactscope.errors import InputError
from impactscope.tomlinput import TomlInput


class ChangeListError(InputError):
    """A change list that cannot be used; the message names the file, the entry and the fix."""


class Kind(str, enum.Enum):
    REMOVED = "removed"
    RENAMED = "renamed"
    MOVED = "moved"
    PARAMETER_REMOVED = "parameter-removed"
    PARAMETER_RENAMED = "parameter-renamed"
    DEFAULT_CHANGED = "default-changed"
    BEHAVIOUR_CHANGED = "behaviour-changed"

    @property
    def about_parameter(self) -> bool:
        return self in (Kind.PARAMETER_REMOVED, Kind.PARAMETER_RENAMED, Kind.DEFAULT_CHANGED)


_DOTTED = re.compile(r"[A-Za-z_][A-Za-z0-9_]*(\.[A-Za-z_][A-Za-z0-9_]*)*\Z")
_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_LIBRARY_KEYS = {"name", "release", "requires_python", "source", "stubs", "import_name", "modules"}
_CHANGE_KEYS = {
    "id", "member", "kind", "replacement", "parameter", "new_parameter",
    "position", "deprecated_in", "note", "dynamic", "certainty", "default",
}
CERTAINTIES = ("high", "medium", "low")  # how sure a drafted entry is; reports show "low" apart
_TOP_KEYS = {"library", "types", "change"}


@dataclass(frozen=True)
class Change:
    id: str
    member: str
    kind: Kind
    replacement: str | None = None
    parameter: str | None = None
    new_parameter: str | None = None
    position: int | None = None
    deprecated_in: Version | None = None
    note: str = ""
    dynamic: bool = False  # served at run time (a module __getattr__, ...): no surface need show it
    certainty: str | None = None  # "high" | "medium" | "low", as a draft wrote it; None: written by hand
    # The old default of `parameter` as Python source text, from the TOML literal `default = ...`:
    # rewrites pass it explicitly (default-changed) or drop arguments equal to it (parameter-removed).
    default: str | None = None

    @property
    def uncertain(self) -> bool:
        """A low-certainty entry: reports count its projects apart from the others."""
        return self.certainty == "low"

    @property
    def name(self) -> str:
        """The member's own last name (what a reference spells at the site)."""
        return self.member.rsplit(".", 1)[-1]


@dataclass(frozen=True)
class ChangeList:
    library: str
    import_name: str
    changes: tuple[Change, ...]
    release: Version | None = None
    requires_python: SpecifierSet | None = None
    source: Path | None = None
    types: Mapping[str, str] = field(default_factory=dict)
    digest: str = ""
    modules: tuple[str, ...] = ()  # the library's top-level modules; () means (import_name,)
    path: Path | None = field(default=None, compare=False)  # the file it was read from, for messages
    # A PEP 561 stub package (`heronframe-stubs`) read with the source: the stubs type what the
    # source leaves untyped, the source keeps what the stubs dropped (deprecated members).
    stubs: Path | None = None
    # The text it was read from, kept so that it is read once: the results file stores it, and
    # the path may be a pipe (`<(...)`) or a file that is gone by the time `report` runs.
    text: str = field(default="", compare=False, repr=False)

    @property
    def top_modules(self) -> frozenset[str]:
        """Top-level import names a downstream file must mention to be affected."""
        tops = {c.member.split(".", 1)[0] for c in self.changes}
        tops.add(self.import_name)
        tops.update(self.modules)
        return frozenset(tops)

    def label(self, change: Change) -> str:
        """How messages name an entry: `FILE: [[change]] #N (id 'X')`."""
        index = next((i for i, c in enumerate(self.changes) if c is change), None)
        where = str(self.path) if self.path is not None else "the change list"
        number = f" #{index + 1}" if index is not None else ""
        return f"{where}: [[change]]{number} (id {change.id!r})"

    def by_id(self, change_id: str) -> Change:
        for change in self.changes:
            if change.id == change_id:
                return change
        raise KeyError(change_id)


_TOML = TomlInput(
    "change list", "pass the path of a TOML change list",
    "a change list needs no nesting deeper than a few levels", ChangeListError,
)


def load_change_list(path: str | os.PathLike[str]) -> ChangeList:
    return parse_change_list(_TOML.read(path), Path(path))


def parse_change_list(raw: bytes, path: Path) -> ChangeList:
    where = str(path)
    _, data = _TOML.parse(raw, where)

    unknown = set(data) - _TOP_KEYS
    if unknown:
        raise ChangeListError(
            f"{where}: unknown top-level key(s) {', '.join(sorted(unknown))}; "
            f"allowed are [library], [types] and [[change]]"
        )
    library = data.get("library")
    if not isinstance(library, dict) or not isinstance(library.get("name"), str) or not library["name"]:
        raise ChangeListError(f'{where}: [library] needs a name, e.g. [library]\\nname = "heronframe"')
    bad = set(library) - _LIBRARY_KEYS
    if bad:
        raise ChangeListError(
            f"{where}: [library] has unknown key(s) {', '.join(sorted(bad))}; "
            f"allowed are {', '.join(sorted(_LIBRARY_KEYS))}"
        )
    name = library["name"]
    modules = _modules(library, where)
    import_name = library.get("import_name", modules[0] if modules else normalise(name))
    if not isinstance(import_name, str) or not _IDENT.match(import_name):
        raise ChangeListError(f"{where}: [library] import_name {import_name!r} is not a Python identifier")
    if modules and import_name not in modules:
        raise ChangeListError(
            f"{where}: [library] import_name {import_name!r} is not one of modules = {list(modules)}; "
            "add it to modules or drop import_name"
        )
    tops = modules or (import_name,)
    release = _version(library.get("release"), f"{where}: [library] release")
    requires_python = None
    if "requires_python" in library:
        try:
            requires_python = SpecifierSet(str(library["requires_python"]))
        except InvalidSpecifier:
            raise ChangeListError(
                f"{where}: [library] requires_python {library['requires_python']!r} is not a PEP 440 "
                f'specifier; write e.g. ">=3.9"'
            ) from None
    source = stubs = None
    if "source" in library:
        if not isinstance(library["source"], str):
            raise ChangeListError(f"{where}: [library] source must be a path string")
        source = (path.parent / library["source"]).resolve()
    if "stubs" in library:
        if not isinstance(library["stubs"], str):
            raise ChangeListError(f"{where}: [library] stubs must be a path string")
        stubs = (path.parent / library["stubs"]).resolve()

    types = _types(data.get("types", {}), where)
    entries = data.get("change", [])
    if not isinstance(entries, list) or not entries:
        raise ChangeListError(f"{where}: no [[change]] entries; add at least one [[change]] table")
    changes: list[Change] = []
    seen: dict[str, int] = {}
    for index, entry in enumerate(entries):
        change = _change(entry, index, where, tops)
        if change.id in seen:
            raise ChangeListError(
                f"{where}: [[change]] #{index + 1} (id {change.id!r}): duplicate id, also used by "
                f"[[change]] #{seen[change.id] + 1}; give each change a unique id"
            )
        seen[change.id] = index
        changes.append(change)
    return ChangeList(
        library=name,
        import_name=import_name,
        changes=tuple(changes),
        release=release,
        requires_python=requires_python,
        source=source,
        stubs=stubs,
        types=types,
        digest=hashlib.sha256(raw).hexdigest(),
        modules=modules,
        path=path,
        text=raw.decode("utf-8"),
    )


def normalise(name: str) -> str:
    """The import name a distribution name suggests: PEP 503 normalisation (runs of `-`, `_`
    and `.` become one `-`, lowercase), then `-` -> `_` (common practice: `scikit-posthocs`
    installs `scikit_posthocs`)."""
    return re.sub(r"[-_.]+", "-", name).lower().replace("-", "_")


def _modules(library: Mapping[str, Any], where: str) -> tuple[str, ...]:
    value = library.get("modules")
    if value is None:
        return ()
    if (not isinstance(value, list) or not value
            or not all(isinstance(m, str) and _IDENT.match(m) for m in value)):
        raise ChangeListError(
            f'{where}: [library] modules must be a non-empty list of top-level module names, '
            f'e.g. modules = ["heronframe"]; got {value!r}'
        )
    return tuple(dict.fromkeys(value))


def _version(value: Any, what: str) -> Version | None:
    if value is None:
        return None
    try:
        return Version(str(value))
    except InvalidVersion:
        raise ChangeListError(f"{what} {value!r} is not a PEP 440 version; write e.g. \"3.0\"") from None


def _types(table: Any, where: str) -> dict[str, str]:
    if not isinstance(table, dict):
        raise ChangeListError(f"{where}: [types] must be a table of \"dotted.name\" = \"dotted.Class\"")
    out: dict[str, str] = {}
    for key, value in table.items():
        if not _DOTTED.match(key) or not isinstance(value, str) or not _DOTTED.match(value):
            raise ChangeListError(
                f"{where}: [types] entry {key!r} = {value!r}: both sides must be dotted names, "
                f'e.g. "heronframe.read_table" = "heronframe.Table"'
            )
        out[key] = value
    return out


def _change(entry: Any, index: int, where: str, tops: tuple[str, ...]) -> Change:
    label = f"{where}: [[change]] #{index + 1}"
    if not isinstance(entry, dict):
        raise ChangeListError(f"{label}: must be a table")
    if isinstance(entry.get("id"), str):
        label += f" (id {entry['id']!r})"
    unknown = set(entry) - _CHANGE_KEYS
    if unknown:
        raise ChangeListError(
            f"{label}: unknown key(s) {', '.join(sorted(unknown))}; allowed are {', '.join(sorted(_CHANGE_KEYS))}"
        )
    member = entry.get("member")
    if not isinstance(member, str) or not _DOTTED.match(member):
        raise ChangeListError(f'{label}: member must be a fully dotted name, e.g. member = "heronframe.Table.stack_rows"')
    if member.split(".", 1)[0] not in tops:
        listed = ", ".join(tops)
        raise ChangeListError(
            f"{label}: member {member!r} is not under the library's top-level module{'s' if len(tops) > 1 else ''} "
            f"({listed}); write its full dotted path from there (e.g. {tops[0]}.{member}), or list "
            f"{member.split('.', 1)[0]!r} in [library] modules if the library installs it"
        )
    kind_text = entry.get("kind")
    try:
        kind = Kind(kind_text)
    except ValueError:
        raise ChangeListError(
            f"{label}: unknown kind {kind_text!r}; use one of {', '.join(k.value for k in Kind)}"
        ) from None
    change_id = entry.get("id", member)
    if not isinstance(change_id, str) or not change_id:
        raise ChangeListError(f"{label}: id must be a non-empty string")

    def text(key: str) -> str | None:
        value = entry.get(key)
        if value is not None and not isinstance(value, str):
            raise ChangeListError(f"{label}: {key} must be a string")
        return value

    replacement = text("replacement")
    if replacement is not None and not _DOTTED.match(replacement):
        raise ChangeListError(f"{label}: replacement {replacement!r} must be a dotted name")
    if kind in (Kind.RENAMED, Kind.MOVED) and replacement is None:
        raise ChangeListError(f"{label}: kind {kind.value!r} needs a replacement (the new dotted name)")
    parameter = text("parameter")
    new_parameter = text("new_parameter")
    if kind.about_parameter:
        if parameter is None or not _IDENT.match(parameter):
            raise ChangeListError(f"{label}: kind {kind.value!r} needs parameter = \"<name>\"")
    elif parameter is not None:
        raise ChangeListError(f"{label}: parameter applies only to parameter-* and default-changed kinds")
    if kind is Kind.PARAMETER_RENAMED and (new_parameter is None or not _IDENT.match(new_parameter)):
        raise ChangeListError(f"{label}: kind 'parameter-renamed' needs new_parameter = \"<new name>\"")
    position = entry.get("position")
    if position is not None:
        if not kind.about_parameter:
            raise ChangeListError(f"{label}: position applies only to parameter-* and default-changed kinds")
        if isinstance(position, bool) or not isinstance(position, int) or position < 0:
            raise ChangeListError(f"{label}: position must be a whole number >= 0 (0-based, self excluded)")
    dynamic = entry.get("dynamic", False)
    if not isinstance(dynamic, bool):
        raise ChangeListError(f"{label}: dynamic must be true or false (true: the member is served at run time)")
    certainty = entry.get("certainty")
    if certainty is not None and certainty not in CERTAINTIES:
        raise ChangeListError(
            f"{label}: certainty {certainty!r} is not one of {', '.join(repr(c) for c in CERTAINTIES)}; "
            "drafts write it, a hand-written entry may leave it out"
        )
    default = None
    if "default" in entry:
        if kind not in (Kind.DEFAULT_CHANGED, Kind.PARAMETER_REMOVED):
            raise ChangeListError(
                f"{label}: default applies only to default-changed and parameter-removed kinds "
                "(it is the old default of parameter)"
            )
        default = _python_literal(entry["default"], label)
    return Change(
        id=change_id,
        member=member,
        kind=kind,
        replacement=replacement,
        parameter=parameter,
        new_parameter=new_parameter,
        position=position,
        deprecated_in=_version(entry.get("deprecated_in"), f"{label}: deprecated_in"),
        note=text("note") or "",
        dynamic=dynamic,
        certainty=certainty,
        default=default,
    )


def _python_literal(value: Any, label: str) -> str:
    """The Python source of a TOML value (string, number, boolean, array, table). TOML has no
    None and its dates are no Python literal, so neither can be an old default here."""
    if isinstance(value, bool):
        return "True" if value else "False"
    if isinstance(value, (int, str)):
        return repr(value)
    if isinstance(value, float):
        if value != value or value in (float("inf"), float("-inf")):
            raise ChangeListError(f"{label}: default {value!r} has no Python literal; give a finite number")
        return repr(value)
    if isinstance(value, list):
        return "[" + ", ".join(_python_literal(v, label) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k!r}: {_python_literal(v, label)}" for k, v in value.items()) + "}"
    raise ChangeListError(
        f"{label}: default {value!r} is not a string, number, boolean, array or table; "
        "write the old default as a TOML literal, e.g. default = \",\""
    )
