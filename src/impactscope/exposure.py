"""Whether a downstream project's declared requirements admit a release of the library.

A project that uses a removed member is only hit by the release if it can install the release.
This module reads what a project declares about the library in its manifest files and classifies
the project as exposed (its constraints admit the release), shielded (they exclude it) or
unconstrained (nothing it declares limits the version).

Manifests are read as data, never run: requirement files in pip's format, `pyproject.toml`
(PEP 621 `[project]`, PEP 735 `[dependency-groups]`, Poetry's `[tool.poetry]`), `setup.cfg`,
`Pipfile`, `setup.py`, from which only literal `install_requires=[...]` lists are read with
libcst, and the core metadata of a built distribution: a wheel's `<name>.dist-info/METADATA` and
an sdist's `PKG-INFO`, at the top of the project (`Requires-Dist`, `Requires-Python`). A manifest
that cannot be read is not an error: `read_manifests` returns what it could read together with a
list of problems, each naming the file (and line where there is one).

Optional requirements count like the others: an entry of `[project.optional-dependencies]`,
`extras_require`, or a `Requires-Dist` under an extra (`lib<2; extra == "plot"`) is a declaration
of the project. The code that uses the library is often the optional part, and every install that
has the extra, and so runs that code, is held to the constraint. `classify` therefore treats an
`extra == "..."` marker as true.

The project's supported Pythons (`Requires-Python`, PEP 621 `requires-python`, setuptools'
`python_requires`, Poetry's `python` dependency) are read too: a project whose Pythons and the
release's own `Requires-Python` have none in common can never install the release.
"""

from __future__ import annotations

import configparser
import enum
import fnmatch
import posixpath
import re
import tomllib
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import libcst as cst
from libcst.metadata import MetadataWrapper, PositionProvider
from packaging.markers import InvalidMarker, Marker, UndefinedComparison, UndefinedEnvironmentName, default_environment
from packaging.requirements import InvalidRequirement, Requirement
from packaging.specifiers import InvalidSpecifier, Specifier, SpecifierSet
from packaging.utils import (
    InvalidSdistFilename,
    InvalidWheelFilename,
    canonicalize_name,
    parse_sdist_filename,
    parse_wheel_filename,
)
from packaging.version import InvalidVersion, Version

from impactscope.errors import InputError

__all__ = [
    "MANIFEST_PATTERNS",
    "Declared",
    "DeclaredPython",
    "Exposure",
    "ExposureError",
    "Manifests",
    "classify",
    "declared_requirements",
    "environment_for_python",
    "is_manifest",
    "read_manifests",
]


class ExposureError(InputError):
    """A release version or Python version given to the exposure check is not valid."""


@dataclass(frozen=True)
class Declared:
    """One declaration of the library in one manifest.

    `source` locates it: `path:line` for line-based files (requirement files, setup.py),
    `path [table]` for TOML and INI files, whose parsers keep no line numbers. `text` is the
    declaration as written (for Poetry and Pipfile, the key and its value). `specifier` is None
    when the declaration does not limit the version. `direct_reference` marks URL, VCS and path
    references, which install whatever they point at. `constraint` marks entries of pip
    constraints files (`-c`), which limit the version without requiring the library.
    """

    source: str
    text: str
    specifier: SpecifierSet | None
    marker: Marker | None
    direct_reference: bool
    constraint: bool = False


@dataclass(frozen=True)
class DeclaredPython:
    """One declaration of the Python versions a project supports, e.g. `Requires-Python: >=3.8`.

    `source` and `text` are as in `Declared`.
    """

    source: str
    text: str
    specifier: SpecifierSet


@dataclass(frozen=True)
class Manifests:
    """What a project's manifests declare about the library and about Python, and what could
    not be read."""

    declared: tuple[Declared, ...]
    problems: tuple[str, ...] = field(default=())
    python: tuple[DeclaredPython, ...] = field(default=())


class Exposure(str, enum.Enum):
    """How a project's declared requirements meet a release."""

    EXPOSED = "exposed"
    SHIELDED = "shielded"
    UNCONSTRAINED = "unconstrained"


# --- which files are manifests ---------------------------------------------------------------

#: Glob patterns (matched case-insensitively against the file name, or against
#: `parent/name` for patterns with a slash) of the files `read_manifests` reads. The core
#: metadata files (the last two) count only at the top of the project, where a wheel or an
#: sdist has them: deeper ones describe some other distribution (an install, a vendored copy).
MANIFEST_PATTERNS: tuple[str, ...] = (
    "*requirements*.txt",
    "requirements/*.txt",
    "*constraints*.txt",
    "pyproject.toml",
    "setup.cfg",
    "setup.py",
    "Pipfile",
    "PKG-INFO",
    "*.dist-info/METADATA",
)
_CORE_METADATA = ("PKG-INFO", "*.dist-info/METADATA")

# A requirement file of this shape is read on its own, unless it is named like a constraints file;
# other requirement-format files are read only when another file includes them with -r or -c.
_REQUIREMENT_ROOTS = ("*requirements*.txt", "requirements/*.txt")

