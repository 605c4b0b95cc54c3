"""The declarations of one distribution collected from a project's manifests, and the problems met."""

from __future__ import annotations

import re
from collections.abc import Mapping

from packaging.markers import Marker
from packaging.requirements import InvalidRequirement, Requirement
from packaging.specifiers import InvalidSpecifier, SpecifierSet
from packaging.utils import canonicalize_name

from impactscope.exposure.records import Declared, DeclaredPython


class Reader:
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


def decode_text(path: str, data: bytes, reader: Reader, *, allow_cookie: bool = False) -> str | None:
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
