"""What the TOML manifests share: loading, a value shown as written, markers joined, and a
dependency table entry's direct reference or version string (Pipfile, Poetry)."""

from __future__ import annotations

import tomllib

from packaging.markers import Marker

from impactscope.exposure.reader import Reader, decode_text


def load_toml(path: str, reader: Reader) -> dict | None:
    text = decode_text(path, reader.files[path], reader)
    if text is None:
        return None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        reader.problem(f"{path}: invalid TOML ({exc}); not read")
        return None


def toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k} = {toml_value(v)}" for k, v in value.items()) + "}"
    return str(value)


def combine_markers(*texts: str | None) -> Marker | None:
    present = [t for t in texts if t]
    if not present:
        return None
    if len(present) == 1:
        return Marker(present[0])
    return Marker(" and ".join(f"({t})" for t in present))


_LOCATION_KEYS = ("git", "path", "url", "file")


def entry_version(name: str, body: dict, text: str, source: str, reader: Reader, marker: Marker | None) -> str | None:
    """The version string of a dependency table's entry (Pipfile, Poetry), or None when the entry
    is settled already: a direct reference (git, path, url, file: recorded as such) or a version
    that is not a string (a problem)."""
    if any(key in body for key in _LOCATION_KEYS):
        reader.add_direct(text, source, marker=marker)
        return None
    version = body.get("version", "*")
    if not isinstance(version, str):
        reader.problem(f"{source}: {name} has a non-string version {version!r}")
        return None
    return version