# Manifests of installed or bundled third-party packages say nothing about the project's own
# requirements.
_FOREIGN_DIRS = frozenset({"site-packages", "dist-packages", "node_modules", ".git", ".tox", ".nox"})


def _matches(path: str, patterns: Iterable[str]) -> bool:
    parts = path.lower().split("/")
    for pattern in patterns:
        pattern = pattern.lower()
        subject = "/".join(parts[-2:]) if "/" in pattern else parts[-1]
        if fnmatch.fnmatchcase(subject, pattern):
            return True
    return False


# Every pattern's name ends in one of these (lowercase): a cheap first test, run on every file.
_ENDINGS = tuple(sorted({p.lower().rsplit("*", 1)[-1].rsplit("/", 1)[-1] for p in MANIFEST_PATTERNS}))


def is_manifest(path: str) -> bool:
    """Whether the scan should pass the file at POSIX `path` (relative to the project) here."""
    if not path.lower().endswith(_ENDINGS):
        return False
    parts = path.split("/")
    if any(part in _FOREIGN_DIRS for part in parts[:-1]):
        return False
    if _matches(path, _CORE_METADATA):
        return _is_core_metadata(path)
    return _matches(path, MANIFEST_PATTERNS)


def _is_core_metadata(path: str) -> bool:
    """An sdist's `PKG-INFO` or a wheel's `<name>-<version>.dist-info/METADATA`, at the top of
    the project (the file names are exact: the sdist and wheel specifications spell them so)."""
    parts = path.split("/")
    if parts == ["PKG-INFO"]:
        return True
    return len(parts) == 2 and parts[0].endswith(".dist-info") and parts[1] == "METADATA"


# --- reading ---------------------------------------------------------------------------------


class _Reader:
    """Collects declarations of one distribution and the problems met while reading."""

    def __init__(self, files: Mapping[str, bytes], distribution: str) -> None:
        self.files = files
        self.target = canonicalize_name(distribution)
        self.declared: list[Declared] = []
        self.python: list[DeclaredPython] = []
        self.problems: list[str] = []
        self.requirement_files_read: set[tuple[str, bool]] = set()  # (path, as constraints)

    def problem(self, message: str) -> None:
        self.problems.append(message)

    def is_target(self, name: str) -> bool:
        return canonicalize_name(name) == self.target

    def add_requirement(
        self, text: str, source: str, *, constraint: bool = False, prereleases: bool = False
    ) -> None:
        """Add a PEP 508 requirement string if it names the library."""
        try:
            requirement = Requirement(text)
        except InvalidRequirement as exc:
            # A broken line about another distribution is not our concern; one that seems to be
            # about the library is reported, since skipping it may change the answer.
            leading = _LEADING_NAME.match(text)
            if leading and self.is_target(leading.group(0)):
                reason = str(exc).splitlines()[0] if str(exc) else "invalid"
                self.problem(f"{source}: invalid requirement {text!r}: {reason}")
            return
        if not self.is_target(requirement.name):
            return
        specifier: SpecifierSet | None = requirement.specifier
        if specifier is not None and not len(specifier):
            specifier = None
        if specifier is not None and prereleases:
            specifier = SpecifierSet(str(specifier), prereleases=True)
        self.declared.append(
            Declared(
                source=source,
                text=text,
                specifier=specifier,
                marker=requirement.marker,
                direct_reference=requirement.url is not None,
                constraint=constraint,
            )
        )

    def add_direct(self, text: str, source: str, *, constraint: bool = False, marker: Marker | None = None) -> None:
        self.declared.append(Declared(source, text, None, marker, True, constraint))

    def add_python(self, text: str, source: str) -> None:
        """Add a Requires-Python style specifier (PEP 440) of the project's own Pythons."""
        try:
            specifier = SpecifierSet(text)
        except InvalidSpecifier as exc:
            self.problem(f"{source}: invalid Python version specifier {text!r}: {exc}")
            return
        if len(specifier):
            self.python.append(DeclaredPython(source, text, specifier))


_LEADING_NAME = re.compile(r"[A-Za-z0-9](?:[A-Za-z0-9._-]*[A-Za-z0-9])?")


def _decode_text(path: str, data: bytes, reader: _Reader, *, allow_cookie: bool = False) -> str | None:
    encoding = "utf-8-sig"
    if allow_cookie:
        # PEP 263 style cookie on the first or second line, as pip honours for requirement files.
        for line in data.splitlines()[:2]:
            match = _CODING_COOKIE.match(line)
            if match:
                encoding = match.group(1).decode("ascii")
                break
    try:
        return data.decode(encoding)
    except LookupError:
        reader.problem(f"{path}: unknown encoding {encoding!r} in the coding comment; not read")
    except UnicodeDecodeError as exc:
        label = "UTF-8" if encoding == "utf-8-sig" else encoding
        reader.problem(f"{path}: not valid {label} ({exc.reason} at byte {exc.start}); not read")
    return None


