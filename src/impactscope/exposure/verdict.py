"""Exposed, shielded or unconstrained: a project's declarations against a release (`classify`)."""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence

from packaging.markers import (
    Marker,
    UndefinedComparison,
    UndefinedEnvironmentName,
    default_environment,
)
from packaging.specifiers import SpecifierSet
from packaging.version import InvalidVersion, Version

from impactscope.exposure.records import Declared, DeclaredPython, Exposure, ExposureError


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