_CODING_COOKIE = re.compile(rb"^[ \t\f]*#.*?coding[:=][ \t]*([-\w.]+)")


# --- pip requirement files -------------------------------------------------------------------

# pip's comment rule: a `#` at the start of a line or after whitespace starts a comment.
_COMMENT = re.compile(r"(^|\s+)#.*$")
_URL_SCHEME = re.compile(r"^[A-Za-z][A-Za-z0-9+.-]*:")
_VCS_PREFIX = re.compile(r"^(git|hg|svn|bzr)\+", re.IGNORECASE)
_EGG_FRAGMENT = re.compile(r"[#&]egg=([A-Za-z0-9._-]+)")
_OPTION_START = re.compile(r"\s+-")  # per-requirement options (--hash=...) follow the requirement


def _logical_lines(text: str) -> list[tuple[int, str]]:
    """Join continuation lines and strip comments, as pip does.

    A line ending in `\\` continues on the next, unless it is a whole-line comment; a comment
    line ends a continuation (so the `# via x` lines pip-compile writes after `--hash=... \\`
    close the requirement). Comments are stripped after the lines are joined.
    """
    joined: list[tuple[int, str]] = []
    pending: list[str] = []
    start = 0
    for number, line in enumerate(text.splitlines(), start=1):
        is_comment = _COMMENT.match(line) is not None  # a whole-line comment, possibly indented
        if line.endswith("\\") and not is_comment:
            if not pending:
                start = number
            pending.append(line[:-1])
            continue
        if pending:
            pending.append(" " + line if is_comment else line)
            joined.append((start, "".join(pending)))
            pending = []
        else:
            joined.append((number, line))
    if pending:
        joined.append((start, "".join(pending)))
    logical = []
    for number, line in joined:
        line = _COMMENT.sub("", line).strip()
        if line:
            logical.append((number, line))
    return logical


_INCLUDE_OPTIONS = {"-r": False, "--requirement": False, "-c": True, "--constraint": True}
_EDITABLE_OPTIONS = ("-e", "--editable")


def _split_option(line: str, names: Iterable[str]) -> tuple[str, str] | None:
    """Match `-r x`, `-rx`, `--requirement x`, `--requirement=x`; return (option, value)."""
    for name in names:
        if name.startswith("--"):
            if line == name or line.startswith(name + " ") or line.startswith(name + "\t") or line.startswith(name + "="):
                return name, line[len(name):].lstrip(" \t=").strip()
        elif line.startswith(name):
            return name, line[len(name):].strip()
    return None


def _direct_reference_name(target: str) -> str | None:
    """The distribution a URL or path refers to: an `#egg=` fragment or an archive file name."""
    egg = _EGG_FRAGMENT.search(target)
    if egg:
        # `#egg=name-1.0` is a legacy spelling; the name is what precedes a version.
        return re.sub(r"-\d.*$", "", egg.group(1))
    last = target.split("#", 1)[0].split("?", 1)[0].rstrip("/").rsplit("/", 1)[-1]
    try:
        if last.endswith(".whl"):
            return str(parse_wheel_filename(last)[0])
        if last.endswith((".tar.gz", ".zip")):
            return str(parse_sdist_filename(last)[0])
    except (InvalidWheelFilename, InvalidSdistFilename, InvalidVersion):
        return None
    return None


def _looks_like_location(text: str) -> bool:
    return bool(_URL_SCHEME.match(text) or _VCS_PREFIX.match(text)) or text.startswith((".", "/", "~")) or "/" in text.split(";")[0].split(" @ ")[0]


def _read_requirement_file(path: str, reader: _Reader, *, constraint: bool, prereleases: bool = False) -> None:
    key = (path, constraint)
    if key in reader.requirement_files_read:
        return  # already read: includes may repeat or cycle
    reader.requirement_files_read.add(key)
    text = _decode_text(path, reader.files[path], reader, allow_cookie=True)
    if text is None:
        return
    lines = _logical_lines(text)
    # `--pre` lets pip pick pre-releases for the whole install.
    prereleases = prereleases or any(line == "--pre" for _, line in lines)
    for number, line in lines:
        source = f"{path}:{number}"
        include = _split_option(line, _INCLUDE_OPTIONS)
        if include is not None:
            option, target = include
            _include(path, source, target, reader, constraint=constraint or _INCLUDE_OPTIONS[option], prereleases=prereleases)
            continue
        editable = _split_option(line, _EDITABLE_OPTIONS)
        if editable is not None:
            _requirement_line(editable[1], source, reader, constraint=constraint, prereleases=prereleases, editable=True)
            continue
        if line.startswith("-"):
            continue  # --index-url, --hash on its own line, --pre, --find-links, ...: no version information
        _requirement_line(line, source, reader, constraint=constraint, prereleases=prereleases)


def _include(path: str, source: str, target: str, reader: _Reader, *, constraint: bool, prereleases: bool) -> None:
    if not target:
        reader.problem(f"{source}: include option without a file name")
        return
    if _URL_SCHEME.match(target) and not re.match(r"^[A-Za-z]:[\\/]", target):
        reader.problem(f"{source}: remote requirements file {target!r} is not fetched; not read")
        return
    # pip resolves a relative include against the directory of the including file.
    resolved = posixpath.normpath(posixpath.join(posixpath.dirname(path), target.replace("\\", "/")))
    if resolved.startswith("../") or resolved == ".." or posixpath.isabs(resolved) or resolved not in reader.files:
        reader.problem(f"{source}: included file {target!r} is not among the project's manifest files; not read")
        return
    _read_requirement_file(resolved, reader, constraint=constraint, prereleases=prereleases)


def _requirement_line(
    line: str, source: str, reader: _Reader, *, constraint: bool, prereleases: bool, editable: bool = False
) -> None:
    requirement = _OPTION_START.split(line, maxsplit=1)[0].strip()
    if not requirement:
        return
    if not editable and not _looks_like_location(requirement):
        reader.add_requirement(requirement, source, constraint=constraint, prereleases=prereleases)
        return
    # A location, possibly `name @ url` (PEP 508) or followed by `; marker` (pip wants "; ").
    if " @ " in requirement or re.match(r"^[A-Za-z0-9._-]+(\[[^\]]*\])?\s*@", requirement):
        reader.add_requirement(requirement, source, constraint=constraint, prereleases=prereleases)
        return
    location, _, marker_text = requirement.partition("; ")
    name = _direct_reference_name(location.strip())
    if name is None or not reader.is_target(name):
        return
    marker = None
    if marker_text.strip():
        try:
            marker = Marker(marker_text.strip())
        except InvalidMarker as exc:
            reader.problem(f"{source}: invalid environment marker {marker_text.strip()!r}: {exc}")
    reader.add_direct(requirement, source, constraint=constraint, marker=marker)


# --- pyproject.toml ---------------------------------------------------------------------------


def _load_toml(path: str, reader: _Reader) -> dict | None:
    text = _decode_text(path, reader.files[path], reader)
    if text is None:
        return None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        reader.problem(f"{path}: invalid TOML ({exc}); not read")
        return None


def _requirement_list(value: object, path: str, table: str, reader: _Reader) -> None:
    if not isinstance(value, list):
        reader.problem(f"{path} [{table}]: expected a list of requirement strings, got {type(value).__name__}")
        return
    for item in value:
        if isinstance(item, str):
            reader.add_requirement(item.strip(), f"{path} [{table}]")
        elif not isinstance(item, dict):  # PEP 735 {include-group = ...} tables are read via their group
            reader.problem(f"{path} [{table}]: expected a requirement string, got {item!r}")


def _read_pyproject(path: str, reader: _Reader) -> None:
    data = _load_toml(path, reader)
    if data is None:
        return
    project = data.get("project")
    if isinstance(project, dict):
        dynamic = project.get("dynamic", [])
        for key in ("dependencies", "optional-dependencies"):
            if isinstance(dynamic, list) and key in dynamic:
                reader.problem(f"{path} [project]: {key} are dynamic (filled in by the build backend); not read")
        if "dependencies" in project:
            _requirement_list(project["dependencies"], path, "project.dependencies", reader)
        python = project.get("requires-python")
        if isinstance(python, str):
            reader.add_python(python, f"{path} [project.requires-python]")
        optional = project.get("optional-dependencies", {})
        if isinstance(optional, dict):
            for extra, value in optional.items():
                _requirement_list(value, path, f"project.optional-dependencies.{extra}", reader)
    groups = data.get("dependency-groups")
    if isinstance(groups, dict):
        for group, value in groups.items():
            _requirement_list(value, path, f"dependency-groups.{group}", reader)
    poetry = data.get("tool", {}).get("poetry") if isinstance(data.get("tool"), dict) else None
    if isinstance(poetry, dict):
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
                        _poetry_dependency(name, value, f"{path} [{table}]", reader)
        main = poetry.get("dependencies")
        if isinstance(main, dict) and isinstance(main.get("python"), str):
            _poetry_python(main["python"], f"{path} [tool.poetry.dependencies]", reader)


def _poetry_python(text: str, source: str, reader: _Reader) -> None:
    specs = _poetry_range(text, f"python = {text!r}", source, reader)
    if specs:
        reader.add_python(",".join(specs), source)


def _poetry_range(constraint: str, shown: str, source: str, reader: _Reader) -> list[str] | None:
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


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k} = {_toml_value(v)}" for k, v in value.items()) + "}"
    return str(value)


def _combine_markers(*texts: str | None) -> Marker | None:
    present = [t for t in texts if t]
    if not present:
        return None
    if len(present) == 1:
        return Marker(present[0])
    return Marker(" and ".join(f"({t})" for t in present))


_LOCATION_KEYS = ("git", "path", "url", "file")


def _poetry_dependency(name: str, value: object, source: str, reader: _Reader) -> None:
    if isinstance(value, list):
        for item in value:  # several constraints, each for its own markers
            _poetry_dependency(name, item, source, reader)
        return
    text = f"{name} = {_toml_value(value)}"
    if isinstance(value, str):
        table: dict = {"version": value}
    elif isinstance(value, dict):
        table = value
    else:
        reader.problem(f"{source}: {name} has an unreadable value {value!r}")
        return
    try:
        python = table.get("python")
        marker = _combine_markers(
            _poetry_python_marker(python) if isinstance(python, str) else None,
            table.get("markers") if isinstance(table.get("markers"), str) else None,
        )
    except (_ConstraintError, InvalidSpecifier, InvalidMarker) as exc:
        reader.problem(f"{source}: cannot read the markers of {text}: {exc}")
        return
    if any(key in table for key in _LOCATION_KEYS):
        reader.add_direct(text, source, marker=marker)
        return
    version = table.get("version", "*")
    if not isinstance(version, str):
        reader.problem(f"{source}: {name} has a non-string version {version!r}")
        return
    specs = _poetry_range(version, text, source, reader)
    if specs is None:
        return
    prereleases = table.get("allow-prereleases") is True
    specifier = SpecifierSet(",".join(specs), prereleases=True if prereleases else None) if specs else None
    reader.declared.append(Declared(source, text, specifier, marker, False))


# --- Pipfile ----------------------------------------------------------------------------------

# Pipfile tables may carry marker variables as keys, e.g. sys_platform = "== 'win32'".
_MARKER_KEYS = (
    "os_name", "sys_platform", "platform_machine", "platform_python_implementation",
    "platform_release", "platform_system", "platform_version", "python_version",
    "python_full_version", "implementation_name", "implementation_version",
)


def _read_pipfile(path: str, reader: _Reader) -> None:
    data = _load_toml(path, reader)
    if data is None:
        return
    for table_name in ("packages", "dev-packages"):
        table = data.get(table_name)
        if not isinstance(table, dict):
            continue
        source = f"{path} [{table_name}]"
        for name, value in table.items():
            if not reader.is_target(name):
                continue
            text = f"{name} = {_toml_value(value)}"
            body: dict = {"version": value} if isinstance(value, str) else value if isinstance(value, dict) else {}
            if not body:
                reader.problem(f"{source}: {name} has an unreadable value {value!r}")
                continue
            try:
                marker = _combine_markers(
                    body.get("markers") if isinstance(body.get("markers"), str) else None,
                    *(f"{key} {body[key]}" for key in _MARKER_KEYS if isinstance(body.get(key), str)),
                )
            except InvalidMarker as exc:
                reader.problem(f"{source}: cannot read the markers of {text}: {exc}")
                continue
            if any(key in body for key in _LOCATION_KEYS):
                reader.add_direct(text, source, marker=marker)
                continue
            version = body.get("version", "*")
            if not isinstance(version, str):
                reader.problem(f"{source}: {name} has a non-string version {version!r}")
                continue
            version = version.strip()
            if version in ("", "*"):
                reader.declared.append(Declared(source, text, None, marker, False))
                continue
            try:
                specifier = SpecifierSet(version)
            except InvalidSpecifier as exc:
                reader.problem(f"{source}: invalid version specifier in {text}: {exc}")
                continue
            reader.declared.append(Declared(source, text, specifier, marker, False))


# --- setup.cfg --------------------------------------------------------------------------------


def _read_setup_cfg(path: str, reader: _Reader) -> None:
    text = _decode_text(path, reader.files[path], reader)
    if text is None:
        return
    parser = configparser.ConfigParser(interpolation=None, strict=False)
    try:
        parser.read_string(text, source=path)
    except configparser.Error as exc:
        reader.problem(f"{path}: invalid setup.cfg ({' '.join(str(exc).split())}); not read")
        return
    for option in ("python_requires", "python-requires"):
        if parser.has_option("options", option):
            reader.add_python(parser.get("options", option).strip(), f"{path} [options.{option}]")
    entries = []
    for option in ("install_requires", "install-requires"):  # setuptools still takes the dashed spelling
        if parser.has_option("options", option):
            entries.append((f"options.{option}", parser.get("options", option)))
    if parser.has_section("options.extras_require"):
        for extra, value in parser.items("options.extras_require"):
            entries.append((f"options.extras_require.{extra}", value))
    for table, value in entries:
        source = f"{path} [{table}]"
        value = value.strip()
        if value.startswith("file:"):
            for target in value[len("file:"):].split(","):
                _include(path, source, target.strip(), reader, constraint=False, prereleases=False)
            continue
        # setuptools reads a multi-line value line by line (a dangling list) and a one-line value
        # as `;`-separated, which is why a marker only works in the dangling form.
        items = value.splitlines() if "\n" in value else value.split(";")
        for item in items:
            item = _COMMENT.sub("", item).strip()
            if item:
                reader.add_requirement(item, source)


# --- setup.py (read with libcst, never run) ---------------------------------------------------


class _SetupScan(cst.CSTVisitor):
    """Collects module-level literal bindings, names changed elsewhere, and setup() calls."""

    def __init__(self) -> None:
        self.bindings: dict[str, list[cst.BaseExpression]] = {}
        self.changed: set[str] = set()
        self.calls: list[cst.Call] = []
        self._depth = 0

    def visit_FunctionDef(self, node: cst.FunctionDef) -> None:
        self._depth += 1

    def leave_FunctionDef(self, original_node: cst.FunctionDef) -> None:
        self._depth -= 1

    def visit_ClassDef(self, node: cst.ClassDef) -> None:
        self._depth += 1

    def leave_ClassDef(self, original_node: cst.ClassDef) -> None:
        self._depth -= 1

    def visit_Assign(self, node: cst.Assign) -> None:
        for target in node.targets:
            if isinstance(target.target, cst.Name):
                if self._depth == 0:
                    self.bindings.setdefault(target.target.value, []).append(node.value)
                else:
                    self.changed.add(target.target.value)
            else:
                for name in _names_in(target.target):
                    self.changed.add(name)

    def visit_AugAssign(self, node: cst.AugAssign) -> None:
        self.changed.update(_names_in(node.target))

    def visit_AnnAssign(self, node: cst.AnnAssign) -> None:
        self.changed.update(_names_in(node.target))

    def visit_Call(self, node: cst.Call) -> None:
        func = node.func
        if isinstance(func, cst.Attribute) and isinstance(func.value, cst.Name):
            self.changed.add(func.value.value)  # REQUIRES.append(...) and friends
        if (isinstance(func, cst.Name) and func.value == "setup") or (
            isinstance(func, cst.Attribute) and func.attr.value == "setup"
        ):
            self.calls.append(node)


def _names_in(node: cst.CSTNode) -> set[str]:
    if isinstance(node, cst.Name):
        return {node.value}
    if isinstance(node, (cst.Tuple, cst.List)):
        return {n for element in node.elements for n in _names_in(element.value)}
    if isinstance(node, (cst.StarredElement, cst.Subscript)):
        return _names_in(node.value)
    return set()


def _read_setup_py(path: str, reader: _Reader) -> None:
    try:
        module = cst.parse_module(reader.files[path])
    except cst.ParserSyntaxError as exc:
        reader.problem(f"{path}:{exc.raw_line}: cannot parse (syntax error or Python 2); not read")
        return
    except (UnicodeDecodeError, LookupError) as exc:
        reader.problem(f"{path}: cannot decode ({exc}); not read")
        return
    wrapper = MetadataWrapper(module)
    scan = _SetupScan()
    wrapper.visit(scan)
    positions = wrapper.resolve(PositionProvider)

    def line_of(node: cst.CSTNode) -> int:
        return positions[node].start.line

    def strings(node: cst.BaseExpression, seen: frozenset[str]) -> tuple[list[tuple[str, int]], bool]:
        """Literal strings of a requirement list and whether some part of it is dynamic."""
        if isinstance(node, (cst.List, cst.Tuple)):
            found, dynamic = [], False
            for element in node.elements:
                value = element.value
                if isinstance(element, cst.Element) and isinstance(value, (cst.SimpleString, cst.ConcatenatedString)):
                    evaluated = value.evaluated_value
                    if isinstance(evaluated, str):
                        found.append((evaluated, line_of(value)))
                        continue
                dynamic = True
            return found, dynamic
        if isinstance(node, cst.Name):
            bound = scan.bindings.get(node.value, [])
            if len(bound) == 1 and node.value not in scan.changed and node.value not in seen:
                return strings(bound[0], seen | {node.value})
            return [], True
        if isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Add):
            left, left_dynamic = strings(node.left, seen)
            right, right_dynamic = strings(node.right, seen)
            return left + right, left_dynamic or right_dynamic
        return [], True

    def read(node: cst.BaseExpression, table: str, call_line: int) -> None:
        found, dynamic = strings(node, frozenset())
        for text, line in found:
            reader.add_requirement(text.strip(), f"{path}:{line}")
        if dynamic:
            how = "partly dynamic; only its literal strings were read" if found else "dynamic; not read"
            reader.problem(f"{path}:{call_line}: {table} is {how}")

    for call in scan.calls:
        call_line = line_of(call)
        keywords = {arg.keyword.value: arg.value for arg in call.args if arg.keyword is not None}
        python = keywords.get("python_requires")
        if isinstance(python, (cst.SimpleString, cst.ConcatenatedString)) and isinstance(python.evaluated_value, str):
            reader.add_python(python.evaluated_value.strip(), f"{path}:{line_of(python)}")
        if "install_requires" in keywords:
            read(keywords["install_requires"], "install_requires", call_line)
        elif any(arg.star == "**" for arg in call.args):
            reader.problem(f"{path}:{call_line}: setup() takes **keyword arguments; install_requires is dynamic; not read")
        extras = keywords.get("extras_require")
        if isinstance(extras, cst.Dict):
            for element in extras.elements:
                if isinstance(element, cst.DictElement):
                    key = element.key
                    label = (
                        f"extras_require[{key.evaluated_value!r}]"
                        if isinstance(key, cst.SimpleString)
                        else "extras_require"
                    )
                    read(element.value, label, call_line)
                else:
                    reader.problem(f"{path}:{call_line}: extras_require is partly dynamic")
        elif extras is not None:
            reader.problem(f"{path}:{call_line}: extras_require is dynamic; not read")


# --- core metadata (wheel METADATA, sdist PKG-INFO) --------------------------------------------


def _header_lines(text: str, field_name: str) -> list[int]:
    """The line numbers at which header `field_name` starts, in the header block (up to the
    first empty line; a line that starts with white space continues the header before it)."""
    wanted = field_name.lower()
    found = []
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip():
            break
        if line[0] in " \t":
            continue
        name, colon, _ = line.partition(":")
        if colon and name.strip().lower() == wanted:
            found.append(number)
    return found


def _read_core_metadata(path: str, reader: _Reader) -> None:
    """`Requires-Dist` and `Requires-Python` of a wheel's METADATA or an sdist's PKG-INFO.

    The core metadata specification defines the format as email headers, as the standard
    library's `email.parser` reads them with the compat32 policy, in UTF-8; packaging's
    `parse_email` reads it so. In an sdist (core metadata 2.2, PEP 643) a field marked `Dynamic`
    may differ in the wheels built from it: its declarations are still read (they are what the
    sdist says) and the problem list says so.
    """
    from packaging.metadata import parse_email  # noqa: PLC0415 - only distributions need it

    data = reader.files[path]
    raw, unparsed = parse_email(data)
    for key in ("requires-dist", "requires-python"):
        if key in unparsed:
            reader.problem(f"{path}: cannot read {key.title()} (not valid UTF-8, or given more than once where once is allowed); not read")
    text = data.decode("utf-8", "replace")
    requirements = list(raw.get("requires_dist") or [])
    lines = _header_lines(text, "Requires-Dist")
    before = len(reader.declared)
    for index, requirement in enumerate(requirements):
        source = f"{path}:{lines[index]}" if len(lines) == len(requirements) else f"{path} [Requires-Dist]"
        reader.add_requirement(requirement.strip(), source)
    python = raw.get("requires_python")
    if isinstance(python, str):
        python_lines = _header_lines(text, "Requires-Python")
        source = f"{path}:{python_lines[0]}" if len(python_lines) == 1 else f"{path} [Requires-Python]"
        reader.add_python(python.strip(), source)
    dynamic = {name.strip().lower() for name in raw.get("dynamic") or []}
    if path.rsplit("/", 1)[-1] == "PKG-INFO" and "requires-dist" in dynamic and len(reader.declared) > before:
        reader.problem(
            f"{path}: Requires-Dist is marked Dynamic, so a wheel built from this sdist may declare "
            "other requirements (core metadata 2.2)"
        )


# --- entry points -----------------------------------------------------------------------------


def read_manifests(files: Mapping[str, bytes], distribution: str) -> Manifests:
    """Declarations of `distribution` in a project's manifest `files`, and reading problems.

    `files` maps POSIX paths relative to the project to their content; files that are not
    manifests are ignored. Names compare after PEP 503 normalisation. Requirement files are read
    starting from those named like `*requirements*.txt` or lying in a `requirements/` folder
    (but not named like `*constraints*.txt`); any other file is read only when one of those
    includes it with `-r` (a requirement file) or `-c` (a constraints file, whose entries are
    marked `constraint`). Files are visited in sorted path order, includes where they occur, and
    each file once per role, so include cycles end.
    """
    reader = _Reader(files, distribution)
    for path in sorted(files):
        if not is_manifest(path):
            continue
        name = path.rsplit("/", 1)[-1].lower()
        if name == "pyproject.toml":
            _read_pyproject(path, reader)
        elif name == "pipfile":
            _read_pipfile(path, reader)
        elif name == "setup.cfg":
            _read_setup_cfg(path, reader)
        elif name == "setup.py":
            _read_setup_py(path, reader)
        elif _is_core_metadata(path):
            _read_core_metadata(path, reader)
        elif _matches(path, _REQUIREMENT_ROOTS) and not _matches(path, ("*constraints*.txt",)):
            _read_requirement_file(path, reader, constraint=False)
    return Manifests(tuple(reader.declared), tuple(reader.problems), tuple(reader.python))


def declared_requirements(files: Mapping[str, bytes], distribution: str) -> tuple[Declared, ...]:
    """The declarations `read_manifests` finds, without its problems."""
    return read_manifests(files, distribution).declared


_PYTHON_VERSION = re.compile(r"^(\d+)\.(\d+)(?:\.(\d+))?((?:a|b|rc)\d+)?$")


def environment_for_python(version: str) -> dict[str, str]:
    """A marker environment for Python `version` ("3.12" or "3.12.1"), on this machine's platform.

    `python_version` and `python_full_version` (and `implementation_version` for CPython) come
    from `version`, where "3.12" stands for "3.12.0"; the platform keys are packaging's defaults
    for the running interpreter.
    """
    match = _PYTHON_VERSION.match(version.strip()) if isinstance(version, str) else None
    if not match:
        raise ExposureError(f"Python version must look like 3.12 or 3.12.1, got {version!r}")
    major, minor, micro, pre = match.groups()
    full = f"{major}.{minor}.{micro or 0}{pre or ''}"
    environment = dict(default_environment())
    environment["python_version"] = f"{major}.{minor}"
    environment["python_full_version"] = full
    if environment.get("implementation_name") == "cpython":
        environment["implementation_version"] = full
    return environment


# `extra == "name"` or `"name" == extra` in a marker (PEP 508 marker grammar).
_EXTRA_TEST = re.compile(r"""\bextra\s*==\s*(['"])(.*?)\1|(['"])(.*?)\3\s*==\s*extra\b""")


def _applies(marker: Marker | None, environment: Mapping[str, str] | None) -> bool:
    """Whether a declaration's marker holds in `environment` for some install of the project.

    The project may be installed with any of its extras (see the module docstring), so the
    marker is tried with no extra and with each extra it names, and holds if any try does.
    """
    if marker is None:
        return True
    env = dict(environment) if environment is not None else {}
    extras = {""} | {m.group(2) if m.group(1) else m.group(4) for m in _EXTRA_TEST.finditer(str(marker))}
    for extra in sorted(extras):
        try:
            if marker.evaluate({**env, "extra": extra}):
                return True
        except (UndefinedComparison, UndefinedEnvironmentName):
            # A marker this environment cannot decide is kept: dropping it could hide a declaration.
            return True
    return False


def _python_candidates(specifiers: Iterable[SpecifierSet]) -> set[Version]:
    """Python versions at which sets of `specifiers` can first or last agree.

    Each set is a union of intervals whose ends are versions it names, so if all the sets admit
    some X.Y.Z Python they admit one of: a named version, or the next micro, minor or major
    release after one, or a minor release 2.0-2.7 or 3.0-3.39 (a range over the Python
    releases, with room for releases still to come).
    """
    found = {Version(f"2.{minor}") for minor in range(8)} | {Version(f"3.{minor}") for minor in range(40)}
    for specifier_set in specifiers:
        for specifier in specifier_set:
            text = specifier.version.removesuffix(".*")
            try:
                version = Version(text)
            except InvalidVersion:
                continue  # `===` with a non-PEP 440 string
            major, minor, micro = (list(version.release) + [0, 0])[:3]
            found |= {
                Version(f"{major}.{minor}.{micro}"),
                Version(f"{major}.{minor}.{micro + 1}"),
                Version(f"{major}.{minor + 1}"),
                Version(f"{major + 1}.0"),
            }
    return found


def _pythons_meet(project: Sequence[DeclaredPython], release_python: SpecifierSet) -> bool:
    """Whether some Python satisfies both the project's and the release's Requires-Python."""
    sets = [d.specifier for d in project] + [release_python]
    return any(all(s.contains(v, prereleases=True) for s in sets) for v in _python_candidates(sets))


def classify(
    declared: Sequence[Declared],
    release: Version | str,
    environment: Mapping[str, str] | None = None,
    *,
    python: Sequence[DeclaredPython] = (),
    release_python: SpecifierSet | None = None,
) -> Exposure:
    """Classify a project's declarations against `release`.

    Declarations whose marker is false in `environment` (packaging's default environment, i.e.
    the running interpreter, when None; see `environment_for_python`) are ignored; a marker that
    tests `extra` holds when it holds for some extra (see the module docstring). If none of the
    rest limits the version, the project is unconstrained. Otherwise the version specifiers of
    all of them are intersected: exposed if the intersection admits the release, else shielded.

    `python` are the project's own Requires-Python declarations (`Manifests.python`) and
    `release_python` the release's Requires-Python: when both are given and no Python satisfies
    them all, the project cannot install the release and is shielded, whatever else it declares.

    Pre-releases follow PEP 440's default for installers: a pre-release such as "3.0rc1" is
    admitted only when some specifier explicitly allows pre-releases (it names one, as in
    `>=3.0rc1`, or was read with Poetry's `allow-prereleases` or pip's `--pre`). That is the
    `SpecifierSet.contains(v, prereleases=None)` rule of packaging before 26.0; packaging 26
    changed that default, so the flag is passed explicitly.
    """
    if isinstance(release, Version):
        version = release
    else:
        try:
            version = Version(release)
        except (InvalidVersion, TypeError):
            raise ExposureError(f"release must be a PEP 440 version, got {release!r}") from None
    if release_python is not None and python and not _pythons_meet(python, release_python):
        return Exposure.SHIELDED
    live = [d for d in declared if _applies(d.marker, environment)]
    specifiers = [d.specifier for d in live if d.specifier is not None]
    constraining = [s for s in specifiers if len(s)]
    if not constraining:
        return Exposure.UNCONSTRAINED
    combined = SpecifierSet(",".join(str(s) for s in constraining))
    allow_pre = any(s.prereleases is True for s in specifiers)
    admitted = combined.contains(version, prereleases=allow_pre)
    return Exposure.EXPOSED if admitted else Exposure.SHIELDED
